package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestPickOverSegments checks that a pick over an index set is byte for byte the pick over one
// index of the same files: scores.jsonl, kept.jsonl and ledger.json, for each lexical method and the
// n-gram model, with duplicates kept, and for bm25 with duplicates dropped (the default), which
// the set finds across its segments from their stored keys and sketches as one build does, and
// with evaluation rows excluded, which the set takes from its segments' lists.
func TestPickOverSegments(t *testing.T) {
	files, _ := filepath.Glob("../../../shared/data/t0-train-50k-per-template/data_per_template/*.jsonl")
	if len(files) < 40 {
		t.Skip("../shared/data is absent: the test reads the shared T0 corpus")
	}
	pool := files[:40:40]
	dir := t.TempDir()
	target := filepath.Join(dir, "target.jsonl")
	b, _ := os.ReadFile(files[45])
	lines := strings.SplitAfter(string(b), "\n")
	os.WriteFile(target, []byte(strings.Join(lines[:min(60, len(lines))], "")), 0o644)
	// Evaluation rows taken from the pool, so that some pool rows leak them; every index checks
	// against them, the one and the segments, and the set joins its segments' lists.
	eval := filepath.Join(dir, "eval.jsonl")
	b, _ = os.ReadFile(files[3])
	os.WriteFile(eval, []byte(strings.Join(strings.SplitAfter(string(b), "\n")[:30], "")), 0o644)
	index := func(out string, files ...string) string {
		args := append([]string{"index", "--quiet", "--text", "prompt,completion", "--exclude", eval, "--out", filepath.Join(dir, out)}, files...)
		if code, _, stderr := sluice(t, args...); code != 0 {
			t.Fatal(stderr)
		}
		return filepath.Join(dir, out)
	}
	one := index("one.idx", pool...)
	set := filepath.Join(dir, "pool.set")
	if code, out, stderr := sluice(t, "segments", "--out", set, index("a.idx", pool[:9]...), index("b.idx", pool[9:10]...), index("c.idx", pool[10:]...)); code != 0 || !strings.Contains(out, "3 segments") {
		t.Fatal(out, stderr)
	}
	pick := func(ix, out string, extra ...string) string {
		out = filepath.Join(dir, out)
		args := append([]string{"pick", "--quiet", "--index", ix, "--target", target, "--budget", "3e16", "--train-params", "1e9", "--out", out}, extra...)
		if code, _, stderr := sluice(t, args...); code != 0 {
			t.Fatal(stderr)
		}
		return out
	}
	read := func(dir, name string) []byte {
		b, err := os.ReadFile(filepath.Join(dir, name))
		if err != nil {
			t.Fatal(err)
		}
		return b
	}
	for _, method := range []string{"bm25", "tfidf", "ngram"} {
		a := pick(one, "one-"+method, "--method", method, "--keep-duplicates")
		s := pick(set, "set-"+method, "--method", method, "--keep-duplicates")
		for _, name := range []string{"scores.jsonl", "kept.jsonl", "ledger.json"} {
			if !bytes.Equal(read(a, name), read(s, name)) {
				t.Errorf("%s: %s differs between one index and its segments", method, name)
			}
		}
	}
	a, s := pick(one, "one-dups", "--exclude", eval), pick(set, "set-dups", "--exclude", eval)
	for _, name := range []string{"scores.jsonl", "kept.jsonl", "ledger.json"} {
		if !bytes.Equal(read(a, name), read(s, name)) {
			t.Errorf("duplicates dropped, evaluation rows excluded: %s differs between one index and its segments", name)
		}
	}
	for _, said := range []string{"duplicates were found when the index was built", "evaluation rows were checked when the index was built", `"contaminated"`} {
		if !bytes.Contains(read(a, "ledger.json"), []byte(said)) && !bytes.Contains(read(a, "scores.jsonl"), []byte(said)) {
			t.Errorf("duplicates dropped, evaluation rows excluded: neither the ledger nor the scores say %s", said)
		}
	}
	rows := readScores(t, filepath.Join(s, "scores.jsonl"))
	last := rows[len(rows)-1].ID // a row of the last segment
	if code, out, stderr := sluice(t, "why", "--run", s, last); code != 0 || !strings.Contains(out, "fate") {
		t.Errorf("why on a set's run: exit %d: %s%s", code, out, stderr)
	}
	if code, _, stderr := sluice(t, "verify", s); code != 0 {
		t.Errorf("verify of a set's run: %s", stderr)
	}
}

// TestIndexFromSet checks that `index --from SET` makes the bytes of one build of the segments'
// files: every file of the index, and meta.json but for the command line that made it.
func TestIndexFromSet(t *testing.T) {
	files, _ := filepath.Glob("../../../shared/data/t0-train-50k-per-template/data_per_template/*.jsonl")
	if len(files) < 12 {
		t.Skip("../shared/data is absent: the test reads the shared T0 corpus")
	}
	pool := files[:12:12]
	dir := t.TempDir()
	index := func(out string, args ...string) string {
		out = filepath.Join(dir, out)
		if code, _, stderr := sluice(t, append([]string{"index", "--quiet", "--out", out}, args...)...); code != 0 {
			t.Fatal(stderr)
		}
		return out
	}
	one := index("one.idx", pool...)
	set := filepath.Join(dir, "pool.set")
	if code, _, stderr := sluice(t, "segments", "--out", set, index("a.idx", pool[:5]...), index("b.idx", pool[5:]...)); code != 0 {
		t.Fatal(stderr)
	}
	merged := index("merged.idx", "--from", set)
	names, _ := filepath.Glob(filepath.Join(one, "*"))
	for _, p := range names {
		a, _ := os.ReadFile(p)
		b, err := os.ReadFile(filepath.Join(merged, filepath.Base(p)))
		if err != nil {
			t.Fatal(err)
		}
		if filepath.Base(p) == "meta.json" {
			a, b = withoutCommand(t, a), withoutCommand(t, b)
		}
		if !bytes.Equal(a, b) {
			t.Errorf("%s differs between one build and --from the set", filepath.Base(p))
		}
	}
	if code, _, stderr := sluice(t, "index", "--out", filepath.Join(dir, "x.idx"), "--from", set, "--text", "prompt"); code != 2 || !strings.Contains(stderr, "--text has no use with --from") {
		t.Errorf("--text with --from: exit %d: %s", code, stderr)
	}
}

func withoutCommand(t *testing.T, meta []byte) []byte {
	t.Helper()
	var m map[string]any
	if err := json.Unmarshal(meta, &m); err != nil {
		t.Fatal(err)
	}
	delete(m, "command")
	b, _ := json.Marshal(m)
	return b
}

// TestIndexFromSetKeepsInputs checks that index --from refuses to write over a segment of the set
// it reads, or over the set file, and leaves both as they were.
func TestIndexFromSetKeepsInputs(t *testing.T) {
	_, idx, _ := demoIndex(t)
	set := filepath.Join(t.TempDir(), "pool.set")
	if code, _, stderr := sluice(t, "segments", "--out", set, idx); code != 0 {
		t.Fatal(stderr)
	}
	before, _ := os.ReadFile(filepath.Join(idx, "meta.json"))
	for _, out := range []string{idx, set} {
		if code, _, stderr := sluice(t, "index", "--quiet", "--out", out, "--from", set); code == 0 || !strings.Contains(stderr, "input") {
			t.Errorf("--out %s, a segment or the set: exit %d: %s", out, code, stderr)
		}
	}
	if after, _ := os.ReadFile(filepath.Join(idx, "meta.json")); !bytes.Equal(before, after) {
		t.Error("the segment was replaced")
	}
	if b, _ := os.ReadFile(set); !strings.HasPrefix(string(b), "sluice-index-set 1\n") {
		t.Error("the set file was replaced")
	}
}

// TestFlagGivenTwice checks that a flag of one value given twice is refused, not taken at its last
// value: --index A --index B would otherwise pick over B alone.
func TestFlagGivenTwice(t *testing.T) {
	for _, tc := range []struct {
		args []string
		says string
	}{
		{[]string{"pick", "--index", "a", "--index=b", "--target", "t", "--budget", "1", "--train-params", "1", "--out", "o"}, "--index is given more than once; it takes one value (name several indexes as one set with 'sluice segments'"},
		{[]string{"pick", "--index", "a", "--target", "t", "--budget", "1", "--budget", "2", "--train-params", "1", "--out", "o"}, "--budget is given more than once"},
		{[]string{"why", "--run", "r", "--run", "s", "row"}, "--run is given more than once"},
	} {
		if code, _, stderr := sluice(t, tc.args...); code != 2 || !strings.Contains(stderr, tc.says) {
			t.Errorf("%v: exit %d, %s; want 2 saying %q", tc.args, code, stderr, tc.says)
		}
	}
	// Flags that take many values, and switches, may be repeated.
	if code, _, stderr := sluice(t, "pick", "--quiet", "--quiet", "--exclude", "a", "--exclude", "b", "--help"); code != 0 {
		t.Errorf("repeated switches and lists: exit %d: %s", code, stderr)
	}
}
