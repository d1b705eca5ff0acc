package main

import (
	"encoding/json"
	"errors"
	"os"
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
	same, err := audit.Compare(a, a, 5, false)
	if err != nil {
		t.Fatal(err)
	}
	if same.Jaccard != 1 || same.Spearman != 1 || same.OnlyA+same.OnlyB != 0 || len(same.Moved) != 0 {
		t.Errorf("a run against itself: %+v", same)
	}
	d, err := audit.Compare(a, b, 5, false)
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

// TestDiffPairsRowsAndIndexes: ids that look like another id's repetition (a, a#2, a) are paired
// by occurrence, and runs made on unrelated indexes are refused unless asked for; before, both were
// compared as if they matched.
func TestDiffPairsRowsAndIndexes(t *testing.T) {
	dir := t.TempDir()
	pool := filepath.Join(dir, "pool.jsonl")
	rows := `{"id":"a","text":"ferry timetable north pier"}
{"id":"a#2","text":"ferry timetable south pier"}
{"id":"a","text":"harbour fees for small boats"}
{"id":"b","text":"ferry timetable winter service"}
`
	os.WriteFile(pool, []byte(rows), 0o644)
	target := filepath.Join(dir, "target.jsonl")
	os.WriteFile(target, []byte(`{"text":"ferry timetable"}`+"\n"), 0o644)
	other := filepath.Join(dir, "other.jsonl")
	os.WriteFile(other, []byte(`{"id":"a","text":"ferry timetable on the lake"}`+"\n"), 0o644)
	idx, idx2 := filepath.Join(dir, "idx"), filepath.Join(dir, "idx2")
	for _, args := range [][]string{
		{"index", "-q", "--id", "id", "--out", idx, pool},
		{"index", "-q", "--id", "id", "--out", idx2, other},
		{"pick", "-q", "--index", idx, "--target", target, "--budget", "1e18", "--train-params", "1M", "--out", filepath.Join(dir, "r1")},
		{"pick", "-q", "--index", idx, "--target", target, "--method", "tfidf", "--budget", "1e18", "--train-params", "1M", "--out", filepath.Join(dir, "r2")},
		{"pick", "-q", "--index", idx2, "--target", target, "--budget", "1e18", "--train-params", "1M", "--out", filepath.Join(dir, "r3")},
	} {
		if code, _, stderr := sluice(t, args...); code != 0 {
			t.Fatalf("%v: %s", args, stderr)
		}
	}
	d, err := audit.Compare(filepath.Join(dir, "r1"), filepath.Join(dir, "r2"), 10, false)
	if err != nil {
		t.Fatal(err)
	}
	if d.Common != 4 || d.A.Kept != 3 || d.Both+d.OnlyA != d.A.Kept {
		t.Errorf("four rows, three kept: %+v", d)
	}
	if _, err := audit.Compare(filepath.Join(dir, "r1"), filepath.Join(dir, "r3"), 10, false); !errors.Is(err, audit.ErrOtherIndex) {
		t.Errorf("runs on unrelated indexes: %v", err)
	}
	if code, _, stderr := sluice(t, "diff", filepath.Join(dir, "r1"), filepath.Join(dir, "r3")); code != 1 || !strings.Contains(stderr, "different indexes") {
		t.Errorf("diff across indexes: exit %d: %s", code, stderr)
	}
	if code, _, stderr := sluice(t, "diff", "--across-indexes", filepath.Join(dir, "r1"), filepath.Join(dir, "r3")); code != 0 {
		t.Errorf("diff --across-indexes: exit %d: %s", code, stderr)
	}
}
