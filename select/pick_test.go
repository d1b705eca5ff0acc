package selection

import (
	"cmp"
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// These are specification tests: greedy picking under a budget has no
// outside reference, so each expected result is worked by hand from the
// rules in Pick's documentation.

func TestPick(t *testing.T) {
	const (
		k = Kept
		c = BelowCut
		b = Budget
		x = MaxRows
		m = MinScore
		n = NoMatch
	)
	inf := math.Inf(1)
	tests := []struct {
		name    string
		scores  []float64
		costs   []float64
		opt     Options
		reasons []Reason // by input row
		ranks   []int    // by input row; nil to skip
		after   []float64
		sum     Summary
	}{
		{
			name: "empty",
			opt:  Options{Budget: 10, Fixed: 3},
			sum:  Summary{Total: 3, Left: 7, Stop: StopExhausted},
		},
		{
			name:   "all fit",
			scores: []float64{3, 1, 2},
			costs:  []float64{1, 1, 1},
			opt:    Options{Budget: 10},
			// rank order: row 0, row 2, row 1
			reasons: []Reason{k, k, k},
			ranks:   []int{1, 3, 2},
			after:   []float64{1, 3, 2},
			sum:     Summary{Kept: 3, KeptCost: 3, Total: 3, Left: 7, Stop: StopExhausted},
		},
		{
			name:   "budget stop",
			scores: []float64{5, 4, 3, 2},
			costs:  []float64{3, 5, 1, 1},
			opt:    Options{Budget: 6, Fixed: 1},
			// 1+3=4 fits; 4+5=9 > 6 stops; the rest are not considered.
			reasons: []Reason{k, b, c, c},
			after:   []float64{4, 4, 4, 4},
			sum:     Summary{Kept: 1, KeptCost: 3, Total: 4, Left: 2, Stop: StopBudget, StopRank: 2},
		},
		{
			name:   "budget fill",
			scores: []float64{5, 4, 3, 2},
			costs:  []float64{3, 5, 1, 1},
			opt:    Options{Budget: 6, Fixed: 1, Fill: true},
			// 4 kept; 9 > 6 skipped; 4+1=5 kept; 5+1=6 <= 6 kept (equality fits).
			reasons: []Reason{k, b, k, k},
			after:   []float64{4, 4, 5, 6},
			sum:     Summary{Kept: 3, KeptCost: 5, Total: 6, Left: 0, Stop: StopExhausted},
		},
		{
			name:    "fill ends with rows that do not fit",
			scores:  []float64{3, 2, 1},
			costs:   []float64{2, 9, 9},
			opt:     Options{Budget: 5, Fill: true},
			reasons: []Reason{k, b, b},
			after:   []float64{2, 2, 2},
			sum:     Summary{Kept: 1, KeptCost: 2, Total: 2, Left: 3, Stop: StopExhausted},
		},
		{
			name:   "ties keep input order",
			scores: []float64{1, 2, 2, 1},
			costs:  []float64{1, 1, 1, 1},
			opt:    Options{Budget: 2},
			// rank order: rows 1, 2, 0, 3
			reasons: []Reason{b, k, k, c},
			ranks:   []int{3, 1, 2, 4},
			after:   []float64{2, 1, 2, 2},
			sum:     Summary{Kept: 2, KeptCost: 2, Total: 2, Left: 0, Stop: StopBudget, StopRank: 3},
		},
		{
			name:    "max rows",
			scores:  []float64{4, 3, 2, 1},
			costs:   []float64{1, 1, 1, 1},
			opt:     Options{Budget: 100, MaxRows: 2},
			reasons: []Reason{k, k, x, c},
			sum:     Summary{Kept: 2, KeptCost: 2, Total: 2, Left: 98, Stop: StopMaxRows, StopRank: 3},
		},
		{
			name:    "max rows equal to row count",
			scores:  []float64{4, 3},
			costs:   []float64{1, 1},
			opt:     Options{Budget: 100, MaxRows: 2},
			reasons: []Reason{k, k},
			sum:     Summary{Kept: 2, KeptCost: 2, Total: 2, Left: 98, Stop: StopExhausted},
		},
		{
			name:    "max rows before score limits",
			scores:  []float64{4, 0},
			costs:   []float64{1, 1},
			opt:     Options{Budget: 100, MaxRows: 1},
			reasons: []Reason{k, x},
			sum:     Summary{Kept: 1, KeptCost: 1, Total: 1, Left: 99, Stop: StopMaxRows, StopRank: 2},
		},
		{
			name:   "min score",
			scores: []float64{0.9, 0.5, 0.2, 0},
			costs:  []float64{1, 1, 1, 1},
			opt:    Options{Budget: 100, MinScore: 0.4},
			// score 0 is no-match rather than min-score: it shares nothing.
			reasons: []Reason{k, k, m, n},
			sum:     Summary{Kept: 2, KeptCost: 2, Total: 2, Left: 98, Stop: StopMinScore, StopRank: 3},
		},
		{
			name:    "min score equal is kept",
			scores:  []float64{0.4, 0.39},
			costs:   []float64{1, 1},
			opt:     Options{Budget: 100, MinScore: 0.4},
			reasons: []Reason{k, m},
			sum:     Summary{Kept: 1, KeptCost: 1, Total: 1, Left: 99, Stop: StopMinScore, StopRank: 2},
		},
		{
			name:   "no match",
			scores: []float64{2, 0, -1, 1},
			costs:  []float64{1, 1, 1, 1},
			opt:    Options{Budget: 100},
			// rank order: rows 0, 3, 1, 2
			reasons: []Reason{k, n, n, k},
			ranks:   []int{1, 3, 4, 2},
			sum:     Summary{Kept: 2, KeptCost: 2, Total: 2, Left: 98, Stop: StopNoMatch, StopRank: 3},
		},
		{
			name:   "keep unmatched, default min score",
			scores: []float64{2, 0, -1, 1},
			costs:  []float64{1, 1, 1, 1},
			opt:    Options{Budget: 100, KeepUnmatched: true},
			// MinScore 0 still bars the negative score.
			reasons: []Reason{k, k, m, k},
			sum:     Summary{Kept: 3, KeptCost: 3, Total: 3, Left: 97, Stop: StopMinScore, StopRank: 4},
		},
		{
			name:    "keep unmatched, no min score",
			scores:  []float64{2, 0, -1, math.Inf(-1)},
			costs:   []float64{1, 1, 1, 1},
			opt:     Options{Budget: 100, KeepUnmatched: true, MinScore: math.Inf(-1)},
			reasons: []Reason{k, k, k, k},
			sum:     Summary{Kept: 4, KeptCost: 4, Total: 4, Left: 96, Stop: StopExhausted},
		},
		{
			name:    "budget stop hides later no-match rows",
			scores:  []float64{3, 2, 0},
			costs:   []float64{1, 5, 1},
			opt:     Options{Budget: 3},
			reasons: []Reason{k, b, c},
			sum:     Summary{Kept: 1, KeptCost: 1, Total: 1, Left: 2, Stop: StopBudget, StopRank: 2},
		},
		{
			name:    "fill then no match",
			scores:  []float64{3, 2, 1, 0},
			costs:   []float64{1, 5, 1, 0},
			opt:     Options{Budget: 3, Fill: true},
			reasons: []Reason{k, b, k, n},
			sum:     Summary{Kept: 2, KeptCost: 2, Total: 2, Left: 1, Stop: StopNoMatch, StopRank: 4},
		},
		{
			name:    "infinite score ranks first",
			scores:  []float64{1, inf},
			costs:   []float64{1, 1},
			opt:     Options{Budget: 1},
			reasons: []Reason{b, k},
			ranks:   []int{2, 1},
			sum:     Summary{Kept: 1, KeptCost: 1, Total: 1, Left: 0, Stop: StopBudget, StopRank: 2},
		},
		{
			name:    "fixed over budget",
			scores:  []float64{3, 2},
			costs:   []float64{0, 0},
			opt:     Options{Budget: 10, Fixed: 11, Fill: true},
			reasons: []Reason{c, c},
			after:   []float64{11, 11},
			sum:     Summary{Total: 11, Left: -1, Stop: StopFixedOverBudget},
		},
		{
			name: "fixed over budget, empty input",
			opt:  Options{Budget: 0, Fixed: 1},
			sum:  Summary{Total: 1, Left: -1, Stop: StopFixedOverBudget},
		},
		{
			name:    "fixed equal to budget keeps free rows",
			scores:  []float64{3, 2},
			costs:   []float64{0, 1},
			opt:     Options{Budget: 10, Fixed: 10},
			reasons: []Reason{k, b},
			after:   []float64{10, 10},
			sum:     Summary{Kept: 1, KeptCost: 0, Total: 10, Left: 0, Stop: StopBudget, StopRank: 2},
		},
		{
			name:    "zero budget",
			scores:  []float64{3},
			costs:   []float64{1},
			opt:     Options{},
			reasons: []Reason{b},
			sum:     Summary{Stop: StopBudget, StopRank: 1},
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			dec, sum, err := Pick(tt.scores, tt.costs, tt.opt)
			if err != nil {
				t.Fatal(err)
			}
			if len(dec) != len(tt.scores) {
				t.Fatalf("got %d decisions for %d rows", len(dec), len(tt.scores))
			}
			for i, d := range dec {
				if d.Reason != tt.reasons[i] || d.Kept != (tt.reasons[i] == Kept) {
					t.Errorf("row %d: kept %v reason %q, want reason %q", i, d.Kept, d.Reason, tt.reasons[i])
				}
				if tt.ranks != nil && int(d.Rank) != tt.ranks[i] {
					t.Errorf("row %d: rank %d, want %d", i, d.Rank, tt.ranks[i])
				}
				if tt.after != nil && d.LedgerAfter != tt.after[i] {
					t.Errorf("row %d: ledger after %v, want %v", i, d.LedgerAfter, tt.after[i])
				}
			}
			if sum != tt.sum {
				t.Errorf("summary = %+v\nwant      %+v", sum, tt.sum)
			}
		})
	}
}

func TestPickErrors(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	ok := Options{Budget: 10}
	tests := []struct {
		name   string
		scores []float64
		costs  []float64
		opt    Options
	}{
		{"length mismatch", []float64{1, 2}, []float64{1}, ok},
		{"NaN score", []float64{1, nan}, []float64{1, 1}, ok},
		{"NaN cost", []float64{1}, []float64{nan}, ok},
		{"infinite cost", []float64{1}, []float64{inf}, ok},
		{"negative cost", []float64{1}, []float64{-1}, ok},
		{"NaN budget", nil, nil, Options{Budget: nan}},
		{"infinite budget", nil, nil, Options{Budget: inf}},
		{"negative budget", nil, nil, Options{Budget: -1}},
		{"NaN fixed", nil, nil, Options{Budget: 1, Fixed: nan}},
		{"infinite fixed", nil, nil, Options{Budget: 1, Fixed: inf}},
		{"negative fixed", nil, nil, Options{Budget: 1, Fixed: -1}},
		{"negative max rows", nil, nil, Options{Budget: 1, MaxRows: -1}},
		{"NaN min score", nil, nil, Options{Budget: 1, MinScore: nan}},
	}
	for _, tt := range tests {
		dec, _, err := Pick(tt.scores, tt.costs, tt.opt)
		if !errors.Is(err, ErrBadInput) {
			t.Errorf("%s: err = %v, want ErrBadInput", tt.name, err)
		}
		if dec != nil {
			t.Errorf("%s: got decisions with an error", tt.name)
		}
	}
}

func TestStrings(t *testing.T) {
	// These words appear in output files; changing one breaks readers.
	reasons := map[Reason]string{
		Kept: "", BelowCut: "below-cut", Budget: "budget", MaxRows: "max-rows",
		MinScore: "min-score", NoMatch: "no-match", 200: "reason(200)",
	}
	for r, want := range reasons {
		if got := r.String(); got != want {
			t.Errorf("Reason(%d).String() = %q, want %q", r, got, want)
		}
	}
	stops := map[Stop]string{
		StopExhausted: "exhausted", StopBudget: "budget", StopMaxRows: "max-rows",
		StopMinScore: "min-score", StopNoMatch: "no-match",
		StopFixedOverBudget: "fixed-over-budget", 200: "stop(200)",
	}
	for s, want := range stops {
		if got := s.String(); got != want {
			t.Errorf("Stop(%d).String() = %q, want %q", s, got, want)
		}
	}
}

func TestOrder(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	tests := []struct {
		scores []float64
		want   []int
	}{
		{nil, []int{}},
		{[]float64{1}, []int{0}},
		{[]float64{1, 3, 2}, []int{1, 2, 0}},
		{[]float64{2, 2, 2}, []int{0, 1, 2}},
		{[]float64{0, math.Copysign(0, -1), 0}, []int{0, 1, 2}}, // -0 ties with +0
		{[]float64{nan, -inf, inf, 0, nan}, []int{2, 3, 1, 0, 4}},
		{[]float64{1, 2, 1, 2, 1}, []int{1, 3, 0, 2, 4}},
	}
	for _, tt := range tests {
		if got := Order(tt.scores); !slices.Equal(got, tt.want) {
			t.Errorf("Order(%v) = %v, want %v", tt.scores, got, tt.want)
		}
	}
}

// TestPickProperties checks the rules of Pick on many random inputs with
// ties, zero costs, non-positive scores and every option combination.
func TestPickProperties(t *testing.T) {
	for seed := range uint64(2000) {
		r := rand.New(rand.NewPCG(seed, 7))
		n := r.IntN(60)
		scores := make([]float64, n)
		costs := make([]float64, n)
		for i := range n {
			scores[i] = float64(r.IntN(9)-2) / 2 // few distinct values: many ties, some <= 0
			if r.IntN(10) > 0 {
				costs[i] = r.Float64() * 10
			}
		}
		opt := Options{
			Budget:        r.Float64() * float64(5*n+1),
			Fixed:         r.Float64() * float64(n+1),
			Fill:          r.IntN(2) == 0,
			KeepUnmatched: r.IntN(3) == 0,
		}
		if r.IntN(3) == 0 {
			opt.MaxRows = r.IntN(n + 2)
		}
		if r.IntN(3) == 0 {
			opt.MinScore = float64(r.IntN(7)-2) / 2
		}
		dec, sum, err := Pick(scores, costs, opt)
		if err != nil {
			t.Fatalf("seed %d: %v", seed, err)
		}
		checkProperties(t, seed, scores, costs, opt, dec, sum)
	}
}

func checkProperties(t *testing.T, seed uint64, scores, costs []float64, opt Options, dec []Decision, sum Summary) {
	t.Helper()
	fail := func(format string, args ...any) {
		t.Helper()
		t.Fatalf("seed %d, opt %+v: "+format, append([]any{seed, opt}, args...)...)
	}
	n := len(scores)
	byRank := make([]int, n)
	seen := make([]bool, n)
	for i, d := range dec {
		if d.Rank < 1 || int(d.Rank) > n || seen[d.Rank-1] {
			fail("row %d: rank %d is not a permutation entry", i, d.Rank)
		}
		seen[d.Rank-1] = true
		byRank[d.Rank-1] = i
	}
	if !slices.Equal(byRank, Order(scores)) {
		fail("ranks differ from Order")
	}
	if opt.Fixed > opt.Budget {
		if sum.Stop != StopFixedOverBudget || sum.Kept != 0 || sum.Total != opt.Fixed {
			fail("fixed over budget: summary %+v", sum)
		}
		for i, d := range dec {
			if d.Kept || d.Reason != BelowCut {
				fail("fixed over budget: row %d decision %+v", i, d)
			}
		}
		return
	}
	if sum.Total > opt.Budget {
		fail("total %v exceeds budget %v", sum.Total, opt.Budget)
	}
	if sum.Left != opt.Budget-sum.Total {
		fail("left %v, want %v", sum.Left, opt.Budget-sum.Total)
	}
	total, kept, keptCost := opt.Fixed, 0, 0.0
	firstDrop := 0 // rank of the first row not kept
	for r, i := range byRank {
		d, rank := dec[i], r+1
		if d.Kept != (d.Reason == Kept) {
			fail("row %d: kept %v but reason %q", i, d.Kept, d.Reason)
		}
		fits := total+costs[i] <= opt.Budget
		if d.Kept {
			if !fits {
				fail("row %d kept but %v + %v > %v", i, total, costs[i], opt.Budget)
			}
			if !opt.KeepUnmatched && scores[i] <= 0 {
				fail("row %d kept with score %v", i, scores[i])
			}
			if scores[i] < opt.MinScore {
				fail("row %d kept below min score", i)
			}
			if !opt.Fill && firstDrop != 0 {
				fail("row %d kept after rank %d was dropped, without fill", i, firstDrop)
			}
			total += costs[i]
			kept++
			keptCost += costs[i]
		} else if firstDrop == 0 {
			firstDrop = rank
		}
		if d.LedgerAfter != total {
			fail("row %d: ledger after %v, want %v", i, d.LedgerAfter, total)
		}
		if opt.MaxRows > 0 && kept > opt.MaxRows {
			fail("kept %d rows, max %d", kept, opt.MaxRows)
		}
		switch stopped := sum.StopRank != 0 && rank > sum.StopRank; {
		case stopped && (sum.Stop == StopBudget || sum.Stop == StopMaxRows):
			if d.Reason != BelowCut {
				fail("row %d after %s stop: reason %q", i, sum.Stop, d.Reason)
			}
		case d.Reason == BelowCut:
			fail("row %d below cut but no stop before it", i)
		case stopped && (d.Reason == Kept || d.Reason == Budget):
			fail("row %d considered after the %s stop at rank %d", i, sum.Stop, sum.StopRank)
		case d.Reason == Budget:
			if fits {
				fail("row %d: reason budget but it fits", i)
			}
		case d.Reason == NoMatch:
			if opt.KeepUnmatched || scores[i] > 0 {
				fail("row %d: no-match with score %v", i, scores[i])
			}
		case d.Reason == MinScore:
			if scores[i] >= opt.MinScore || (!opt.KeepUnmatched && scores[i] <= 0) {
				fail("row %d: min-score with score %v", i, scores[i])
			}
		case d.Reason == MaxRows:
			if rank != sum.StopRank || kept != opt.MaxRows {
				fail("row %d: max-rows at rank %d, kept %d", i, rank, kept)
			}
		}
	}
	if sum.Kept != kept || sum.Total != total || math.Abs(sum.KeptCost-keptCost) > 1e-9*keptCost {
		fail("summary %+v, want kept %d total %v kept cost %v", sum, kept, total, keptCost)
	}
	if sum.StopRank == 0 {
		if sum.Stop != StopExhausted {
			fail("stop %s with rank 0", sum.Stop)
		}
		return
	}
	want := map[Stop]Reason{StopBudget: Budget, StopMaxRows: MaxRows, StopMinScore: MinScore, StopNoMatch: NoMatch}[sum.Stop]
	if got := dec[byRank[sum.StopRank-1]].Reason; got != want {
		fail("stop %s at rank %d, whose reason is %q", sum.Stop, sum.StopRank, got)
	}
	if sum.Stop == StopBudget && opt.Fill {
		fail("budget stop with fill")
	}
}

func BenchmarkPick(b *testing.B) {
	const n = 1_000_000
	r := rand.New(rand.NewPCG(1, 1))
	scores := make([]float64, n)
	costs := make([]float64, n)
	var all float64
	for i := range n {
		scores[i] = math.Round(r.ExpFloat64()*1000) / 100 // ties, as rounded scores have
		costs[i] = 6 * 7e9 * float64(50+r.IntN(1000))
		all += costs[i]
	}
	opt := Options{Budget: all / 2, Fixed: 1e15, Fill: true}
	for b.Loop() {
		if _, _, err := Pick(scores, costs, opt); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.N)*n/b.Elapsed().Seconds(), "rows/s")
}

// TestBarred: a barred row is never kept, stops nothing, costs nothing, and may have no score (NaN,
// ranked last); the others are picked as if it were not there.
func TestBarred(t *testing.T) {
	nan := math.NaN()
	scores := []float64{5, 4, nan, 3, 2}
	costs := []float64{1, 1, 1, 1, 1}
	barred := []Reason{Kept, Prefilter, Unscored, Kept, Kept}
	dec, sum, err := Pick(scores, costs, Options{Budget: 2, Barred: barred})
	if err != nil {
		t.Fatal(err)
	}
	want := []Decision{
		{Rank: 1, Kept: true, LedgerAfter: 1},
		{Rank: 2, Reason: Prefilter, LedgerAfter: 1},
		{Rank: 5, Reason: Unscored, LedgerAfter: 2},
		{Rank: 3, Kept: true, LedgerAfter: 2},
		{Rank: 4, Reason: Budget, LedgerAfter: 2},
	}
	for i := range want {
		if dec[i] != want[i] {
			t.Errorf("row %d: %+v, want %+v", i, dec[i], want[i])
		}
	}
	if sum.Kept != 2 || sum.Stop != StopBudget || sum.StopRank != 4 {
		t.Errorf("summary %+v", sum)
	}
	if _, _, err := Pick(scores, costs, Options{Budget: 2}); !errors.Is(err, ErrBadInput) {
		t.Errorf("a NaN score of a row not barred: %v", err)
	}
	if Prefilter.String() != "prefilter" || Unscored.String() != "no-score" {
		t.Errorf("reason words %q %q", Prefilter, Unscored)
	}
}

// TestGroupCaps: a group at its cap keeps no more rows, reason source-cap, and the walk goes on to
// rows of other groups.
func TestGroupCaps(t *testing.T) {
	scores := []float64{9, 8, 7, 6, 5}
	costs := []float64{2, 2, 2, 2, 2}
	group := []int32{0, 0, 0, 1, 1}
	dec, sum, err := Pick(scores, costs, Options{Budget: 100, Group: group, Caps: []float64{4, 100}})
	if err != nil {
		t.Fatal(err)
	}
	want := []Reason{Kept, Kept, GroupCap, Kept, Kept}
	for i, d := range dec {
		if d.Reason != want[i] || d.Kept != (want[i] == Kept) {
			t.Errorf("row %d: %+v, want %v", i, d, want[i])
		}
	}
	if sum.Kept != 4 || sum.Stop != StopExhausted {
		t.Errorf("summary %+v", sum)
	}
	if _, _, err := Pick(scores, costs, Options{Budget: 100, Group: group}); !errors.Is(err, ErrBadInput) {
		t.Errorf("groups without caps: %v", err)
	}
}

// TestMaxCount: with costs in tokens, the pick stops at the first row whose tokens would pass the
// cap (or with Fill goes on for rows that fit), whatever budget is left.
func TestMaxCount(t *testing.T) {
	scores := []float64{9, 8, 7, 6}
	costs := []float64{3, 4, 2, 1}
	dec, sum, err := Pick(scores, costs, Options{Budget: 1e9, Unit: 10, MaxCount: 6})
	if err != nil {
		t.Fatal(err)
	}
	if !dec[0].Kept || dec[1].Reason != MaxCount || dec[2].Reason != BelowCut || sum.Stop != StopMaxCount || sum.StopRank != 2 {
		t.Errorf("%+v %+v", dec, sum)
	}
	dec, _, _ = Pick(scores, costs, Options{Budget: 1e9, Unit: 10, MaxCount: 6, Fill: true})
	if !dec[0].Kept || dec[1].Kept || !dec[2].Kept || !dec[3].Kept {
		t.Errorf("with Fill: %+v", dec)
	}
	if _, _, err := Pick(scores, costs, Options{Budget: 1e9, MaxCount: 6}); !errors.Is(err, ErrBadInput) {
		t.Errorf("a count cap without a unit: %v", err)
	}
}

// TestReasonWords: every reason reads back from its word, Reasons lists each once, and the walk's
// reasons are told from the bars set before it.
func TestReasonWords(t *testing.T) {
	seen := map[Reason]bool{}
	for _, r := range Reasons() {
		if got, ok := ParseReason(r.String()); !ok || got != r || seen[r] {
			t.Errorf("%v reads back as %v, %v (seen %v)", r, got, ok, seen[r])
		}
		seen[r] = true
	}
	if len(seen) != len(reasonNames)-1 {
		t.Errorf("Reasons lists %d of %d reasons", len(seen), len(reasonNames)-1)
	}
	if !MaxCount.Walk() || !BelowCut.Walk() || Duplicate.Walk() || GroupCap.Walk() || Prefilter.Walk() {
		t.Error("Walk tells the walk's reasons wrongly")
	}
}

// PickFunc decides as Pick does with the same costs, asked one row at a time, and fails on a cost
// that is not finite and >= 0 when the walk meets it. Internal property: no reference values.
func TestPickFuncMatchesPick(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	scores, costs := make([]float64, 500), make([]float64, 500)
	for i := range scores {
		scores[i], costs[i] = float64(rng.IntN(40)), float64(1+rng.IntN(9))
	}
	barred := make([]Reason, len(scores))
	for i := range barred {
		if i%7 == 3 {
			barred[i] = Duplicate
		}
	}
	for _, opt := range []Options{{Budget: 700}, {Budget: 700, Fill: true}, {Budget: 1e9, MaxRows: 30}, {Budget: 300, Fixed: 50, MinScore: 5}, {Budget: 700, Barred: barred}} {
		want, wsum, err := Pick(scores, costs, opt)
		if err != nil {
			t.Fatal(err)
		}
		asked := make([]int, len(costs))
		got, gsum, err := PickFunc(scores, func(i int) float64 { asked[i]++; return costs[i] }, opt)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(got, want) || gsum != wsum {
			t.Errorf("%+v: PickFunc's decisions or summary differ from Pick's", opt)
		}
		// A cost is asked once for each row not barred that the walk meets up to its end (the row
		// that ends it included), and of no other.
		for i, n := range asked {
			want := 0
			if (opt.Barred == nil || barred[i] == Kept) && (gsum.Stop == StopExhausted || int(got[i].Rank) <= gsum.StopRank) {
				want = 1
			}
			if n != want {
				t.Fatalf("%+v: row %d (%+v) cost asked %d times, want %d", opt, i, got[i], n, want)
			}
		}
	}
	bad := slices.Clone(costs)
	bad[17] = math.NaN()
	if _, _, err := PickFunc(scores, func(i int) float64 { return bad[i] }, Options{Budget: 700}); !errors.Is(err, ErrBadInput) {
		t.Errorf("a NaN cost: %v, want ErrBadInput", err)
	}
}

// orderKey orders scores as cmp.Compare does (NaN lowest and NaNs alike, -0 and +0 alike), over
// the values at the edges of float64 and random ones. Internal property: no reference values.
func TestOrderKeyMatchesCompare(t *testing.T) {
	vals := []float64{math.NaN(), math.Copysign(math.NaN(), -1), math.Inf(-1), -math.MaxFloat64, -1, -math.SmallestNonzeroFloat64,
		math.Copysign(0, -1), 0, math.SmallestNonzeroFloat64, 0x1p-1022, 1, 2, math.MaxFloat64, math.Inf(1)}
	rng := rand.New(rand.NewPCG(7, 8))
	for range 300 {
		vals = append(vals, math.Float64frombits(rng.Uint64()))
	}
	for _, a := range vals {
		for _, b := range vals {
			if got, want := cmp.Compare(orderKey(a), orderKey(b)), cmp.Compare(a, b); got != want {
				t.Fatalf("%v against %v: keys compare %d, scores %d", a, b, got, want)
			}
		}
	}
}

// TestRankedRowsMatchesSort holds the radix ranking to a stable comparison sort of the rows by
// cmp.Compare of their scores, highest first (Order's definition), with groups split by radix down
// to single rows, split a little, or sorted by comparison at once; over scores with NaNs, both
// zeros, infinities, many ties and many that agree in their high bits. Internal property: the
// reference is the definition, not another program.
func TestRankedRowsMatchesSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	edge := []float64{math.NaN(), math.Inf(-1), -1, math.Copysign(0, -1), 0, 1, math.Inf(1), math.MaxFloat64, math.SmallestNonzeroFloat64}
	for _, n := range []int{0, 1, 2, 7, 1000, 5000} {
		scores := make([]float64, n)
		for i := range scores {
			switch rng.IntN(4) {
			case 0:
				scores[i] = edge[rng.IntN(len(edge))]
			case 1:
				scores[i] = float64(rng.IntN(5)) // ties
			case 2:
				scores[i] = 8 + float64(rng.IntN(1<<20))*0x1p-40 // equal above the lowest bits
			default:
				scores[i] = rng.NormFloat64() * 10
			}
		}
		want := make([]uint32, n)
		for i := range want {
			want[i] = uint32(i)
		}
		slices.SortStableFunc(want, func(a, b uint32) int { return cmp.Compare(scores[b], scores[a]) })
		for _, small := range []int{1, 3, smallGroup, n + 1} {
			got := make([]uint32, n)
			r := ranker{scores: scores, small: small}
			r.top(got)
			if !slices.Equal(got, want) {
				t.Fatalf("%d rows, groups of %d sorted by comparison: the ranking differs from the sort", n, small)
			}
		}
		if got := rankedRows(scores); !slices.Equal(got, want) {
			t.Fatalf("%d rows: rankedRows differs from the sort", n)
		}
	}
}
