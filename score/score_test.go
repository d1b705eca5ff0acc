package score

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
	"testing"
)

func TestParseMethod(t *testing.T) {
	for _, tc := range []struct {
		in   string
		want Method
		err  bool
	}{
		{"bm25", BM25, false},
		{"BM25", BM25, false},
		{"tfidf", TFIDF, false},
		{"TfIdf", TFIDF, false},
		{"tf-idf", 0, true},
		{"", 0, true},
		{"bm25 ", 0, true},
	} {
		got, err := ParseMethod(tc.in)
		if tc.err {
			if !errors.Is(err, ErrInvalidParams) {
				t.Errorf("ParseMethod(%q) error = %v, want ErrInvalidParams", tc.in, err)
			}
			continue
		}
		if err != nil || got != tc.want {
			t.Errorf("ParseMethod(%q) = %v, %v; want %v", tc.in, got, err, tc.want)
		}
		if !strings.EqualFold(got.String(), tc.in) {
			t.Errorf("%v.String() = %q, want %q", got, got.String(), tc.in)
		}
	}
	if s := Method(9).String(); s != "Method(9)" {
		t.Errorf("Method(9).String() = %q", s)
	}
}

func TestParseAggregate(t *testing.T) {
	for _, tc := range []struct {
		in   string
		want Aggregate
		err  bool
	}{
		{"sum", Sum, false},
		{"MAX", Max, false},
		{"mean", 0, true},
		{"", 0, true},
	} {
		got, err := ParseAggregate(tc.in)
		if tc.err {
			if !errors.Is(err, ErrInvalidParams) {
				t.Errorf("ParseAggregate(%q) error = %v, want ErrInvalidParams", tc.in, err)
			}
			continue
		}
		if err != nil || got != tc.want {
			t.Errorf("ParseAggregate(%q) = %v, %v; want %v", tc.in, got, err, tc.want)
		}
	}
	if s := Aggregate(7).String(); s != "Aggregate(7)" {
		t.Errorf("Aggregate(7).String() = %q", s)
	}
}

func FuzzParseMethod(f *testing.F) {
	for _, s := range []string{"bm25", "tfidf", "TFIDF", "", "x"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		m, err := ParseMethod(s)
		if err != nil {
			if !errors.Is(err, ErrInvalidParams) {
				t.Fatalf("error %v is not ErrInvalidParams", err)
			}
			return
		}
		if back, err := ParseMethod(m.String()); err != nil || back != m {
			t.Fatalf("round trip %q -> %v -> %v, %v", s, m, back, err)
		}
	})
}

func FuzzParseAggregate(f *testing.F) {
	for _, s := range []string{"sum", "max", "Max", "", "x"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		a, err := ParseAggregate(s)
		if err != nil {
			if !errors.Is(err, ErrInvalidParams) {
				t.Fatalf("error %v is not ErrInvalidParams", err)
			}
			return
		}
		if back, err := ParseAggregate(a.String()); err != nil || back != a {
			t.Fatalf("round trip %q -> %v -> %v, %v", s, a, back, err)
		}
	})
}

func TestParamsValidate(t *testing.T) {
	ok := DefaultParams()
	if ok.K1 != 1.2 || ok.B != 1 || ok.Method != BM25 || ok.Aggregate != Sum {
		t.Errorf("DefaultParams() = %+v", ok)
	}
	for _, tc := range []struct {
		name string
		edit func(*Params)
		bad  bool
	}{
		{"default", func(*Params) {}, false},
		{"zero", func(p *Params) { *p = Params{} }, false},
		{"b=1", func(p *Params) { p.B = 1 }, false},
		{"k1 negative", func(p *Params) { p.K1 = -0.1 }, true},
		{"k1 NaN", func(p *Params) { p.K1 = math.NaN() }, true},
		{"k1 Inf", func(p *Params) { p.K1 = math.Inf(1) }, true},
		{"b>1", func(p *Params) { p.B = 1.01 }, true},
		{"b<0", func(p *Params) { p.B = -1e-9 }, true},
		{"b NaN", func(p *Params) { p.B = math.NaN() }, true},
		{"method", func(p *Params) { p.Method = 2 }, true},
		{"aggregate", func(p *Params) { p.Aggregate = 2 }, true},
	} {
		p := DefaultParams()
		tc.edit(&p)
		err := p.Validate()
		if tc.bad != (err != nil) || (err != nil && !errors.Is(err, ErrInvalidParams)) {
			t.Errorf("%s: Validate() = %v, want bad=%v", tc.name, err, tc.bad)
		}
		if tc.bad {
			if _, err := Score(context.Background(), newMemCorpus(nil), nil, p); !errors.Is(err, ErrInvalidParams) {
				t.Errorf("%s: Score error = %v", tc.name, err)
			}
			if _, err := Explain(newMemCorpus([][]string{{"aa"}}), nil, p, 0, 0); !errors.Is(err, ErrInvalidParams) {
				t.Errorf("%s: Explain error = %v", tc.name, err)
			}
		}
	}
}

func allParams() []Params {
	var ps []Params
	for _, m := range []Method{BM25, TFIDF} {
		for _, a := range []Aggregate{Sum, Max} {
			p := DefaultParams()
			p.Method, p.Aggregate = m, a
			ps = append(ps, p)
		}
	}
	return ps
}

// checkExplainMatches asserts that Explain reproduces Score bit for bit on
// every row and that the parts add up to the score in their order.
func checkExplainMatches(t *testing.T, c Corpus, q []Query, p Params) *Result {
	t.Helper()
	res, err := Score(context.Background(), c, q, p)
	if err != nil {
		t.Fatal(err)
	}
	for r := range c.NumRows() {
		ex, err := Explain(c, q, p, r, -1)
		if err != nil {
			t.Fatal(err)
		}
		if math.Float64bits(ex.Score) != math.Float64bits(res.Scores[r]) {
			t.Fatalf("%v/%v row %d: Explain %v != Score %v", p.Method, p.Aggregate, r, ex.Score, res.Scores[r])
		}
		if ex.Best != int(res.Best[r]) {
			t.Fatalf("%v/%v row %d: Explain best %d != Score best %d", p.Method, p.Aggregate, r, ex.Best, res.Best[r])
		}
		var s float64
		for i, part := range ex.Parts {
			s += part.Contribution
			if i > 0 && ex.Parts[i-1].Term >= part.Term {
				t.Fatalf("row %d: parts out of order: %q then %q", r, ex.Parts[i-1].Term, part.Term)
			}
			if part.TF <= 0 || part.DF <= 0 {
				t.Fatalf("row %d: part %+v", r, part)
			}
			if !closeRel(part.Contribution, part.QueryWeight*part.IDF*part.TFPart, 1e-14) {
				t.Fatalf("row %d: part %+v does not multiply out", r, part)
			}
		}
		if math.Float64bits(s) != math.Float64bits(ex.Score) {
			t.Fatalf("row %d: parts sum to %v, score %v", r, s, ex.Score)
		}
		if (ex.Best < 0) != (len(ex.Targets) == 0) {
			t.Fatalf("row %d: best %d with %d targets", r, ex.Best, len(ex.Targets))
		}
		if len(ex.Targets) > 0 {
			if ex.Targets[0].Index != ex.Best {
				t.Fatalf("row %d: first target %d, best %d", r, ex.Targets[0].Index, ex.Best)
			}
			if p.Aggregate == Max && math.Float64bits(ex.Targets[0].Score) != math.Float64bits(ex.Score) {
				t.Fatalf("row %d: max score %v, best target score %v", r, ex.Score, ex.Targets[0].Score)
			}
		}
		for i := 1; i < len(ex.Targets); i++ {
			a, b := ex.Targets[i-1], ex.Targets[i]
			if a.Score < b.Score || (a.Score == b.Score && a.Index > b.Index) {
				t.Fatalf("row %d: targets out of order: %+v then %+v", r, a, b)
			}
		}
	}
	return res
}

// Uses the outside texts of testdata/texts.json; the property checked is
// internal (bitwise agreement), so no reference values are involved.
func TestExplainMatchesScoreBitwise(t *testing.T) {
	pool, targets := fixtureTexts(t)
	c := newMemCorpus(pool)
	for _, p := range allParams() {
		t.Run(p.Method.String()+"/"+p.Aggregate.String(), func(t *testing.T) {
			checkExplainMatches(t, c, targets, p)
		})
	}
}

func TestSumIsSumOfTargets(t *testing.T) {
	pool, targets := fixtureTexts(t)
	c := newMemCorpus(pool)
	for _, p := range allParams() {
		if p.Aggregate != Sum {
			continue
		}
		res, err := Score(context.Background(), c, targets, p)
		if err != nil {
			t.Fatal(err)
		}
		for r := range pool {
			ex, err := Explain(c, targets, p, r, -1)
			if err != nil {
				t.Fatal(err)
			}
			var s float64
			for _, m := range ex.Targets {
				s += m.Score
			}
			if p.Method == TFIDF {
				s /= float64(len(targets))
			}
			if !closeRel(res.Scores[r], s, 1e-13) {
				t.Errorf("%v row %d: sum score %v, from targets %v", p.Method, r, res.Scores[r], s)
			}
		}
	}
}

func TestNoSharedTerms(t *testing.T) {
	pool, _ := fixtureTexts(t)
	c := newMemCorpus(pool)
	veni := []string{"veni", "vidi", "vici"} // Caesar; absent from the pool
	for _, p := range allParams() {
		for name, q := range map[string][]Query{
			"none":  nil,
			"empty": {{}},
			"oov":   {{Terms: veni}},
		} {
			res, err := Score(context.Background(), c, q, p)
			if err != nil {
				t.Fatal(err)
			}
			for r := range pool {
				if res.Scores[r] != 0 || res.Best[r] != -1 {
					t.Errorf("%v %s row %d: score %v best %d", p.Method, name, r, res.Scores[r], res.Best[r])
				}
			}
			if res.Work.Postings != 0 || res.Work.Passes != 0 {
				t.Errorf("%s: work %+v", name, res.Work)
			}
			ex, err := Explain(c, q, p, 0, 3)
			if err != nil || ex.Score != 0 || ex.Best != -1 || ex.Parts != nil || ex.Targets != nil {
				t.Errorf("%s: Explain = %+v, %v", name, ex, err)
			}
		}
	}
	// Rows that share nothing with a real target stay at 0 / -1.
	q := []Query{{Terms: pool[6]}} // "call me ishmael"
	res := checkExplainMatches(t, c, q, DefaultParams())
	for r := range pool {
		if (r == 6 || r == 13) != (res.Best[r] == 0) { // row 13 holds "me"
			t.Errorf("row %d: best %d score %v", r, res.Best[r], res.Scores[r])
		}
	}
}

func TestWorkCounts(t *testing.T) {
	pool, targets := fixtureTexts(t)
	c := newMemCorpus(pool)
	var tokens int64
	for _, q := range targets {
		tokens += int64(len(q.Terms))
	}
	// Postings and posting lists of the distinct in-pool terms of each target.
	var perTarget, lists, passes int64
	union := map[string]bool{}
	for _, q := range targets {
		seen := map[string]bool{}
		for _, term := range q.Terms {
			if seen[term] || c.DF(term) == 0 {
				continue
			}
			seen[term] = true
			union[term] = true
			perTarget += int64(c.DF(term))
			lists++
		}
		if len(seen) > 0 {
			passes++
		}
	}
	var unionPostings int64
	for term := range union {
		unionPostings += int64(c.DF(term))
	}
	for _, p := range allParams() {
		res, err := Score(context.Background(), c, targets, p)
		if err != nil {
			t.Fatal(err)
		}
		want := Work{Postings: perTarget, QueryTerms: lists, TargetTokens: tokens, Passes: passes, PostingsFetched: unionPostings}
		if p.Aggregate == Sum {
			want.Postings += unionPostings
			want.QueryTerms += int64(len(union))
			want.Passes++
		}
		if res.Work != want {
			t.Errorf("%v/%v: work %+v, want %+v", p.Method, p.Aggregate, res.Work, want)
		}
	}
}

func TestRepeatsAndOrderIrrelevantForBM25(t *testing.T) {
	pool, targets := fixtureTexts(t)
	c := newMemCorpus(pool)
	q := targets[0]
	shuffled := slices.Clone(q.Terms)
	slices.Reverse(shuffled)
	shuffled = append(shuffled, q.Terms...) // every term twice
	for _, agg := range []Aggregate{Sum, Max} {
		p := DefaultParams()
		p.Aggregate = agg
		a, err := Score(context.Background(), c, []Query{q}, p)
		if err != nil {
			t.Fatal(err)
		}
		b, err := Score(context.Background(), c, []Query{{Terms: shuffled}}, p)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(a.Scores, b.Scores) {
			t.Errorf("%v: binary query changed by repeats or order", agg)
		}
	}
}

func TestCancel(t *testing.T) {
	pool, targets := fixtureTexts(t)
	c := newMemCorpus(pool)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	for _, p := range allParams() {
		if _, err := Score(ctx, c, targets, p); !errors.Is(err, context.Canceled) {
			t.Errorf("%v/%v: error %v, want context.Canceled", p.Method, p.Aggregate, err)
		}
	}
}

// faultyCorpus wraps memCorpus to misbehave in one way.
type faultyCorpus struct {
	*memCorpus
	postErr  error
	extraRow uint32 // appended to every posting list if non-zero
	short    bool   // drop one tf
	badNorm  bool
	badDF    bool
	badAvg   bool
	negLen   bool
}

func (c *faultyCorpus) Postings(term string, rows, tfs []uint32) ([]uint32, []uint32, error) {
	if c.postErr != nil {
		return rows, tfs, c.postErr
	}
	rows, tfs, _ = c.memCorpus.Postings(term, rows, tfs)
	if c.extraRow != 0 {
		rows, tfs = append(rows, c.extraRow), append(tfs, 1)
	}
	if c.short && len(tfs) > 0 {
		tfs = tfs[:len(tfs)-1]
	}
	return rows, tfs, nil
}

func (c *faultyCorpus) RowNorm(row int) float64 {
	if c.badNorm {
		return 0
	}
	return c.memCorpus.RowNorm(row)
}

func (c *faultyCorpus) DF(term string) int {
	if c.badDF {
		return c.n + 1
	}
	return c.memCorpus.DF(term)
}

func (c *faultyCorpus) AvgLen() float64 {
	if c.badAvg {
		return math.NaN()
	}
	return c.avg
}

func (c *faultyCorpus) RowLen(row int) int {
	if c.negLen {
		return -1
	}
	return c.memCorpus.RowLen(row)
}

func TestCorpusErrors(t *testing.T) {
	pool, targets := fixtureTexts(t)
	disk := errors.New("disk on fire")
	for _, tc := range []struct {
		name   string
		c      *faultyCorpus
		want   error
		method Method
	}{
		{"postings error", &faultyCorpus{postErr: disk}, disk, BM25},
		{"row beyond N", &faultyCorpus{extraRow: 1000}, ErrBadCorpus, BM25},
		{"short tfs", &faultyCorpus{short: true}, ErrBadCorpus, TFIDF},
		{"zero norm", &faultyCorpus{badNorm: true}, ErrBadCorpus, TFIDF},
		{"df > N", &faultyCorpus{badDF: true}, ErrBadCorpus, TFIDF},
		{"NaN avglen", &faultyCorpus{badAvg: true}, ErrBadCorpus, BM25},
		{"negative length", &faultyCorpus{negLen: true}, ErrBadCorpus, BM25},
	} {
		tc.c.memCorpus = newMemCorpus(pool)
		for _, agg := range []Aggregate{Sum, Max} {
			p := Params{Method: tc.method, Aggregate: agg, K1: 1.2, B: 0.75}
			if _, err := Score(context.Background(), tc.c, targets, p); !errors.Is(err, tc.want) {
				t.Errorf("%s/%v: Score error %v, want %v", tc.name, agg, err, tc.want)
			}
			if tc.c.extraRow != 0 {
				continue // Explain only looks up its own row
			}
			if _, err := Explain(tc.c, targets, p, 0, 1); !errors.Is(err, tc.want) {
				t.Errorf("%s/%v: Explain error %v, want %v", tc.name, agg, err, tc.want)
			}
		}
	}
}

func TestExplainRowRange(t *testing.T) {
	pool, targets := fixtureTexts(t)
	c := newMemCorpus(pool)
	for _, row := range []int{-1, len(pool)} {
		if _, err := Explain(c, targets, DefaultParams(), row, 1); !errors.Is(err, ErrRowRange) {
			t.Errorf("row %d: error %v, want ErrRowRange", row, err)
		}
	}
	ex, err := Explain(c, targets, DefaultParams(), 0, 2)
	if err != nil {
		t.Fatal(err)
	}
	if len(ex.Targets) != 2 {
		t.Errorf("topTargets 2 gave %d", len(ex.Targets))
	}
	ex, err = Explain(c, targets, DefaultParams(), 0, 0)
	if err != nil || ex.Targets != nil || ex.Best < 0 {
		t.Errorf("topTargets 0: %+v, %v", ex, err)
	}
}

// FuzzScore builds a small corpus and target set from the input (tokens are
// single bytes, rows split at '|', pool and targets split at '#') and checks
// Explain against Score bit for bit and Score against a direct evaluation of
// the formulas.
func FuzzScore(f *testing.F) {
	f.Add([]byte("abca|bb|cdd|a#ab|dd|zz"), uint8(0))
	f.Add([]byte("aaaa|b||c#a#b|b"), uint8(3))
	f.Add([]byte("#"), uint8(1))
	f.Fuzz(func(t *testing.T, data []byte, mode uint8) {
		if len(data) > 200 {
			return
		}
		poolPart, targetPart, _ := strings.Cut(string(data), "#")
		split := func(s string) [][]string {
			var out [][]string
			for _, row := range strings.Split(s, "|") {
				var toks []string
				for i := 0; i < len(row); i++ {
					toks = append(toks, row[i:i+1])
				}
				out = append(out, toks)
			}
			return out
		}
		pool := split(poolPart)
		c := newMemCorpus(pool)
		q := queriesOf(split(targetPart)...)
		p := allParams()[mode%4]
		p.K1 = float64(mode%7) * 0.4
		p.B = float64(mode%5) * 0.25
		res := checkExplainMatches(t, c, q, p)
		for r, doc := range pool {
			want := naiveScore(c, doc, q, p)
			if !closeRel(res.Scores[r], want, 1e-12) {
				t.Fatalf("row %d: %v, naive %v", r, res.Scores[r], want)
			}
		}
	})
}

// naiveScore evaluates the documented formulas directly with maps.
func naiveScore(c *memCorpus, doc []string, q []Query, p Params) float64 {
	tf := map[string]int{}
	for _, t := range doc {
		tf[t]++
	}
	n := c.NumRows()
	per := make([]float64, len(q))
	for j, qq := range q {
		if p.Method == BM25 {
			seen := map[string]bool{}
			for _, t := range qq.Terms {
				if seen[t] || tf[t] == 0 {
					continue
				}
				seen[t] = true
				k := p.K1 * (1 - p.B + p.B*float64(len(doc))/c.AvgLen())
				idf := math.Log(1 + (float64(n-c.DF(t))+0.5)/(float64(c.DF(t))+0.5))
				per[j] += idf * float64(tf[t]) * (p.K1 + 1) / (float64(tf[t]) + k)
			}
			continue
		}
		qtf := map[string]int{}
		for _, t := range qq.Terms {
			if c.DF(t) > 0 {
				qtf[t]++
			}
		}
		var dot, qn, dn float64
		for t, x := range qtf {
			idf := math.Log(float64(1+n)/float64(1+c.DF(t))) + 1
			qn += float64(x*x) * idf * idf
			dot += float64(x*tf[t]) * idf * idf
		}
		for t, x := range tf {
			idf := math.Log(float64(1+n)/float64(1+c.DF(t))) + 1
			dn += float64(x*x) * idf * idf
		}
		if qn > 0 && dn > 0 {
			per[j] = dot / math.Sqrt(qn*dn)
		}
	}
	var s float64
	for _, x := range per {
		if p.Aggregate == Max {
			s = max(s, x)
		} else {
			s += x
		}
	}
	if p.Aggregate == Sum && p.Method == TFIDF && len(q) > 0 {
		s /= float64(len(q))
	}
	return s
}

// The property checked is internal (results independent of scheduling and
// caching), so no reference values are involved.
func TestWorkersAndCacheDoNotChangeResult(t *testing.T) {
	pool, targets := fixtureTexts(t)
	c := newMemCorpus(pool)
	// Enough targets for uneven blocks, with repeats so that ties occur.
	q := slices.Concat(targets, targets[:3], targets)
	for _, p := range allParams() {
		var want *Result
		for _, tc := range []struct {
			workers int
			cache   int64
		}{{1, 0}, {2, 0}, {3, 0}, {len(q) + 5, 0}, {1, -1}, {2, 40}, {3, 1}} {
			p.Workers, p.CacheBytes = tc.workers, tc.cache
			res, err := Score(context.Background(), c, q, p)
			if err != nil {
				t.Fatal(err)
			}
			fetched := res.Work.PostingsFetched
			res.Work.PostingsFetched = 0 // the one count that depends on the cache
			if want == nil {
				want = res
				continue
			}
			name := fmt.Sprintf("%v/%v workers %d cache %d", p.Method, p.Aggregate, tc.workers, tc.cache)
			if !slices.EqualFunc(res.Scores, want.Scores, func(a, b float64) bool { return math.Float64bits(a) == math.Float64bits(b) }) {
				t.Errorf("%s: scores differ", name)
			}
			if !slices.Equal(res.Best, want.Best) {
				t.Errorf("%s: best differs", name)
			}
			if res.Work != want.Work {
				t.Errorf("%s: work %+v, want %+v", name, res.Work, want.Work)
			}
			if tc.cache != 0 && fetched <= res.Work.Postings/int64(len(q)) {
				t.Errorf("%s: fetched %d postings, want lists read again", name, fetched)
			}
		}
	}
}

// A cache bound too small for most lists forces them to be read again on
// every pass; Explain must still agree bit for bit.
func TestExplainMatchesScoreTinyCache(t *testing.T) {
	pool, targets := fixtureTexts(t)
	c := newMemCorpus(pool)
	for _, p := range allParams() {
		p.CacheBytes, p.Workers = 64, 2
		t.Run(p.Method.String()+"/"+p.Aggregate.String(), func(t *testing.T) {
			res := checkExplainMatches(t, c, targets, p)
			var union int64
			seen := map[string]bool{}
			for _, qq := range targets {
				for _, term := range qq.Terms {
					if !seen[term] {
						seen[term] = true
						union += int64(c.DF(term))
					}
				}
			}
			if res.Work.PostingsFetched <= union {
				t.Errorf("fetched %d postings, union of lists %d: nothing was read again", res.Work.PostingsFetched, union)
			}
		})
	}
}

// countingCorpus cancels a context after a number of posting list reads.
type countingCorpus struct {
	*memCorpus
	left   int
	cancel context.CancelFunc
}

func (c *countingCorpus) Postings(term string, rows, tfs []uint32) ([]uint32, []uint32, error) {
	if c.left--; c.left == 0 {
		c.cancel()
	}
	return c.memCorpus.Postings(term, rows, tfs)
}

func TestCancelDuringPasses(t *testing.T) {
	pool, targets := fixtureTexts(t)
	for _, p := range allParams() {
		for _, cache := range []int64{0, -1} {
			ctx, cancel := context.WithCancel(context.Background())
			c := &countingCorpus{memCorpus: newMemCorpus(pool), left: 3, cancel: cancel}
			if cache < 0 {
				c.left = 80 // past the first reading of every term
			}
			p.CacheBytes = cache
			if _, err := Score(ctx, c, targets, p); !errors.Is(err, context.Canceled) {
				t.Errorf("%v/%v cache %d: error %v, want context.Canceled", p.Method, p.Aggregate, cache, err)
			}
			cancel()
		}
	}
}

// TestSkipBest checks that skipping Best in Sum mode leaves every score bit-identical and does less
// work, over kept lists and over cursors (an index's way, which takes another path), the work
// counted the same on both; and that it is refused where it would change nothing (Max finds Best
// for free).
func TestSkipBest(t *testing.T) {
	pool, targets := fixtureTexts(t)
	mem := newMemCorpus(pool)
	for _, m := range []Method{BM25, TFIDF} {
		var works []Work
		for _, c := range []Corpus{mem, cursorsOver{mem}} {
			p := DefaultParams()
			p.Method = m
			full, err := Score(context.Background(), c, targets, p)
			if err != nil {
				t.Fatal(err)
			}
			p.SkipBest = true
			quick, err := Score(context.Background(), c, targets, p)
			if err != nil {
				t.Fatal(err)
			}
			name := fmt.Sprintf("%v over %T", m, c)
			if quick.Best != nil {
				t.Errorf("%s: Best not nil with SkipBest", name)
			}
			if !slices.EqualFunc(quick.Scores, full.Scores, func(a, b float64) bool { return math.Float64bits(a) == math.Float64bits(b) }) {
				t.Errorf("%s: scores differ with SkipBest", name)
			}
			if quick.Work.Postings >= full.Work.Postings {
				t.Errorf("%s: SkipBest visited %d postings, full %d", name, quick.Work.Postings, full.Work.Postings)
			}
			works = append(works, quick.Work)
			p.Aggregate = Max
			if _, err := Score(context.Background(), c, targets, p); !errors.Is(err, ErrInvalidParams) {
				t.Errorf("%s: SkipBest with Max: %v, want ErrInvalidParams", name, err)
			}
		}
		if works[0] != works[1] {
			t.Errorf("%v: SkipBest's work over kept lists %+v, over cursors %+v", m, works[0], works[1])
		}
	}
}

// cursorsOver hands out any Corpus's lists through cursors, as an index does.
type cursorsOver struct{ Corpus }

func (c cursorsOver) Cursor(term string) (PostingCursor, error) {
	rows, tfs, err := c.Postings(term, nil, nil)
	return &sliceCursor{rows: rows, tfs: tfs}, err
}
