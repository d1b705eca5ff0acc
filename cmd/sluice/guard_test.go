package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"sluice/budget"
	"sluice/cmd/sluice/demodata"
	"sluice/index/decontam"
	"sluice/index/tokens"
	"sluice/select/run"
)

// TestGuards picks the demo pool with its evaluation file: no two kept rows are exact or near
// copies, each dropped duplicate names a kept-eligible row of higher or equal score, every row
// sharing a 13-word run with an evaluation row (found here by brute force over word tuples) is
// refused and no other, and a source's share is capped.
func TestGuards(t *testing.T) {
	dir, idx, target := demoIndex(t)
	eval := filepath.Join(dir, "eval.jsonl")
	os.WriteFile(eval, demodata.Eval(), 0o644)
	out := filepath.Join(dir, "run")
	if code, _, stderr := sluice(t, "pick", "-q", "--index", idx, "--target", target, "--exclude", eval,
		"--budget", "6e12", "--train-params", "125M", "--out", out); code != 0 {
		t.Fatal(stderr)
	}
	var scores []run.Score
	byID := map[string]run.Score{}
	if err := run.EachScore(out, func(s run.Score) error { scores = append(scores, s); byID[s.ID] = s; return nil }); err != nil {
		t.Fatal(err)
	}
	// Brute force: every 13-word run of every evaluation row, against every pool row's.
	grams := map[string]bool{}
	for _, line := range strings.Split(strings.TrimSpace(string(demodata.Eval())), "\n") {
		w := decontam.Words(nil, jsonStrings(t, line))
		for i := 0; i+13 <= len(w); i++ {
			grams[strings.Join(w[i:i+13], " ")] = true
		}
	}
	pool := strings.Split(strings.TrimSpace(string(demodata.Pool())), "\n")
	var dups, contaminated int
	for r, s := range scores {
		w := decontam.Words(nil, jsonText(t, pool[r]))
		hit := false
		for i := 0; i+13 <= len(w); i++ {
			hit = hit || grams[strings.Join(w[i:i+13], " ")]
		}
		if hit != (s.Reason == "contaminated") {
			t.Errorf("row %s: shares a 13-gram with the evaluation file: %v; reason %q", s.ID, hit, s.Reason)
		}
		if hit {
			contaminated++
		}
		if s.Reason == "duplicate" {
			dups++
			k, ok := byID[s.DuplicateOf]
			if !ok || k.Reason == "duplicate" || k.Score < s.Score {
				t.Errorf("row %s (score %v) dropped for %s (%+v)", s.ID, s.Score, s.DuplicateOf, k)
			}
		}
	}
	if dups == 0 || contaminated == 0 {
		t.Errorf("the demo pool holds copies and a leaked evaluation row: %d duplicates, %d contaminated", dups, contaminated)
	}
	// No two kept rows hold the same text.
	seen := map[string]bool{}
	for r, s := range scores {
		if s.Kept {
			text := jsonText(t, pool[r])
			if seen[text] {
				t.Errorf("two kept rows hold %q", text)
			}
			seen[text] = true
		}
	}
	capped := filepath.Join(dir, "capped")
	if code, _, stderr := sluice(t, "pick", "-q", "--index", idx, "--target", target, "--max-share", "0.25",
		"--budget", "6e12", "--train-params", "125M", "--out", capped); code != 0 {
		t.Fatal(stderr)
	}
	l, _ := run.ReadLedger(capped)
	if l.Training > 0.25*(l.Budget-l.Selection)+1 {
		t.Errorf("a 25%% cap, yet training is %v of %v", l.Training, l.Budget-l.Selection)
	}
	for _, tc := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{"--near-dup", "0"}, 2, "--near-dup 0"},
		{[]string{"--near-dup", "1.5"}, 2, "--near-dup 1.5"},
		{[]string{"--exclude-ngram", "0"}, 2, "--exclude-ngram 0"},
		{[]string{"--max-share", "nowhere.jsonl=0.3"}, 1, "nowhere.jsonl, which the index does not hold"},
		{[]string{"--max-share", "2"}, 2, "--max-share"},
		{[]string{"--exclude", filepath.Join(dir, "none.jsonl")}, 1, "none.jsonl"},
		{[]string{"--exclude", emptyFile(t, dir)}, 1, "holds no rows"},
	} {
		o := filepath.Join(dir, "bad")
		args := append([]string{"pick", "--index", idx, "--target", target, "--budget", "6e12", "--train-params", "125M", "--out", o}, tc.args...)
		code, _, stderr := sluice(t, args...)
		if code != tc.code || !strings.Contains(stderr, tc.want) {
			t.Errorf("%v: exit %d: %q lacks %q", tc.args, code, stderr, tc.want)
		}
		if _, err := os.Stat(o); !os.IsNotExist(err) {
			t.Errorf("%v: wrote %s", tc.args, o)
		}
	}
}

func emptyFile(t *testing.T, dir string) string {
	p := filepath.Join(dir, "empty.jsonl")
	os.WriteFile(p, nil, 0o644)
	return p
}

// jsonText is the text fields of a demo pool row, as the index reads them.
func jsonText(t *testing.T, line string) string {
	t.Helper()
	var r struct{ Instruction, Input, Output string }
	if err := jsonUnmarshal(line, &r); err != nil {
		t.Fatal(err)
	}
	parts := slices.DeleteFunc([]string{r.Instruction, r.Input, r.Output}, func(s string) bool { return s == "" })
	return strings.Join(parts, "\n")
}

// jsonStrings is every string field of an evaluation row.
func jsonStrings(t *testing.T, line string) string {
	t.Helper()
	var m map[string]string
	if err := jsonUnmarshal(line, &m); err != nil {
		t.Fatal(err)
	}
	var parts []string
	for _, k := range []string{"id", "question", "input", "answer"} {
		if m[k] != "" {
			parts = append(parts, m[k])
		}
	}
	return strings.Join(parts, "\n")
}

func jsonUnmarshal(s string, v any) error { return json.Unmarshal([]byte(s), v) }

// TestIndexOutputs: rebuilding an index replaces only an index holding nothing else, never one of
// its own pools, and no index is made inside a run; before, a rebuild deleted whatever the folder
// held, the pool it had just read among it.
func TestIndexOutputs(t *testing.T) {
	dir, idx, target := demoIndex(t)
	mine := filepath.Join(idx, "mypool.jsonl")
	os.WriteFile(mine, demodata.Pool(), 0o644)
	run1 := filepath.Join(dir, "run")
	if code, _, stderr := sluice(t, "pick", "-q", "--index", idx, "--target", target, "--budget", "6e12", "--train-params", "125M", "--out", run1); code != 0 {
		t.Fatal(stderr)
	}
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"index", "-q", "--out", idx, mine}, "input"},
		{[]string{"index", "-q", "--out", idx, filepath.Join(dir, "pool.jsonl")}, "mypool.jsonl, which sluice did not write as an index"},
		{[]string{"index", "-q", "--out", filepath.Join(run1, "idx"), filepath.Join(dir, "pool.jsonl")}, "a run folder"},
		{[]string{"index", "-q", "--out", run1, filepath.Join(dir, "pool.jsonl")}, "a run made by sluice, not an index"},
	} {
		before := snapshot(t, dir)
		if code, _, stderr := sluice(t, tc.args...); code == 0 || !strings.Contains(stderr, tc.want) {
			t.Errorf("%v: exit %d: %q lacks %q", tc.args, code, stderr, tc.want)
		}
		after := snapshot(t, dir)
		if len(after) != len(before) {
			t.Errorf("%v: %d files before, %d after", tc.args, len(before), len(after))
		}
	}
}

// TestTokenizerCounts: an index built with a tokenizer file charges each row the tokens that
// tokenizer counts in its text fields (index/tokens checks the counts against reference
// implementations), and the ledger says so.
func TestTokenizerCounts(t *testing.T) {
	dir, _, target := demoIndex(t)
	tokfile := "../../index/tokens/testdata/gpt2-small.json"
	idx := filepath.Join(dir, "tok-idx")
	if code, _, stderr := sluice(t, "index", "-q", "--id", "id", "--tokenizer", tokfile, "--out", idx, filepath.Join(dir, "pool.jsonl")); code != 0 {
		t.Fatal(stderr)
	}
	out := filepath.Join(dir, "run")
	if code, _, stderr := sluice(t, "pick", "-q", "--index", idx, "--target", target, "--keep-duplicates", "--budget", "6e12", "--train-params", "125M", "--out", out); code != 0 {
		t.Fatal(stderr)
	}
	tk, err := tokens.Load(tokfile)
	if err != nil {
		t.Fatal(err)
	}
	pool := strings.Split(strings.TrimSpace(string(demodata.Pool())), "\n")
	var estimate, counted int64
	if err := run.EachScore(out, func(s run.Score) error {
		var r struct{ Instruction, Input, Output string }
		json.Unmarshal([]byte(pool[s.Row]), &r)
		want := 0
		for _, f := range []string{r.Instruction, r.Input, r.Output} {
			want += tk.Count([]byte(f))
			estimate += int64(budget.EstimateTokens(len(f)))
		}
		if s.Tokens != int64(want) {
			t.Errorf("row %s: %d tokens charged, the tokenizer counts %d", s.ID, s.Tokens, want)
		}
		counted += s.Tokens
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	if counted == estimate {
		t.Errorf("the counts equal the bytes/4 estimate (%d): the tokenizer was not used", counted)
	}
	l, _ := run.ReadLedger(out)
	if !slices.ContainsFunc(l.Notes, func(n string) bool { return strings.Contains(n, "tokenizer") }) {
		t.Errorf("the ledger does not say how tokens were counted: %q", l.Notes)
	}
}
