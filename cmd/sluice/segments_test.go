package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestPickOverSegments checks that a pick over an index set is byte for byte the pick over one
// index of the same files: scores.jsonl, kept.jsonl and ledger.json, for each lexical method and the
// n-gram model, with duplicates kept. With duplicates dropped (the default) the set's pick finds
// them itself and charges that hashing, which one index paid at build: the same rows are kept, and
// only the ledger differs.
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
	index := func(out string, files ...string) string {
		args := append([]string{"index", "--quiet", "--text", "prompt,completion", "--out", filepath.Join(dir, out)}, files...)
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
	a, s := pick(one, "one-dups"), pick(set, "set-dups")
	if !bytes.Equal(read(a, "kept.jsonl"), read(s, "kept.jsonl")) {
		t.Error("with duplicates dropped, the kept rows differ between one index and its segments")
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
