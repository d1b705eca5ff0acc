package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// snapshot reads every file under dir, so a test can prove a refused command changed nothing.
func snapshot(t *testing.T, dir string) map[string]string {
	t.Helper()
	got := map[string]string{}
	filepath.WalkDir(dir, func(p string, d os.DirEntry, err error) error {
		if err == nil && !d.IsDir() {
			b, _ := os.ReadFile(p)
			got[p] = string(b)
		}
		return nil
	})
	return got
}

// TestOutputsNeverReplaceWhatTheUserOwns: report, plan and demo write only over nothing or what they
// wrote themselves, and never over an input. Each refused case below exited 0 and replaced the
// user's file or folder before.
func TestOutputsNeverReplaceWhatTheUserOwns(t *testing.T) {
	dir, idx, target := demoIndex(t)
	runDir := filepath.Join(dir, "run")
	if code, _, stderr := sluice(t, "pick", "--quiet", "--index", idx, "--target", target, "--budget", "6e12",
		"--train-params", "125M", "--out", runDir); code != 0 {
		t.Fatal(stderr)
	}
	thesis := filepath.Join(dir, "thesis")
	os.MkdirAll(thesis, 0o755)
	os.WriteFile(filepath.Join(thesis, "chapter1.tex"), []byte("mine\n"), 0o644)
	os.WriteFile(filepath.Join(dir, "notes.html"), []byte("<!DOCTYPE html><p>mine</p>\n"), 0o644)
	page := filepath.Join(dir, "report.html")
	pilots := filepath.Join(dir, "pilots.csv")
	b, err := os.ReadFile("../../testdata/plan/pilots.csv")
	if err != nil {
		t.Fatal(err)
	}
	os.WriteFile(pilots, b, 0o644)
	planArgs := func(out string) []string {
		return []string{"plan", "--pilots", pilots, "--pool-tokens", "4B", "--train-params", "1B", "--out", out}
	}
	before := snapshot(t, dir)
	for _, tc := range []struct {
		name string
		args []string
		want string
	}{
		{"report over the pool", []string{"report", "-q", "--out", filepath.Join(dir, "pool.jsonl"), runDir}, "did not write as a report"},
		{"report over the run's scores", []string{"report", "-q", "--out", filepath.Join(runDir, "scores.jsonl"), runDir}, "input"},
		{"report over the index's meta.json", []string{"report", "-q", "--out", filepath.Join(idx, "meta.json"), runDir}, "input"},
		{"report over a page the user wrote", []string{"report", "-q", "--out", filepath.Join(dir, "notes.html"), runDir}, "did not write as a report"},
		{"report over /", []string{"report", "-q", "--out", "/", runDir}, "folder"},
		{"plan into a folder of the user's", planArgs(thesis), "chapter1.tex"},
		{"plan into the index", planArgs(idx), "an index made by sluice"},
		{"plan into the run", planArgs(runDir), "a run made by sluice"},
		{"plan into a folder holding its pilots", planArgs(dir), "input"},
		{"demo over a folder of the user's", []string{"demo", "-q", "--out", thesis}, "chapter1.tex"},
		{"demo over a folder with another pool.jsonl", []string{"demo", "-q", "--out", dir}, "sluice did not write"},
	} {
		code, _, stderr := sluice(t, tc.args...)
		if code == 0 || !strings.Contains(stderr, tc.want) {
			t.Errorf("%s: exit %d, %q lacks %q", tc.name, code, stderr, tc.want)
		}
	}
	after := snapshot(t, dir)
	for p, b := range before {
		if after[p] != b {
			t.Errorf("%s changed or vanished", p)
		}
	}
	for p := range after {
		if _, ok := before[p]; !ok {
			t.Errorf("%s appeared", p)
		}
	}
	// What a command wrote itself, it may write again.
	for _, args := range [][]string{
		{"report", "-q", "--out", page, runDir}, {"report", "-q", "--out", page, runDir},
		planArgs(filepath.Join(dir, "plan")), planArgs(filepath.Join(dir, "plan")),
		{"demo", "-q", "--out", filepath.Join(dir, "demo")}, {"demo", "-q", "--out", filepath.Join(dir, "demo")},
	} {
		if code, _, stderr := sluice(t, args...); code != 0 {
			t.Errorf("%q: exit %d: %s", args, code, stderr)
		}
	}
}

// TestMissingParentsMade: a pick's --out under folders that do not exist yet makes them, as a user
// naming runs/2026-12/support expects; under a file it is refused before any work.
func TestMissingParentsMade(t *testing.T) {
	dir, idx, target := demoIndex(t)
	out := filepath.Join(dir, "runs", "2026-12", "support")
	if code, _, stderr := sluice(t, "pick", "-q", "--index", idx, "--target", target, "--budget", "6e12", "--train-params", "125M", "--out", out); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	if _, err := os.Stat(filepath.Join(out, "manifest.json")); err != nil {
		t.Error(err)
	}
	file := filepath.Join(dir, "a-file")
	os.WriteFile(file, nil, 0o644)
	if code, _, stderr := sluice(t, "pick", "-q", "--index", idx, "--target", target, "--budget", "6e12", "--train-params", "125M", "--out", filepath.Join(file, "run")); code != 1 || !strings.Contains(stderr, "is not a folder") {
		t.Errorf("under a file: exit %d: %s", code, stderr)
	}
}
