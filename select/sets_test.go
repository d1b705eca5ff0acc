package selection

import (
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// Like TestPick, these are specification tests: splitting a budget between target sets has no
// outside reference, so each expected result is worked by hand from the rules in PickSets's
// documentation (the arithmetic is in the comments), and one set is checked against Pick.

func TestPickSets(t *testing.T) {
	ten := func(n int) []float64 {
		c := make([]float64, n)
		for i := range c {
			c[i] = 10
		}
		return c
	}
	down := func(n int) []float64 {
		s := make([]float64, n)
		for i := range s {
			s[i] = float64(n - i)
		}
		return s
	}
	up := func(n int) []float64 {
		s := make([]float64, n)
		for i := range s {
			s[i] = float64(i + 1)
		}
		return s
	}
	tests := []struct {
		name    string
		sets    []Set
		costs   []float64
		cluster []int32
		opt     Options
		keeper  []int // by row: 1 + the set that kept it, 0 for none
		sums    []SetSummary
		total   Summary
		// reasons, when not nil, are each set's reasons by row.
		reasons [][]Reason
	}{
		{
			name: "70/30 split, with a selection cost and 2 FLOPs a token",
			// Training budget (120 - 20) / 2 = 50 tokens: 35 for A, 15 for B. A keeps rows 0-6 (5
			// tokens each) and row 7 does not fit (rank 8); B keeps 9, 8, 7 and finds the rest taken.
			sets:   []Set{{Scores: down(10), Weight: 0.7}, {Scores: up(10), Weight: 0.3}},
			costs:  []float64{5, 5, 5, 5, 5, 5, 5, 5, 5, 5},
			opt:    Options{Budget: 120, Fixed: 20, Unit: 2},
			keeper: []int{1, 1, 1, 1, 1, 1, 1, 2, 2, 2},
			sums: []SetSummary{
				{Share: 35, Kept: 7, Count: 35, KeptCost: 70, Stop: StopBudget, StopRank: 8, Bound: true},
				{Share: 15, Kept: 3, Count: 15, KeptCost: 30, Stop: StopExhausted},
			},
			total: Summary{Kept: 10, KeptCost: 100, Total: 120, Left: 0, Stop: StopBudget},
			reasons: [][]Reason{
				{Kept, Kept, Kept, Kept, Kept, Kept, Kept, Taken, Taken, Taken},
				{Taken, Taken, Taken, Taken, Taken, Taken, Taken, Kept, Kept, Kept},
			},
		},
		{
			name: "weights need not sum to 1",
			// 7 and 3 are 0.7 and 0.3: the same split as above, without the selection cost.
			sets:   []Set{{Scores: down(10), Weight: 7}, {Scores: up(10), Weight: 3}},
			costs:  ten(10),
			opt:    Options{Budget: 100, Unit: 1},
			keeper: []int{1, 1, 1, 1, 1, 1, 1, 2, 2, 2},
			sums: []SetSummary{
				{Share: 70, Kept: 7, Count: 70, KeptCost: 70, Stop: StopBudget, StopRank: 8, Bound: true},
				{Share: 30, Kept: 3, Count: 30, KeptCost: 30, Stop: StopExhausted},
			},
			total: Summary{Kept: 10, KeptCost: 100, Total: 100, Stop: StopBudget},
		},
		{
			name: "a set whose ranking runs out gives the rest to a set bound by its share",
			// 50 each. A matches rows 0-2 alone: keeps them (30) and stops at no-match (rank 4),
			// giving back 20. B keeps 3-7 (50) and row 8 does not fit (rank 6); given the 20 it
			// walks again, keeps 8 and 9 (70), and finds rows 0-2 taken.
			sets: []Set{
				{Scores: []float64{3, 2, 1, 0, 0, 0, 0, 0, 0, 0}, Weight: 1},
				{Scores: []float64{1, 1, 1, 8, 7, 6, 5, 4, 3, 2}, Weight: 1},
			},
			costs:  ten(10),
			opt:    Options{Budget: 100, Unit: 1},
			keeper: []int{1, 1, 1, 2, 2, 2, 2, 2, 2, 2},
			sums: []SetSummary{
				{Share: 50, Returned: 20, Kept: 3, Count: 30, KeptCost: 30, Stop: StopNoMatch, StopRank: 4},
				{Share: 50, Given: 20, Kept: 7, Count: 70, KeptCost: 70, Stop: StopExhausted},
			},
			total: Summary{Kept: 10, KeptCost: 100, Total: 100, Stop: StopExhausted},
		},
		{
			name: "the order of the sets changes nothing here",
			// As above with the sets the other way round: B (first) keeps 3-7 and stops at row 8;
			// A keeps 0-2, finds rows 3-7 (ranks 4-8) taken and stops at row 8 (rank 9), giving
			// back 20; B walks again and keeps 8 and 9.
			sets: []Set{
				{Scores: []float64{1, 1, 1, 8, 7, 6, 5, 4, 3, 2}, Weight: 1},
				{Scores: []float64{3, 2, 1, 0, 0, 0, 0, 0, 0, 0}, Weight: 1},
			},
			costs:  ten(10),
			opt:    Options{Budget: 100, Unit: 1},
			keeper: []int{2, 2, 2, 1, 1, 1, 1, 1, 1, 1},
			sums: []SetSummary{
				{Share: 50, Given: 20, Kept: 7, Count: 70, KeptCost: 70, Stop: StopExhausted},
				{Share: 50, Returned: 20, Kept: 3, Count: 30, KeptCost: 30, Stop: StopNoMatch, StopRank: 9},
			},
			total: Summary{Kept: 10, KeptCost: 100, Total: 100, Stop: StopExhausted},
		},
		{
			name: "overlapping sets: the earlier set takes a row both rank first",
			// 20 each. A keeps 0 and 1, row 2 does not fit (rank 3); B finds 0 and 1 taken and
			// keeps 2 and 3.
			sets:   []Set{{Scores: down(4), Weight: 1}, {Scores: down(4), Weight: 1}},
			costs:  ten(4),
			opt:    Options{Budget: 40, Unit: 1},
			keeper: []int{1, 1, 2, 2},
			sums: []SetSummary{
				{Share: 20, Kept: 2, Count: 20, KeptCost: 20, Stop: StopBudget, StopRank: 3, Bound: true},
				{Share: 20, Kept: 2, Count: 20, KeptCost: 20, Stop: StopExhausted},
			},
			total:   Summary{Kept: 4, KeptCost: 40, Total: 40, Stop: StopBudget},
			reasons: [][]Reason{{Kept, Kept, Taken, Taken}, {Taken, Taken, Kept, Kept}},
		},
		{
			name: "one row of a cluster over all sets",
			// Rows 0 and 1 are one cluster. 10 each. A keeps 0; row 1 is then a duplicate; row 2
			// does not fit (rank 3). B ranks 1, 2, 3, 0: 1 is a duplicate, keeps 2, 3 does not fit.
			sets:    []Set{{Scores: down(4), Weight: 1}, {Scores: []float64{1, 4, 3, 2}, Weight: 1}},
			costs:   ten(4),
			cluster: []int32{0, 0, 2, 3},
			opt:     Options{Budget: 20, Unit: 1},
			keeper:  []int{1, 0, 2, 0},
			sums: []SetSummary{
				{Share: 10, Kept: 1, Count: 10, KeptCost: 10, Stop: StopBudget, StopRank: 3, Bound: true},
				{Share: 10, Kept: 1, Count: 10, KeptCost: 10, Stop: StopBudget, StopRank: 3, Bound: true},
			},
			total:   Summary{Kept: 2, KeptCost: 20, Total: 20, Stop: StopBudget},
			reasons: [][]Reason{{Kept, Duplicate, Taken, BelowCut}, {Taken, Duplicate, Kept, Budget}},
		},
		{
			name: "source caps count every set's rows",
			// Rows 0 and 1 are source 0, capped at 10; 20 each. A keeps 0, row 1 passes the cap,
			// keeps 2, row 3 does not fit. B ranks 1, 2, 3, 0: 1 passes the cap, 2 is taken, keeps
			// 3, and gives back 10. A walks again with 30 and runs out, giving back 10 it cannot
			// use; no set is left bound.
			sets:   []Set{{Scores: down(4), Weight: 1}, {Scores: []float64{1, 4, 3, 2}, Weight: 1}},
			costs:  ten(4),
			opt:    Options{Budget: 40, Unit: 1, Group: []int32{0, 0, 1, 1}, Caps: []float64{10, 100}},
			keeper: []int{1, 0, 1, 2},
			sums: []SetSummary{
				{Share: 20, Given: 10, Returned: 10, Kept: 2, Count: 20, KeptCost: 20, Stop: StopExhausted},
				{Share: 20, Returned: 10, Kept: 1, Count: 10, KeptCost: 10, Stop: StopExhausted},
			},
			total:   Summary{Kept: 3, KeptCost: 30, Total: 30, Left: 10, Stop: StopExhausted},
			reasons: [][]Reason{{Kept, GroupCap, Kept, Taken}, {Taken, GroupCap, Taken, Kept}},
		},
		{
			name: "fill keeps walking past a row that does not fit",
			// 30 each. A keeps 0 (10), row 1 (30) does not fit, keeps 2 and 3 (30). B ranks 1
			// first: 30 fits.
			sets:   []Set{{Scores: down(4), Weight: 1}, {Scores: []float64{1, 4, 3, 2}, Weight: 1}},
			costs:  []float64{10, 30, 10, 10},
			opt:    Options{Budget: 60, Unit: 1, Fill: true},
			keeper: []int{1, 2, 1, 1},
			sums: []SetSummary{
				{Share: 30, Kept: 3, Count: 30, KeptCost: 30, Stop: StopExhausted, Bound: true},
				{Share: 30, Kept: 1, Count: 30, KeptCost: 30, Stop: StopExhausted},
			},
			total: Summary{Kept: 4, KeptCost: 60, Total: 60, Stop: StopBudget},
		},
		{
			name: "a set's own bars and min score",
			// 20 each. A bars row 0 (a duplicate by its own scores) and keeps rows scoring 3 or
			// more: row 1, then stops at row 2 (rank 3), giving back 10. B keeps 0 and 2, row 3
			// does not fit (rank 4); given the 10 it keeps row 3 too.
			sets: []Set{
				{Scores: down(4), Weight: 1, Barred: []Reason{Duplicate, Kept, Kept, Kept}, MinScore: 3},
				{Scores: down(4), Weight: 1},
			},
			costs:  ten(4),
			opt:    Options{Budget: 40, Unit: 1},
			keeper: []int{2, 1, 2, 2},
			sums: []SetSummary{
				{Share: 20, Returned: 10, Kept: 1, Count: 10, KeptCost: 10, Stop: StopMinScore, StopRank: 3},
				{Share: 20, Given: 10, Kept: 3, Count: 30, KeptCost: 30, Stop: StopExhausted},
			},
			total:   Summary{Kept: 4, KeptCost: 40, Total: 40, Stop: StopExhausted},
			reasons: [][]Reason{{Duplicate, Kept, Taken, Taken}, {Kept, Taken, Kept, Kept}},
		},
		{
			name:   "selection alone over the budget",
			sets:   []Set{{Scores: down(2), Weight: 1}, {Scores: up(2), Weight: 1}},
			costs:  ten(2),
			opt:    Options{Budget: 10, Fixed: 20, Unit: 1},
			keeper: []int{0, 0},
			sums:   []SetSummary{{}, {}},
			total:  Summary{Total: 20, Left: -10, Stop: StopFixedOverBudget},
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			dec, sums, total, err := PickSets(tc.sets, tc.costs, tc.cluster, tc.opt)
			if err != nil {
				t.Fatal(err)
			}
			keeper := make([]int, len(tc.costs))
			for s := range dec {
				for i, d := range dec[s] {
					if d.Kept {
						if keeper[i] != 0 {
							t.Fatalf("row %d kept by sets %d and %d", i, keeper[i], s+1)
						}
						keeper[i] = s + 1
					}
				}
			}
			if !slices.Equal(keeper, tc.keeper) {
				t.Errorf("kept by %v, want %v", keeper, tc.keeper)
			}
			if !slices.Equal(sums, tc.sums) {
				t.Errorf("set summaries\n got %+v\nwant %+v", sums, tc.sums)
			}
			if total != tc.total {
				t.Errorf("summary %+v, want %+v", total, tc.total)
			}
			for s, want := range tc.reasons {
				got := make([]Reason, len(dec[s]))
				for i, d := range dec[s] {
					got[i] = d.Reason
				}
				if !slices.Equal(got, want) {
					t.Errorf("set %d: reasons %v, want %v", s+1, got, want)
				}
			}
			for s := range dec {
				for i, d := range dec[s] {
					if d.LedgerAfter > tc.opt.Budget && tc.opt.Fixed <= tc.opt.Budget {
						t.Errorf("set %d row %d: ledger %v over the budget", s+1, i, d.LedgerAfter)
					}
				}
			}
		})
	}
}

// TestPickSetsOneIsPick checks that one set walks as Pick walks, on random rows with and without
// fill, bars and caps.
func TestPickSetsOneIsPick(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for trial := range 200 {
		n := 1 + rng.IntN(60)
		scores, costs := make([]float64, n), make([]float64, n)
		barred := make([]Reason, n)
		group := make([]int32, n)
		for i := range n {
			scores[i] = float64(rng.IntN(8)) // ties and zeros
			costs[i] = float64(1 + rng.IntN(20))
			if rng.IntN(6) == 0 {
				barred[i] = Duplicate
			}
			group[i] = int32(rng.IntN(2))
		}
		opt := Options{Budget: float64(rng.IntN(400)), Fixed: float64(rng.IntN(20)), Unit: 1, Fill: trial%2 == 0, Barred: barred}
		if trial%3 == 0 {
			opt.Group, opt.Caps = group, []float64{float64(rng.IntN(100)), 1000}
		}
		want, wsum, err := Pick(scores, costs, opt)
		if err != nil {
			t.Fatal(err)
		}
		dec, sums, sum, err := PickSets([]Set{{Scores: scores, Weight: 0.4}}, costs, nil, opt)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(dec[0], want) {
			t.Fatalf("trial %d: decisions\n got %v\nwant %v", trial, dec[0], want)
		}
		if sums[0].Kept != wsum.Kept || sums[0].KeptCost != wsum.KeptCost || sum.Total != wsum.Total || sum.Left != wsum.Left {
			t.Fatalf("trial %d: summary %+v %+v, want %+v", trial, sums[0], sum, wsum)
		}
		if wsum.Stop != StopFixedOverBudget && (sums[0].Stop != wsum.Stop || sums[0].StopRank != wsum.StopRank) {
			t.Fatalf("trial %d: stop %v at %d, want %v at %d", trial, sums[0].Stop, sums[0].StopRank, wsum.Stop, wsum.StopRank)
		}
	}
}

func TestPickSetsBadInput(t *testing.T) {
	one := []float64{1}
	for _, tc := range []struct {
		name    string
		sets    []Set
		cluster []int32
		opt     Options
	}{
		{"no sets", nil, nil, Options{Budget: 1, Unit: 1}},
		{"zero weight", []Set{{Scores: one, Weight: 0}}, nil, Options{Budget: 1, Unit: 1}},
		{"NaN weight", []Set{{Scores: one, Weight: math.NaN()}}, nil, Options{Budget: 1, Unit: 1}},
		{"infinite weight", []Set{{Scores: one, Weight: math.Inf(1)}}, nil, Options{Budget: 1, Unit: 1}},
		{"no unit", []Set{{Scores: one, Weight: 1}}, nil, Options{Budget: 1}},
		{"max rows", []Set{{Scores: one, Weight: 1}}, nil, Options{Budget: 1, Unit: 1, MaxRows: 1}},
		{"short scores", []Set{{Scores: nil, Weight: 1}}, nil, Options{Budget: 1, Unit: 1}},
		{"NaN score", []Set{{Scores: []float64{math.NaN()}, Weight: 1}}, nil, Options{Budget: 1, Unit: 1}},
		{"short bars", []Set{{Scores: one, Weight: 1, Barred: []Reason{}}}, nil, Options{Budget: 1, Unit: 1}},
		{"bad cluster", []Set{{Scores: one, Weight: 1}}, []int32{1}, Options{Budget: 1, Unit: 1}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if _, _, _, err := PickSets(tc.sets, []float64{1}, tc.cluster, tc.opt); !errors.Is(err, ErrBadInput) {
				t.Errorf("got %v, want ErrBadInput", err)
			}
		})
	}
}
