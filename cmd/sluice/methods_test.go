package main

import (
	"context"
	"encoding/json"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"sluice/select/audit"
	"sluice/select/run"
)

// TestNgramAndCascadeThroughTheCommandLine picks by n-gram models, alone and after a lexical
// prefilter, from the command line; every row is explained again to the last bit (audit.Explain
// fails otherwise), why prints the tokens that moved a score, and report and diff read the runs.
func TestNgramAndCascadeThroughTheCommandLine(t *testing.T) {
	dir, idx, target := demoIndex(t)
	runs := map[string][]string{
		"ngram":    {"--method", "ngram"},
		"target":   {"--method", "ngram", "--ngram-score", "target", "--order", "4"},
		"cascade":  {"--method", "ngram", "--prefilter", "bm25:25%"},
		"cascade2": {"--method", "ngram", "--prefilter", "tfidf:20k"},
	}
	for name, extra := range runs {
		out := filepath.Join(dir, name)
		args := append([]string{"pick", "--quiet", "--index", idx, "--target", target, "--budget", "6e12", "--train-params", "125M", "--out", out}, extra...)
		if code, _, stderr := sluice(t, args...); code != 0 {
			t.Fatalf("%s: %s", name, stderr)
		}
		var ids []string
		seen := map[string]bool{}
		for _, s := range readScores(t, filepath.Join(out, "scores.jsonl")) {
			if !seen[s.ID] {
				seen[s.ID] = true
				ids = append(ids, s.ID)
			}
		}
		rows, err := audit.Explain(context.Background(), out, run.Inputs{}, ids, 1)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		for _, r := range rows {
			if math.IsNaN(r.Score) != (r.Reason == "prefilter") || r.Why == "" {
				t.Errorf("%s: row %s: score %v, reason %q, why %q", name, r.ID, r.Score, r.Reason, r.Why)
			}
			if !math.IsNaN(r.Score) && len(r.Words) == 0 {
				t.Errorf("%s: row %s has no words", name, r.ID)
			}
		}
	}
	code, stdout, stderr := sluice(t, "why", "--run", filepath.Join(dir, "ngram"), "pool-0028")
	if code != 0 || !strings.Contains(stdout, "tokens  that moved the score most") || !strings.Contains(stdout, "ngram-3") {
		t.Errorf("why: exit %d, %s%s", code, stdout, stderr)
	}
	code, stdout, stderr = sluice(t, "why", "--json", "--run", filepath.Join(dir, "cascade"), "pool-0001")
	var w map[string]any
	if code != 0 || json.Unmarshal([]byte(stdout), &w) != nil {
		t.Errorf("why --json: exit %d, %s%s", code, stdout, stderr)
	}
	for _, args := range [][]string{
		{"report", "-q", "--out", filepath.Join(dir, "ngram.html"), filepath.Join(dir, "ngram")},
		{"report", "-q", "--out", filepath.Join(dir, "cascade.html"), filepath.Join(dir, "cascade")},
		{"diff", filepath.Join(dir, "ngram"), filepath.Join(dir, "cascade")},
		{"verify", filepath.Join(dir, "ngram"), filepath.Join(dir, "cascade")},
	} {
		if code, _, stderr := sluice(t, args...); code != 0 {
			t.Errorf("%v: exit %d: %s", args, code, stderr)
		}
	}
	for _, tc := range []struct{ args, want string }{
		{"--method ngram --order 2", "--order 2"},
		{"--method bm25 --order 4", "--order is for --method ngram"},
		{"--method bm25 --prefilter bm25:10%", "--prefilter goes before"},
		{"--method ngram --prefilter bm25:0%", "above 0%"},
		{"--method ngram --prefilter bm25:101%", "at most 100%"},
		{"--method ngram --prefilter lexical:10%", "METHOD bm25 or tfidf"},
		{"--method ngram --ngram-score both", "difference or target"},
		{"--method nope", "bm25, tfidf, ngram"},
	} {
		args := append([]string{"pick", "--index", idx, "--target", target, "--budget", "6e12", "--train-params", "125M", "--out", filepath.Join(dir, "x")}, strings.Fields(tc.args)...)
		if code, _, stderr := sluice(t, args...); code != 2 || !strings.Contains(stderr, tc.want) {
			t.Errorf("%s: exit %d, %q lacks %q", tc.args, code, stderr, tc.want)
		}
	}
}
