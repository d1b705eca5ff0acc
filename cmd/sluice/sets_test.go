package main

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"sluice/cmd/sluice/demodata"
	"sluice/select/run"
)

// TestSeveralTargetsFromTheCommandLine runs a pick for two target sets, explains, verifies, diffs
// and reports it, and refuses each flag a pick for several sets cannot take with exit 2 before
// anything is written.
func TestSeveralTargetsFromTheCommandLine(t *testing.T) {
	dir, idx, target := demoIndex(t)
	second := filepath.Join(dir, "faq.jsonl")
	// Four demo target rows under other ids: a second set of the same task (invented demo data).
	rows := strings.SplitAfter(string(demodata.Target()), "\n")[:4]
	if err := os.WriteFile(second, []byte(strings.ReplaceAll(strings.Join(rows, ""), `"target-`, `"faq-`)), 0o644); err != nil {
		t.Fatal(err)
	}
	base := []string{"pick", "--index", idx, "--target", target, "--target", second, "--budget", "6e12", "--train-params", "125M"}
	for _, tc := range []struct {
		flags []string
		msg   string
	}{
		{[]string{"--weights", "0.7"}, "1 weights for 2 target sets"},
		{[]string{"--weights", "0.7,0"}, "above 0"},
		{[]string{"--weights", "a,b"}, "above 0"},
		{[]string{"--method", "ngram"}, "takes one target set"},
		{[]string{"--max-rows", "5"}, "--max-rows"},
		{[]string{"--max-tokens", "5000"}, "--max-tokens"},
	} {
		out := filepath.Join(dir, "refused")
		code, stdout, stderr := sluice(t, append(append(base, "--out", out), tc.flags...)...)
		if code != 2 || !strings.Contains(stdout+stderr, tc.msg) {
			t.Errorf("%q: exit %d, output %q lacks %q", tc.flags, code, stdout+stderr, tc.msg)
		}
		if _, err := os.Stat(out); err == nil {
			t.Errorf("%q: wrote %s", tc.flags, out)
		}
	}
	for _, args := range [][]string{
		{"pick", "--index", idx, "--target", target, "--weights", "1", "--budget", "6e12", "--train-params", "125M", "--out", filepath.Join(dir, "r")},
		{"pick", "--index", idx, "--target", target, "--target", "-", "--budget", "6e12", "--train-params", "125M", "--out", filepath.Join(dir, "r")},
		{"pilots", "--index", idx, "--target", target, "--target", second, "--train-params", "125M", "--out", filepath.Join(dir, "p")},
	} {
		if code, _, stderr := sluice(t, args...); code != 2 {
			t.Errorf("%q: exit %d: %s", args, code, stderr)
		}
	}
	out := filepath.Join(dir, "two")
	code, stdout, stderr := sluice(t, append(base, "--weights", "7,3", "--out", out)...)
	if code != 0 || !strings.Contains(stdout, "target (weight 0.7)") || !strings.Contains(stdout, "faq (weight 0.3)") {
		t.Fatalf("pick: exit %d\n%s%s", code, stdout, stderr)
	}
	kept := ""
	for _, s := range readScores(t, filepath.Join(out, "scores.jsonl")) {
		if s.Kept {
			kept = s.ID
		}
	}
	for _, args := range [][]string{
		{"why", "--run", out, kept},
		{"verify", out},
		{"diff", out, out},
		{"report", out, "--out", filepath.Join(dir, "two.html")},
	} {
		code, stdout, stderr := sluice(t, args...)
		if code != 0 || (args[0] == "why" && !strings.Contains(stdout, "kept for target set")) {
			t.Errorf("%s: exit %d\n%s%s", args[0], code, stdout, stderr)
		}
	}
	// Kept rows in one schema name the set that kept them, as scores.jsonl does.
	text := filepath.Join(dir, "two-text")
	if code, _, stderr := sluice(t, append(base, "--weights", "7,3", "--kept-format", "text", "--out", text)...); code != 0 {
		t.Fatal(stderr)
	}
	setOf := map[string]string{}
	for _, line := range strings.Split(strings.TrimSpace(readFile(t, filepath.Join(text, "scores.jsonl"))), "\n") {
		var r struct{ ID, Set string }
		json.Unmarshal([]byte(line), &r)
		setOf[r.ID] = r.Set
	}
	for _, line := range strings.Split(strings.TrimSpace(readFile(t, filepath.Join(text, "kept.jsonl"))), "\n") {
		var r struct{ ID, Set string }
		if err := json.Unmarshal([]byte(line), &r); err != nil || r.Set == "" || r.Set != setOf[r.ID] {
			t.Fatalf("kept row %q names set %q, scores.jsonl %q (%v)", r.ID, r.Set, setOf[r.ID], err)
		}
	}
	// The report has a row per set, its kept rows as the manifest says.
	page, _ := os.ReadFile(filepath.Join(dir, "two.html"))
	m, err := run.ReadManifest(out)
	if err != nil {
		t.Fatal(err)
	}
	for _, set := range m.Sets {
		if want := fmt.Sprintf(`data-set="%s" data-kept-rows="%d"`, set.Name, set.KeptRows); !strings.Contains(string(page), want) {
			t.Errorf("report: no %s", want)
		}
	}
}

func readFile(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}
