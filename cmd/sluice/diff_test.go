package main

import (
	"encoding/json"
	"path/filepath"
	"strings"
	"testing"

	"sluice/select/audit"
)

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
	same, err := audit.Compare(a, a, 5)
	if err != nil {
		t.Fatal(err)
	}
	if same.Jaccard != 1 || same.Spearman != 1 || same.OnlyA+same.OnlyB != 0 || len(same.Moved) != 0 {
		t.Errorf("a run against itself: %+v", same)
	}
	d, err := audit.Compare(a, b, 5)
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

func absInt(x int) int {
	if x < 0 {
		return -x
	}
	return x
}
