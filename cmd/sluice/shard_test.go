package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// TestShardFromCommandLine runs a sharded pick step by step from the command line over a T0 pool cut
// into three segments and checks the run folder against 'pick' over the same set: scores.jsonl,
// kept.jsonl, ledger.json and rejected.jsonl byte for byte, the manifest but for its command line;
// why, diff and verify read it; once with --exclude against rows of two pool files, whose
// contaminated rows must be named alike. Flags it cannot honour, and a step run before the ones it needs,
// are usage errors naming what is wrong.
func TestShardFromCommandLine(t *testing.T) {
	files, _ := filepath.Glob("../../../shared/data/t0-train-50k-per-template/data_per_template/*.jsonl")
	if len(files) < 40 {
		t.Skip("../shared/data is absent: the test reads the shared T0 corpus")
	}
	pool := files[:12:12]
	dir := t.TempDir()
	target := filepath.Join(dir, "target.jsonl")
	b, _ := os.ReadFile(files[45])
	lines := strings.SplitAfter(string(b), "\n")
	os.WriteFile(target, []byte(strings.Join(lines[:min(60, len(lines))], "")), 0o644)
	var segs []string
	for i, part := range [][]string{pool[:3], pool[3:4], pool[4:]} {
		seg := filepath.Join(dir, "seg"+strconv.Itoa(i))
		if code, _, stderr := sluice(t, append([]string{"index", "--quiet", "--text", "prompt,completion", "--out", seg}, part...)...); code != 0 {
			t.Fatal(stderr)
		}
		segs = append(segs, seg)
	}
	set := filepath.Join(dir, "pool.set")
	if code, _, stderr := sluice(t, append([]string{"segments", "--out", set}, segs...)...); code != 0 {
		t.Fatal(stderr)
	}
	eval := filepath.Join(dir, "eval.jsonl")
	var evalRows []string
	for _, f := range []string{pool[1], pool[7]} {
		b, _ := os.ReadFile(f)
		evalRows = append(evalRows, strings.SplitAfter(string(b), "\n")[:30]...)
	}
	os.WriteFile(eval, []byte(strings.Join(evalRows, "")), 0o644)
	var work string
	for _, guard := range [][]string{{"--keep-duplicates"}, {"--exclude", eval, "--exclude-ngram", "10"}} {
		work = shardCase(t, dir, set, target, guard)
	}
	flags := func(out string, extra ...string) []string {
		return append([]string{"--index", set, "--target", target, "--budget", "3e16", "--train-params", "1e9",
			"--keep-duplicates", "--min-score", "p50", "--out", filepath.Join(dir, out)}, extra...)
	}
	step := func(wantCode int, args ...string) string {
		t.Helper()
		code, stdout, stderr := sluice(t, append(append([]string{"shard"}, args...), flags("sharded")...)...)
		if code != wantCode {
			t.Fatalf("sluice shard %s: exit %d, want %d: %s%s", strings.Join(args, " "), code, wantCode, stdout, stderr)
		}
		return stdout + stderr
	}
	code, _, stderr := sluice(t, "shard", "score", "--shard", "0", "--work", work, "--index", set, "--target", target,
		"--budget", "3e16", "--train-params", "1e9", "--near-dup", "0.7", "--out", filepath.Join(dir, "x"))
	if code != 2 || !strings.Contains(stderr, "--near-dup 0.7") || !strings.Contains(stderr, "--keep-duplicates") {
		t.Errorf("a sharded pick finding duplicates at settings the segments did not store: exit %d: %s", code, stderr)
	}
	if out := step(2, "cut", "--shard", "1", "--work", work); !strings.Contains(out, "drop --shard") {
		t.Errorf("a cut given --shard: %s", out)
	}
	if out := step(2, "score", "--shard", "99", "--work", work); !strings.Contains(out, "numbered 0 to") {
		t.Errorf("a score step given a shard past the last segment: %s", out)
	}
}

// shardCase runs 'pick' and the sharded pick with guard's flags over set, compares their run
// folders and reads the sharded one with why, verify and diff; it returns the work folder.
func shardCase(t *testing.T, dir, set, target string, guard []string) string {
	t.Helper()
	name := strconv.Itoa(len(guard))
	flags := func(out string, extra ...string) []string {
		return append(append([]string{"--index", set, "--target", target, "--budget", "3e16", "--train-params", "1e9",
			"--min-score", "p50", "--out", filepath.Join(dir, out+name)}, guard...), extra...)
	}
	if code, _, stderr := sluice(t, append([]string{"pick", "--quiet"}, flags("one")...)...); code != 0 {
		t.Fatal(stderr)
	}
	work := filepath.Join(dir, "work"+name)
	step := func(wantCode int, args ...string) string {
		t.Helper()
		code, stdout, stderr := sluice(t, append(append([]string{"shard"}, args...), flags("sharded")...)...)
		if code != wantCode {
			t.Fatalf("sluice shard %s: exit %d, want %d: %s%s", strings.Join(args, " "), code, wantCode, stdout, stderr)
		}
		return stdout + stderr
	}
	if out := step(1, "cut", "--work", work); !strings.Contains(out, "shard 0") || !strings.Contains(out, "missing") {
		t.Errorf("a cut before any score step: %s", out)
	}
	for _, i := range []string{"2", "0", "1"} {
		if out := step(0, "score", "--shard", i, "--work", work); !strings.Contains(out, "shard "+i+" of 3: scored") {
			t.Errorf("score step: %s", out)
		}
	}
	for _, i := range []string{"1", "0", "2"} {
		if out := step(0, "dups", "--shard", i, "--work", work); !strings.Contains(out, "part "+i+" of 3") {
			t.Errorf("dups step: %s", out)
		}
	}
	if out := step(0, "cut", "--work", work); !strings.Contains(out, "cut: kept") {
		t.Errorf("cut step: %s", out)
	}
	for _, i := range []string{"0", "1", "2"} {
		step(0, "write", "--shard", i, "--work", work)
	}
	step(0, "join", "--work", work)
	one, sharded := filepath.Join(dir, "one"+name), filepath.Join(dir, "sharded"+name)
	for _, name := range []string{"scores.jsonl", "kept.jsonl", "ledger.json", "rejected.jsonl", "manifest.json"} {
		a, _ := os.ReadFile(filepath.Join(one, name))
		s, err := os.ReadFile(filepath.Join(sharded, name))
		if err != nil {
			t.Fatal(err)
		}
		if name == "manifest.json" {
			a, s = []byte(dropCommand(t, a)), []byte(dropCommand(t, s))
		}
		if !bytes.Equal(a, s) {
			t.Errorf("%s differs between pick over the set and the sharded pick", name)
		}
	}
	rows := readScores(t, filepath.Join(sharded, "scores.jsonl"))
	b, _ := os.ReadFile(filepath.Join(sharded, "scores.jsonl"))
	if (len(guard) > 1) != bytes.Contains(b, []byte(`"reason":"contaminated","contaminated":`)) {
		t.Errorf("with %q: contaminated rows named wrongly in scores.jsonl", guard)
	}
	if (len(guard) > 1) != bytes.Contains(b, []byte(`"reason":"duplicate","duplicate_of":`)) {
		t.Errorf("with %q: duplicates named wrongly in scores.jsonl", guard)
	}
	if code, out, stderr := sluice(t, "why", "--run", sharded, rows[len(rows)-1].ID); code != 0 || !strings.Contains(out, "fate") {
		t.Errorf("why on a sharded run: exit %d: %s%s", code, out, stderr)
	}
	for _, r := range rows {
		if r.Reason != "duplicate" {
			continue
		}
		if code, out, stderr := sluice(t, "why", "--run", sharded, r.ID); code != 0 || !strings.Contains(out, "duplicate") {
			t.Errorf("why on a duplicate of a sharded run: exit %d: %s%s", code, out, stderr)
		}
		break
	}
	if code, _, stderr := sluice(t, "verify", sharded); code != 0 {
		t.Errorf("verify of a sharded run: %s", stderr)
	}
	if code, out, stderr := sluice(t, "diff", one, sharded); code != 0 {
		t.Errorf("diff of the two runs: exit %d: %s%s", code, out, stderr)
	}
	return work
}

// dropCommand is a manifest without its command line.
func dropCommand(t *testing.T, b []byte) string {
	t.Helper()
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	delete(m, "command")
	out, _ := json.Marshal(m)
	return string(out)
}
