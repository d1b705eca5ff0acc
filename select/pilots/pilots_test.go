package pilots

import (
	"bytes"
	"context"
	"errors"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"sluice/budget"
	"sluice/budget/plan"
	"sluice/cmd/sluice/demodata"
	"sluice/index"
	"sluice/score"
	"sluice/select/run"
)

// demo writes the built-in demo files into a new folder and indexes the pool.
func demo(t *testing.T) (dir, idx, target string) {
	t.Helper()
	dir = t.TempDir()
	pool, target, err := demodata.WriteFiles(filepath.Join(dir, "demo"))
	if err != nil {
		t.Fatal(err)
	}
	idx = filepath.Join(dir, "idx")
	if _, err := index.Build(context.Background(), idx, []string{pool}, index.Options{ID: "id"}); err != nil {
		t.Fatal(err)
	}
	return dir, idx, target
}

func pickOptions(idx, target string) run.Options {
	return run.Options{Index: idx, Target: target, Params: score.DefaultParams(), Epochs: 1, Version: "test",
		Ngram: run.NgramOptions{Order: run.DefaultNgramOrder, Seed: 1}}
}

// Each method's subsets nest (every smaller one is the top of the larger), each is what a pick
// with --max-tokens at its size keeps, byte for byte, and the pilots file charges each method's
// selection once, the same figure on every line, with 6·N·D for training (common practice).
func TestPilotsNestAndChargeOnce(t *testing.T) {
	dir, idx, target := demo(t)
	out := filepath.Join(dir, "pilots")
	pool, err := run.PoolTokens(idx)
	if err != nil {
		t.Fatal(err)
	}
	sizes := Ladder(pool/50, pool/4, 4)
	opt := Options{Pick: pickOptions(idx, target), Methods: []string{"bm25", "ngram"}, Sizes: sizes,
		Trained: []float64{125e6, 350e6}, Out: out}
	res, err := Make(context.Background(), opt)
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Subsets) != 2*len(sizes) {
		t.Fatalf("%d subsets, want %d", len(res.Subsets), 2*len(sizes))
	}
	for i, s := range res.Subsets {
		b, err := os.ReadFile(filepath.Join(out, s.File))
		if err != nil {
			t.Fatal(err)
		}
		lines := bytes.SplitAfter(b, []byte("\n"))
		lines = lines[:len(lines)-1]
		if len(lines) != s.Rows || s.Rows == 0 || float64(s.Tokens) > s.Size {
			t.Errorf("%s: %d lines, %d rows, %d tokens for %g", s.File, len(lines), s.Rows, s.Tokens, s.Size)
		}
		if i > 0 && res.Subsets[i-1].Method == s.Method {
			prev, _ := os.ReadFile(filepath.Join(out, res.Subsets[i-1].File))
			for _, l := range bytes.SplitAfter(prev, []byte("\n")) {
				if len(l) > 0 && !slices.ContainsFunc(lines, func(m []byte) bool { return bytes.Equal(l, m) }) {
					t.Errorf("%s holds a row that %s does not", res.Subsets[i-1].File, s.File)
					break
				}
			}
		}
		// The same rows as a pick stopped at this size.
		po := opt.Pick
		po.Method, po.Out, po.Budget, po.BudgetHow, po.TrainParams = s.Method, filepath.Join(dir, "one"), 1e30, "test", 350e6
		po.Select.MaxCount = s.Size
		os.RemoveAll(po.Out)
		if _, err := run.Pick(context.Background(), po); err != nil {
			t.Fatal(err)
		}
		if one, _ := os.ReadFile(filepath.Join(po.Out, run.KeptName("none"))); !bytes.Equal(one, b) {
			t.Errorf("%s differs from pick --max-tokens %g", s.File, s.Size)
		}
	}
	f, err := os.Open(filepath.Join(out, File))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	raw, _ := os.ReadFile(filepath.Join(out, File))
	if _, err := plan.ReadPilots(bytes.NewReader(raw), File); err == nil || !strings.Contains(err.Error(), "fill in") {
		t.Errorf("unfilled pilots read as %v, want a request to fill in the metric", err)
	}
	filled := strings.ReplaceAll(string(raw), ",\n", ",0.5\n")
	ps, err := plan.ReadPilots(strings.NewReader(filled), File)
	if err != nil {
		t.Fatal(err)
	}
	if len(ps) != 2*2*len(sizes) {
		t.Fatalf("%d pilot lines, want %d", len(ps), 4*len(sizes))
	}
	for _, m := range opt.Methods {
		l, err := run.ReadLedger(filepath.Join(out, m+".run"))
		if err != nil {
			t.Fatal(err)
		}
		if res.Selection[m] != l.Selection || l.Selection == 0 {
			t.Errorf("%s: selection %g, its run's ledger %g", m, res.Selection[m], l.Selection)
		}
		for _, p := range ps {
			if p.Method == m && relDiff(p.FlopsPerPoolToken*pool, l.Selection) > 1e-5 {
				t.Errorf("%s: %g FLOPs per pool token × %g tokens is not the selection charged once, %g", m, p.FlopsPerPoolToken, pool, l.Selection)
			}
		}
	}
	lines := strings.Split(string(raw), "\n")
	for _, ln := range lines {
		fs := strings.Split(ln, ",")
		if len(fs) != 11 || fs[0] == "method" {
			continue
		}
		var n, tok, tr float64
		n, _ = budget.ParseCount(fs[4])
		tok, _ = budget.ParseCount(fs[5])
		tr, _ = budget.ParseFLOPs(fs[9])
		if relDiff(tr, 6*n*tok) > 1e-5 {
			t.Errorf("training %g FLOPs for %g params × %g tokens, want 6·N·D = %g", tr, n, tok, 6*n*tok)
		}
	}
}

func relDiff(a, b float64) float64 {
	if a == b {
		return 0
	}
	return abs(a-b) / max(abs(a), abs(b))
}

func abs(v float64) float64 {
	if v < 0 {
		return -v
	}
	return v
}

func TestPilotsRefuse(t *testing.T) {
	dir, idx, target := demo(t)
	base := Options{Pick: pickOptions(idx, target), Methods: []string{"bm25"}, Sizes: []float64{1000}, Trained: []float64{1e8}, Out: filepath.Join(dir, "p")}
	for name, mod := range map[string]func(o *Options){
		"twice":     func(o *Options) { o.Methods = []string{"bm25", "bm25"} },
		"unknown":   func(o *Options) { o.Methods = []string{"magic"} },
		"no sizes":  func(o *Options) { o.Sizes = nil },
		"stdin":     func(o *Options) { o.Pick.Target = "-" },
		"fill":      func(o *Options) { o.Pick.Select.Fill = true },
		"max-share": func(o *Options) { o.Pick.Guards.MaxShare = map[string]float64{"": 0.3} },
		"zero":      func(o *Options) { o.Trained = []float64{0} },
	} {
		o := base
		mod(&o)
		if _, err := Make(context.Background(), o); !errors.Is(err, ErrBadOptions) {
			t.Errorf("%s: %v, want ErrBadOptions", name, err)
		}
	}
	// An output folder holding the target is refused before any work.
	o := base
	o.Out = dir
	if _, err := Make(context.Background(), o); err == nil {
		t.Error("pilots into the folder of its inputs: no error")
	}
}

func TestLadder(t *testing.T) {
	for _, c := range []struct {
		lo, hi float64
		n      int
		want   []float64
	}{
		{1e6, 1e8, 3, []float64{1e6, 1e7, 1e8}},
		{1e6, 1e9, 4, []float64{1e6, 1e7, 1e8, 1e9}},
		{3e6, 3e8, 5, []float64{3e6, 9.5e6, 3e7, 9.5e7, 3e8}},
		{5, 5, 3, []float64{5}},
	} {
		got := Ladder(c.lo, c.hi, c.n)
		if len(got) != len(c.want) {
			t.Errorf("Ladder(%g, %g, %d) = %v, want %v", c.lo, c.hi, c.n, got, c.want)
			continue
		}
		for i := range got {
			if relDiff(got[i], c.want[i]) > 1e-12 {
				t.Errorf("Ladder(%g, %g, %d) = %v, want %v", c.lo, c.hi, c.n, got, c.want)
			}
		}
	}
}

// ParseSizes takes any string without a panic, and whatever it returns is a usable size list.
func FuzzParseSizes(f *testing.F) {
	for _, s := range []string{"", "1M,3M,10M", "1M:100M:5", "1:2:2", "0", "-1", "1e400", "5:1:3", "1M:2M:999", ",", "::"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		sizes, err := ParseSizes(s, func() (float64, error) { return 1e6, nil })
		if err != nil {
			return
		}
		if len(sizes) == 0 {
			t.Fatalf("%q: no sizes and no error", s)
		}
		for _, v := range sizes {
			if !(v > 0) {
				t.Fatalf("%q: size %v", s, v)
			}
		}
	})
}

// A pilots folder is replaced only while it holds nothing but what Make wrote: a file a user put
// beside the subsets makes it not sluice's to replace.
func TestPilotsReplaceOnlyTheirOwn(t *testing.T) {
	dir, idx, target := demo(t)
	out := filepath.Join(dir, "pilots")
	opt := Options{Pick: pickOptions(idx, target), Methods: []string{"bm25"}, Sizes: []float64{500, 2000}, Trained: []float64{1e8}, Out: out}
	if _, err := Make(context.Background(), opt); err != nil {
		t.Fatal(err)
	}
	if _, err := Make(context.Background(), opt); err != nil {
		t.Fatalf("replacing its own pilots: %v", err)
	}
	notes := filepath.Join(out, "notes.jsonl")
	if err := os.WriteFile(notes, []byte("{}\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := Make(context.Background(), opt); err == nil {
		t.Error("replaced a pilots folder holding a user's notes.jsonl")
	}
	if _, err := os.Stat(notes); err != nil {
		t.Errorf("the user's file is gone: %v", err)
	}
}
