package main

import (
	"bytes"
	"context"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"sluice/cmd/sluice/demodata"
)

// TestMain lets the test binary stand in for sluice in a child process, so the kill test runs the
// real command without building it first.
func TestMain(m *testing.M) {
	if os.Getenv("SLUICE_TEST_AS_MAIN") == "1" {
		os.Exit(dispatch(context.Background(), os.Args[1:], newEnv()))
	}
	os.Exit(m.Run())
}

// folderBytes returns every file of dir by name, or nil when dir does not exist.
func folderBytes(t *testing.T, dir string) map[string][]byte {
	t.Helper()
	entries, err := os.ReadDir(dir)
	if os.IsNotExist(err) {
		return nil
	}
	if err != nil {
		t.Fatal(err)
	}
	out := map[string][]byte{}
	for _, e := range entries {
		b, err := os.ReadFile(filepath.Join(dir, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		out[e.Name()] = b
	}
	return out
}

func sameFolder(a, b map[string][]byte) bool {
	if len(a) != len(b) {
		return false
	}
	for name, x := range a {
		if y, ok := b[name]; !ok || !bytes.Equal(x, y) {
			return false
		}
	}
	return true
}

// TestKillAtAnyMoment kills real sluice processes (SIGKILL) at random moments of an index build and
// of a pick, many times, and checks after each kill that the output folder is either absent or the
// complete earlier result, byte for byte, and that a re-run after a kill gives exactly the output of
// an uninterrupted run. SLUICE_KILLS sets the number of kills of each command (default 30).
func TestKillAtAnyMoment(t *testing.T) {
	if testing.Short() {
		t.Skip("kill test skipped with -short")
	}
	kills := 30
	if v, err := strconv.Atoi(os.Getenv("SLUICE_KILLS")); err == nil && v > 0 {
		kills = v
	}
	dir := t.TempDir()
	// A pool large enough that a build takes a while: the demo pool many times over.
	pool := bytes.Repeat(demodata.Pool(), 40)
	os.WriteFile(filepath.Join(dir, "pool.jsonl"), pool, 0o644)
	os.WriteFile(filepath.Join(dir, "target.jsonl"), demodata.Target(), 0o644)
	t.Chdir(dir)

	indexArgs := []string{"index", "--quiet", "--mem", "16MiB", "--out", "idx", "pool.jsonl"}
	pickArgs := []string{"pick", "--quiet", "--index", "idx", "--target", "target.jsonl", "--budget", "3e14",
		"--train-params", "125M", "--aggregate", "max", "--out", "run"}
	child := func(args []string) *exec.Cmd {
		cmd := exec.Command(os.Args[0], args...)
		cmd.Env = append(os.Environ(), "SLUICE_TEST_AS_MAIN=1")
		cmd.Dir = dir
		return cmd
	}
	complete := func(args []string) time.Duration {
		t.Helper()
		start := time.Now()
		if out, err := child(args).CombinedOutput(); err != nil {
			t.Fatalf("%v: %v\n%s", args, err, out)
		}
		return time.Since(start)
	}

	rng := rand.New(rand.NewPCG(1, 2))
	for _, step := range []struct {
		name string
		args []string
		out  string
	}{{"index", indexArgs, "idx"}, {"pick", pickArgs, "run"}} {
		took := complete(step.args)
		want := folderBytes(t, step.out)
		if want == nil {
			t.Fatalf("%s wrote no %s", step.name, step.out)
		}
		if step.name == "index" {
			os.RemoveAll(step.out) // the first kills find no earlier result
		}
		for i := 0; i < kills; i++ {
			cmd := child(step.args)
			if err := cmd.Start(); err != nil {
				t.Fatal(err)
			}
			time.Sleep(time.Duration(rng.Int64N(int64(took) * 5 / 4)))
			cmd.Process.Kill()
			cmd.Wait()
			if got := folderBytes(t, step.out); got != nil && !sameFolder(got, want) {
				t.Fatalf("%s killed (%d): %s is neither absent nor the complete result", step.name, i, step.out)
			}
			if i%5 == 4 {
				complete(step.args)
				if !sameFolder(folderBytes(t, step.out), want) {
					t.Fatalf("%s re-run after a kill (%d) differs from an uninterrupted run", step.name, i)
				}
			}
		}
		// Working folders of killed processes are cleared by the next run.
		complete(step.args)
		entries, _ := os.ReadDir(dir)
		for _, e := range entries {
			if strings.Contains(e.Name(), ".tmp-") {
				t.Errorf("left behind after a complete run: %s", e.Name())
			}
		}
	}
	if !t.Failed() {
		t.Logf("%d kills of index and of pick, all left no partial output", kills)
	}
}
