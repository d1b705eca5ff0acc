package run

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"sluice/budget"
	"sluice/index"
	"sluice/score"
	selection "sluice/select"
)

// ledgerLine finds a run's ledger line by what it says.
func ledgerLine(t *testing.T, l *Ledger, prefix string) budget.Line {
	t.Helper()
	for _, line := range l.Lines {
		if strings.HasPrefix(line.What, prefix) || strings.Contains(line.What, prefix) {
			return line
		}
	}
	t.Fatalf("no ledger line %q in %+v", prefix, l.Lines)
	return budget.Line{}
}

// TestNgramPick: an n-gram pick runs end to end, verifies, scores every row with a finite number
// and charges its stages; the scores are the cross-entropy difference of the rows' terms.
func TestNgramPick(t *testing.T) {
	dir, idx, target := demo(t)
	out := filepath.Join(dir, "ngram")
	opt := demoOptions(idx, target, out)
	opt.Method, opt.Ngram = MethodNgram, NgramOptions{Order: 3, Seed: 7}
	res, err := Pick(context.Background(), opt)
	if err != nil {
		t.Fatal(err)
	}
	m, err := ReadManifest(out)
	if err != nil {
		t.Fatal(err)
	}
	if bad := Verify(out, m); len(bad) > 0 {
		t.Error(bad)
	}
	if m.Settings.Ngram == nil || m.Settings.Ngram.Order != 3 || !m.Settings.NoScoreFloor || m.Settings.MethodName() != "ngram-3" {
		t.Errorf("settings %+v", m.Settings)
	}
	ix, err := index.Open(idx)
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	var total int64
	for r := 0; r < ix.NumRows(); r++ {
		total += int64(ix.RowLen(r))
	}
	l, _ := ReadLedger(out)
	if got := ledgerLine(t, l, "read and analyse 753 pool rows again").Count; got != float64(total) {
		t.Errorf("terms read again %v, the index holds %d", got, total)
	}
	rows := 0
	if err := EachScore(out, func(s Score) error {
		if math.IsNaN(s.Score) || math.IsInf(s.Score, 0) || s.Target != nil {
			t.Errorf("row %d: score %v, target %v", s.Row, s.Score, s.Target)
		}
		rows++
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	if rows != res.Rows || len(res.Kept) == 0 {
		t.Errorf("%d lines, %d rows, %d kept", rows, res.Rows, len(res.Kept))
	}
}

// TestCascadeCharges: a cascade charges the cheap stage over every row, exactly what the same
// lexical scoring costs alone, and the expensive stage over the survivors alone; rows that fell
// have reason prefilter and no score.
func TestCascadeCharges(t *testing.T) {
	dir, idx, target := demo(t)
	opt := demoOptions(idx, target, filepath.Join(dir, "cascade"))
	opt.Method, opt.Ngram = MethodNgram, NgramOptions{Order: 3, Seed: 7}
	opt.Prefilter = Prefilter{Method: score.BM25, Share: 0.2}
	if _, err := Pick(context.Background(), opt); err != nil {
		t.Fatal(err)
	}
	lex := demoOptions(idx, target, filepath.Join(dir, "lexical"))
	lex.Params.SkipBest = true // the prefilter needs no attribution
	if _, err := Pick(context.Background(), lex); err != nil {
		t.Fatal(err)
	}
	lc, _ := ReadLedger(opt.Out)
	ll, _ := ReadLedger(lex.Out)
	if a, b := ledgerLine(t, lc, "prefilter: score pool (bm25, sum)"), ledgerLine(t, ll, "score pool (bm25, sum)"); a.FLOPs != b.FLOPs || a.Count != b.Count {
		t.Errorf("prefilter stage %+v, the same scoring alone %+v", a, b)
	}
	ix, err := index.Open(idx)
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	var survivors, fell int
	var terms int64
	if err := EachScore(opt.Out, func(s Score) error {
		switch {
		case s.Reason == selection.Prefilter.String():
			fell++
			if !math.IsNaN(s.Score) || s.Kept {
				t.Errorf("row %d fell at the prefilter but has score %v, kept %v", s.Row, s.Score, s.Kept)
			}
		default:
			survivors++
			terms += int64(ix.RowLen(s.Row))
		}
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	if want := int(math.Ceil(0.2 * float64(ix.NumRows()))); survivors != want || fell != ix.NumRows()-want {
		t.Errorf("%d survivors and %d fell; want %d survivors", survivors, fell, want)
	}
	if got := ledgerLine(t, lc, "pool rows again (n-gram)").Count; got != float64(terms) {
		t.Errorf("the n-gram stage read %v terms; the survivors hold %d", got, terms)
	}
	var sum float64
	for _, line := range lc.Lines {
		if line.Kind == budget.KindSelection {
			sum += line.FLOPs
		}
	}
	if sum != lc.Selection {
		t.Errorf("selection %v is not the sum of its stages %v", lc.Selection, sum)
	}
}

// TestNonFiniteScoresRefused: parameters that overflow a score stop the pick before anything is
// written; before, +Inf went into scores.jsonl, which is then not JSON.
func TestNonFiniteScoresRefused(t *testing.T) {
	dir, idx, target := demo(t)
	opt := demoOptions(idx, target, filepath.Join(dir, "inf"))
	opt.Params.K1, opt.Params.B = 1e308, 0
	if _, err := Pick(context.Background(), opt); err == nil || !strings.Contains(err.Error(), "not a finite number") {
		t.Errorf("k1 1e308: %v", err)
	}
	if _, err := os.Stat(opt.Out); !os.IsNotExist(err) {
		t.Errorf("a run folder was written: %v", err)
	}
}

// Knee follows the definition of the Kneedle method (Satopää et al., 2011) for a decreasing convex
// curve: on a curve of two straight pieces the knee is the corner, and on any curve it is the point
// whose scaled rank plus scaled score is least, found here by brute force.
func TestKnee(t *testing.T) {
	asc := func(desc ...float64) []float64 {
		s := slices.Clone(desc)
		slices.Reverse(s)
		return s
	}
	for _, c := range []struct {
		name string
		desc []float64
		want float64
	}{
		// A steep fall over 4 rows, then a flat tail: the corner is the 5th best, score 2.
		{"corner", []float64{10, 8, 6, 4, 2, 1.9, 1.8, 1.7, 1.6, 1.5, 1.4, 1.3, 1.2, 1.1, 1.0}, 2},
		{"one", []float64{3}, 3},
		{"flat", []float64{2, 2, 2, 2}, 2},
		{"two", []float64{5, 1}, 1},
	} {
		if got := Knee(asc(c.desc...)); got != c.want {
			t.Errorf("%s: knee %v, want %v", c.name, got, c.want)
		}
	}
	// 1/x, sampled: the brute-force minimum of scaled rank + scaled score.
	var desc []float64
	for x := 1; x <= 200; x++ {
		desc = append(desc, 1/float64(x))
	}
	n := float64(len(desc) - 1)
	best, want := math.Inf(1), 0.0
	for i, v := range desc {
		if d := float64(i)/n + (v-desc[n0(desc)])/(desc[0]-desc[n0(desc)]); d < best {
			best, want = d, v
		}
	}
	if got := Knee(asc(desc...)); got != want || want >= 0.2 || want <= 0.02 {
		t.Errorf("1/x: knee %v, want %v (between the steep head and the flat tail)", got, want)
	}
}

func n0(s []float64) int { return len(s) - 1 }
