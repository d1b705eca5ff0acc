package main

import (
	"encoding/json"
	"math"
	"path/filepath"
	"strings"
	"testing"
)

// Spearman's rho for untied ranks is 1 − 6Σd²/(n(n²−1)) (Spearman, 1904; any statistics
// handbook). Worked by hand: ranks 1..5 against 2,1,4,3,5 give d² = 1+1+1+1+0 = 4 and
// rho = 1 − 24/120 = 0.8; against 5..1, rho = −1.
func TestPearsonOfRanksIsSpearman(t *testing.T) {
	for _, tc := range []struct {
		a, b []float64
		want float64
	}{
		{[]float64{1, 2, 3, 4, 5}, []float64{2, 1, 4, 3, 5}, 0.8},
		{[]float64{1, 2, 3, 4, 5}, []float64{5, 4, 3, 2, 1}, -1},
		{[]float64{1, 2, 3}, []float64{1, 2, 3}, 1},
	} {
		if got := pearson(tc.a, tc.b); math.Abs(got-tc.want) > 1e-12 {
			t.Errorf("rho(%v, %v) = %v, want %v", tc.a, tc.b, got, tc.want)
		}
	}
	if !math.IsNaN(pearson([]float64{1, 1}, []float64{1, 2})) {
		t.Errorf("rho with no spread should be NaN")
	}
}

func TestDiff(t *testing.T) {
	dir, idx, target := demoIndex(t)
	pick := func(name string, extra ...string) string {
		out := filepath.Join(dir, name)
		args := append([]string{"pick", "--quiet", "--index", idx, "--target", target, "--budget", "5e12", "--train-params", "125M", "--out", out}, extra...)
		if code, _, stderr := sluice(t, args...); code != 0 {
			t.Fatal(stderr)
		}
		return out
	}
	a, b := pick("a"), pick("b", "--method", "tfidf", "--aggregate", "max")
	same, err := diffRuns(a, a, 5)
	if err != nil {
		t.Fatal(err)
	}
	if same.Jaccard != 1 || same.Spearman != 1 || same.OnlyA+same.OnlyB != 0 || len(same.Moved) != 0 {
		t.Errorf("a run against itself: %+v", same)
	}
	d, err := diffRuns(a, b, 5)
	if err != nil {
		t.Fatal(err)
	}
	if d.Both+d.OnlyA != d.A.Kept || d.Both+d.OnlyB != d.B.Kept || d.Common != 753 {
		t.Errorf("counts do not add up: %+v", d)
	}
	if want := float64(d.Both) / float64(d.Both+d.OnlyA+d.OnlyB); d.Jaccard != want {
		t.Errorf("Jaccard %v, want %v", d.Jaccard, want)
	}
	if len(d.Moved) != 5 || absInt(d.Moved[0].RankA-d.Moved[0].RankB) < absInt(d.Moved[4].RankA-d.Moved[4].RankB) {
		t.Errorf("moved rows not by size of move: %+v", d.Moved)
	}
	code, stdout, _ := sluice(t, "diff", "--json", a, b)
	var j map[string]any
	if code != 0 || json.Unmarshal([]byte(stdout), &j) != nil || j["jaccard"] == nil || j["a"] == nil {
		t.Errorf("diff --json: exit %d: %s", code, stdout)
	}
	if code, stdout, _ := sluice(t, "diff", a, b); code != 0 || !strings.Contains(stdout, "Jaccard") {
		t.Errorf("diff: exit %d: %s", code, stdout)
	}
}
