package run

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
	"sluice/cmd/sluice/demodata"
	"sluice/index"
	"sluice/index/atomicdir"
	"sluice/score"
)

// demo writes the built-in demo pool and target into a new folder and indexes the pool.
func demo(t *testing.T) (dir, idx, target string) {
	t.Helper()
	dir = t.TempDir()
	pool, target := filepath.Join(dir, "pool.jsonl"), filepath.Join(dir, "target.jsonl")
	if err := os.WriteFile(pool, demodata.Pool(), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(target, demodata.Target(), 0o644); err != nil {
		t.Fatal(err)
	}
	idx = filepath.Join(dir, "idx")
	if _, err := index.Build(context.Background(), idx, []string{pool}, index.Options{ID: "id"}); err != nil {
		t.Fatal(err)
	}
	return dir, idx, target
}

func demoOptions(idx, target, out string) Options {
	return Options{Index: idx, Target: target, Params: score.DefaultParams(), Budget: 6e12, BudgetHow: "test",
		TrainParams: 125e6, Epochs: 1, Out: out, Version: "test"}
}

// TestPickWithoutMain runs the pick pipeline as another Go program would, and reads the run back
// through this package: the manifest verifies, scores.jsonl has a line per row, kept.jsonl holds
// the kept rows' bytes, and the ledger stays within the budget.
func TestPickWithoutMain(t *testing.T) {
	dir, idx, target := demo(t)
	out := filepath.Join(dir, "run")
	res, err := Pick(context.Background(), demoOptions(idx, target, out))
	if err != nil {
		t.Fatal(err)
	}
	m, err := ReadManifest(out)
	if err != nil {
		t.Fatal(err)
	}
	if bad := Verify(out, m); len(bad) > 0 {
		t.Errorf("a fresh run does not verify: %v", bad)
	}
	var rows, kept int
	if err := EachScore(out, func(s Score) error {
		if s.Row != rows {
			t.Errorf("line %d read as row %d", rows+1, s.Row)
		}
		rows++
		if s.Kept {
			kept++
		}
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	if rows != res.Rows || kept != len(res.Kept) || kept == 0 {
		t.Errorf("scores.jsonl: %d rows, %d kept; the pick said %d rows, %d kept", rows, kept, res.Rows, len(res.Kept))
	}
	pool := bytes.SplitAfter(demodata.Pool(), []byte("\n"))
	var want bytes.Buffer
	for _, r := range res.Kept {
		want.Write(pool[r]) // the demo pool has no blank or quarantined lines, so rows are lines
	}
	got, err := os.ReadFile(filepath.Join(out, KeptName("none")))
	if err != nil || !bytes.Equal(got, want.Bytes()) {
		t.Errorf("kept.jsonl is not the kept rows byte for byte (%v)", err)
	}
	l, err := ReadLedger(out)
	if err != nil {
		t.Fatal(err)
	}
	if l.Total > l.Budget || l.Total != res.Ledger.Total() {
		t.Errorf("ledger total %v, budget %v, pick's total %v", l.Total, l.Budget, res.Ledger.Total())
	}
}

// TestCheckOut: a run folder replaces only nothing, an empty folder or an earlier run holding
// nothing else, and never an input of the pick nor a folder inside an index or a run. Each refused
// case destroyed a user's file before.
func TestCheckOut(t *testing.T) {
	dir, idx, target := demo(t)
	earlier := filepath.Join(dir, "earlier")
	if _, err := Pick(context.Background(), demoOptions(idx, target, earlier)); err != nil {
		t.Fatal(err)
	}
	mk := func(name string, files ...string) string {
		p := filepath.Join(dir, name)
		os.MkdirAll(p, 0o755)
		for _, f := range files {
			os.WriteFile(filepath.Join(p, f), []byte("mine\n"), 0o644)
		}
		return p
	}
	copyRun := func(name string, extra ...string) string {
		p := mk(name)
		entries, _ := os.ReadDir(earlier)
		for _, e := range entries {
			b, _ := os.ReadFile(filepath.Join(earlier, e.Name()))
			os.WriteFile(filepath.Join(p, e.Name()), b, 0o644)
		}
		for _, f := range extra {
			os.WriteFile(filepath.Join(p, f), []byte("mine\n"), 0o644)
		}
		return p
	}
	withIdx := copyRun("with-idx")
	if err := os.CopyFS(filepath.Join(withIdx, "idx"), os.DirFS(idx)); err != nil {
		t.Fatal(err)
	}
	os.Symlink(earlier, filepath.Join(dir, "link"))
	other := filepath.Join(dir, "other-idx")
	if err := os.CopyFS(other, os.DirFS(idx)); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name, out, target, index string
		want                     string // "" for allowed
	}{
		{"nothing there", filepath.Join(dir, "new"), target, idx, ""},
		{"empty folder", mk("empty"), target, idx, ""},
		{"earlier run", earlier, target, idx, ""},
		{"a file named ledger.json beside a thesis", mk("thesis", "ledger.json", "thesis.pdf"), target, idx, "thesis.pdf"},
		{"a run with a user's notes", copyRun("noted", "notes.txt"), target, idx, "notes.txt"},
		{"the index it reads is inside", withIdx, target, filepath.Join(withIdx, "idx"), "input"},
		{"its own target is inside", copyRun("self"), filepath.Join(dir, "self", "kept.jsonl"), idx, "input"},
		{"inside the index it reads", filepath.Join(idx, "run"), target, idx, "index folder"},
		{"inside another index", filepath.Join(other, "run"), target, idx, "index folder"},
		{"inside a run", filepath.Join(earlier, "run"), target, idx, "run folder"},
		{"the index itself", idx, target, idx, "input"},
		{"a symbolic link", filepath.Join(dir, "link"), target, idx, "symbolic link"},
		{"dot", ".", target, idx, "not ."},
	} {
		t.Run(tc.name, func(t *testing.T) {
			before := listing(t, tc.out)
			err := CheckOut(Options{Index: tc.index, Target: tc.target, Out: tc.out})
			switch {
			case tc.want == "" && err != nil:
				t.Errorf("refused: %v", err)
			case tc.want != "" && (err == nil || !strings.Contains(err.Error(), tc.want)):
				t.Errorf("got %v, want an error naming %q", err, tc.want)
			}
			if after := listing(t, tc.out); after != before {
				t.Errorf("the folder changed: %s -> %s", before, after)
			}
		})
	}
	// A folder that is an index, not a run, is called what it is.
	err := CheckOut(Options{Index: idx, Target: target, Out: other})
	if !errors.Is(err, atomicdir.ErrOtherKind) || !strings.Contains(err.Error(), "an index made by sluice, not a run") {
		t.Errorf("pick --out INDEX: %v", err)
	}
}

func listing(t *testing.T, dir string) string {
	entries, _ := os.ReadDir(dir)
	var b strings.Builder
	for _, e := range entries {
		b.WriteString(e.Name() + " ")
	}
	return b.String()
}

// TestLedgerNeverPassesItsBudget picks at budgets that sit exactly where row costs added one by one
// reach them: before, the fit test added costs row by row while the ledger multiplied the kept
// tokens, and the two disagreed in the last bits, leaving ledgers over budget by a rounding.
func TestLedgerNeverPassesItsBudget(t *testing.T) {
	dir, idx, target := demo(t)
	opt := demoOptions(idx, target, filepath.Join(dir, "all"))
	opt.Budget, opt.TrainParams, opt.Epochs = 1e18, 1.37e9, 1.1 // 1.1 is no binary fraction, so products round
	res, err := Pick(context.Background(), opt)
	if err != nil {
		t.Fatal(err)
	}
	type ranked struct{ rank, tokens int }
	var rows []ranked
	EachScore(opt.Out, func(s Score) error {
		if s.Kept {
			rows = append(rows, ranked{s.Rank, int(s.Tokens)})
		}
		return nil
	})
	slices.SortFunc(rows, func(a, b ranked) int { return a.rank - b.rank })
	fixed := res.Ledger.Selection()
	b := fixed
	for k, r := range rows[:min(len(rows), 40)] {
		b += budget.TrainFLOPs(opt.TrainParams, float64(r.tokens), opt.Epochs)
		o := opt
		o.Budget, o.Out = b, filepath.Join(dir, "k")
		res, err := Pick(context.Background(), o)
		if err != nil {
			t.Fatal(err)
		}
		l, _ := ReadLedger(o.Out)
		if l.Total > l.Budget || res.Ledger.Total() > b || l.Left < 0 {
			t.Fatalf("budget at the %d-th row: ledger total %v over budget %v", k+1, l.Total, l.Budget)
		}
	}
}
