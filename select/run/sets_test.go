package run

import (
	"bytes"
	"context"
	"errors"
	"math"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"sluice/budget"
	"sluice/cmd/sluice/demodata"
	"sluice/index"
	selection "sluice/select"
)

// demoSecondSet writes a second target set for the demo: the pool's first n rows on the weather,
// so that its rows stand in the pool too (the demo data is invented; the checks below compare a
// pick for two sets with picks for each set alone, whose scores the score package checks against
// its references).
func demoSecondSet(t *testing.T, dir string, n int) string {
	t.Helper()
	var b []byte
	for _, line := range bytes.SplitAfter(demodata.Pool(), []byte("\n")) {
		if bytes.Contains(line, []byte(`"topic":"weather"`)) && n > 0 {
			b, n = append(b, line...), n-1
		}
	}
	path := filepath.Join(dir, "weather.jsonl")
	if err := os.WriteFile(path, b, 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// TestSeveralSetsMatchSingle checks a pick for two target sets, weighted 70/30, against a pick for
// each set alone with the same options: every row's line names a set, and its score (to the bit),
// rank and best target row are that single pick's; each set spends within its share and the
// shares are the stated arithmetic; no row is kept twice, nor two rows of a cluster; and the run
// verifies.
func TestSeveralSetsMatchSingle(t *testing.T) {
	dir, idx, target := demo(t)
	weather := demoSecondSet(t, dir, 12)
	eval := filepath.Join(dir, "eval.jsonl")
	if err := os.WriteFile(eval, demodata.Eval(), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, fill := range []bool{false, true} {
		base := demoOptions(idx, target, "")
		base.Guards.Exclude, base.Select.Fill = []string{eval}, fill
		two := base
		two.Out, two.ExtraTargets, two.Weights = filepath.Join(dir, "two"), []string{weather}, []float64{0.7, 0.3}
		res, err := Pick(context.Background(), two)
		if err != nil {
			t.Fatal(err)
		}
		single := map[string][]Score{}
		for name, path := range map[string]string{"target": target, "weather": weather} {
			o := base
			o.Target, o.Out = path, filepath.Join(dir, name)
			if _, err := Pick(context.Background(), o); err != nil {
				t.Fatal(err)
			}
			if err := EachScore(o.Out, func(s Score) error { single[name] = append(single[name], s); return nil }); err != nil {
				t.Fatal(err)
			}
		}
		ix, err := index.Open(idx)
		if err != nil {
			t.Fatal(err)
		}
		clusters := map[int]int{} // by the first row of a cluster, its kept row
		kept := map[string]int64{}
		var rows int
		if err := EachScore(two.Out, func(s Score) error {
			rows++
			one := single[s.Set]
			if one == nil {
				t.Fatalf("row %s: set %q is not a set of the pick", s.ID, s.Set)
			}
			o := one[s.Row]
			if math.Float64bits(o.Score) != math.Float64bits(s.Score) || o.Rank != s.Rank || *o.Target != *s.Target {
				t.Errorf("row %s against set %s: score %v rank %d target %s; alone %v, %d, %s", s.ID, s.Set, s.Score, s.Rank, *s.Target, o.Score, o.Rank, *o.Target)
			}
			if s.Reason == "contaminated" && o.Reason != "contaminated" {
				t.Errorf("row %s: contaminated in the pick for two sets, not alone", s.ID)
			}
			if s.Kept {
				kept[s.Set] += s.Tokens
				first, _ := ix.DupFirst(s.Row)
				if k, ok := clusters[first]; ok {
					t.Errorf("rows %d and %d of one cluster both kept", k, s.Row)
				}
				clusters[first] = s.Row
			}
			return nil
		}); err != nil {
			t.Fatal(err)
		}
		ix.Close()
		if rows != res.Rows || len(res.Sets) != 2 || len(kept) != 2 {
			t.Fatalf("%d lines, %d sets, kept for %d sets", rows, len(res.Sets), len(kept))
		}
		l := res.Ledger
		unit := budget.TrainFLOPs(base.TrainParams, 1, base.Epochs)
		training := (base.Budget - l.Selection()) / unit
		var spent int64
		for _, s := range res.Sets {
			if want := math.Floor(s.Weight * training); s.Share != want {
				t.Errorf("set %s: share %v tokens, want floor(%v x %v) = %v", s.Name, s.Share, s.Weight, training, want)
			}
			if s.KeptTokens != kept[s.Name] || float64(s.KeptTokens) > s.Share+s.Given-s.Returned {
				t.Errorf("set %s: kept %d tokens (scores.jsonl says %d) of a share of %v + %v - %v", s.Name, s.KeptTokens, kept[s.Name], s.Share, s.Given, s.Returned)
			}
			spent += s.KeptTokens
		}
		if spent != res.KeptTokens || l.Total() > l.Budget {
			t.Errorf("the sets kept %d tokens, the pick %d; ledger %v of %v", spent, res.KeptTokens, l.Total(), l.Budget)
		}
		m, err := ReadManifest(two.Out)
		if err != nil {
			t.Fatal(err)
		}
		if bad := Verify(two.Out, m); len(bad) > 0 || len(m.Sets) != 2 || m.Sets[1].Path != weather {
			t.Errorf("manifest sets %+v; verify: %v", m.Sets, bad)
		}
	}
}

func TestParseWeights(t *testing.T) {
	for _, tc := range []struct {
		s    string
		n    int
		want []float64
		ok   bool
	}{
		{"", 1, nil, true},
		{"", 2, []float64{0.5, 0.5}, true},
		{"", 4, []float64{0.25, 0.25, 0.25, 0.25}, true},
		{"0.7,0.3", 2, []float64{0.7, 0.3}, true},
		{"7,3", 2, []float64{0.7, 0.3}, true},
		{"1, 1, 2", 3, []float64{0.25, 0.25, 0.5}, true},
		{"1", 1, nil, false},      // one set has no weights
		{"0.7", 2, nil, false},    // too few
		{"1,1,1", 2, nil, false},  // too many
		{"0.7,0", 2, nil, false},  // zero
		{"0.7,-1", 2, nil, false}, // below zero
		{"a,1", 2, nil, false},
		{"NaN,1", 2, nil, false},
		{"Inf,1", 2, nil, false},
		{"1e308,1e308", 2, nil, false}, // the sum overflows
		{"0.7,,0.3", 3, nil, false},
	} {
		got, err := ParseWeights(tc.s, tc.n)
		if (err == nil) != tc.ok || (err != nil && !errors.Is(err, ErrSets)) {
			t.Errorf("ParseWeights(%q, %d): error %v", tc.s, tc.n, err)
			continue
		}
		if !slices.EqualFunc(got, tc.want, func(a, b float64) bool { return math.Abs(a-b) < 1e-15 }) {
			t.Errorf("ParseWeights(%q, %d) = %v, want %v", tc.s, tc.n, got, tc.want)
		}
	}
}

func TestCheckSets(t *testing.T) {
	two := func(f func(o *Options)) Options {
		o := Options{Target: "a.jsonl", ExtraTargets: []string{"b.jsonl"}}
		f(&o)
		return o
	}
	for name, tc := range map[string]struct {
		opt Options
		ok  bool
	}{
		"two sets":            {two(func(*Options) {}), true},
		"one set":             {Options{Target: "a.jsonl"}, true},
		"weights for one set": {Options{Target: "a.jsonl", Weights: []float64{1}}, false},
		"too few weights":     {two(func(o *Options) { o.Weights = []float64{1} }), false},
		"ngram":               {two(func(o *Options) { o.Method = MethodNgram }), false},
		"vectors":             {two(func(o *Options) { o.Method = MethodVectors }), false},
		"scores":              {two(func(o *Options) { o.Method = MethodScores }), false},
		"tfidf":               {two(func(o *Options) { o.Method = MethodTFIDF }), true},
		"prefilter":           {two(func(o *Options) { o.Prefilter.Share = 0.2 }), false},
		"max rows":            {two(func(o *Options) { o.Select.MaxRows = 3 }), false},
		"max tokens":          {two(func(o *Options) { o.Select.MaxCount = 3 }), false},
		"stdin":               {two(func(o *Options) { o.ExtraTargets = []string{"-"} }), false},
		"too many sets":       {two(func(o *Options) { o.ExtraTargets = make([]string, selection.MaxSets) }), false},
	} {
		if err := CheckSets(tc.opt); (err == nil) != tc.ok || (err != nil && !errors.Is(err, ErrSets)) {
			t.Errorf("%s: %v", name, err)
		}
	}
}

func TestSetNames(t *testing.T) {
	for _, tc := range []struct{ paths, want []string }{
		{[]string{"a/support.jsonl", "b/faq.jsonl.gz"}, []string{"support", "faq"}},
		{[]string{"a/tasks.jsonl", "b/tasks.jsonl"}, []string{"1", "2"}},
		{[]string{"x.zst", "y"}, []string{"x", "y"}},
	} {
		if got := SetNames(tc.paths); !slices.Equal(got, tc.want) {
			t.Errorf("SetNames(%q) = %q, want %q", tc.paths, got, tc.want)
		}
	}
}
