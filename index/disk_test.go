package index

import (
	"context"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

// TestFullDisk builds onto file systems too small for the index, of sizes rising until the build
// fits, so that the disk fills at each step in turn (rows, sorted runs, the merge's parts, their
// join, norms, the copy of stdin): the error must say the disk is full and name the index, not the
// working folder it was being written in, and neither an index nor a working folder may be left.
// It needs root to mount a small tmpfs and skips without it.
func TestFullDisk(t *testing.T) {
	if os.Geteuid() != 0 {
		t.Skip("needs root to mount a small tmpfs")
	}
	pool := testPool(t, 20000)
	for _, tc := range []struct {
		mem   int64
		stdin bool
		step  int // KiB
	}{{0, false, 128}, {64 << 10, false, 128}, {0, true, 512}} {
		t.Run(fmt.Sprintf("mem=%d/stdin=%v", tc.mem, tc.stdin), func(t *testing.T) {
			failures := 0
			for kb := 256; ; kb += tc.step {
				if kb > 12288 {
					t.Fatalf("the build fails even with %d KiB", kb)
				}
				if !buildOnFullDisk(t, pool, kb, tc.mem, tc.stdin) {
					break
				}
				failures++
			}
			if failures < 3 {
				t.Errorf("the disk filled in %d builds only", failures)
			}
		})
	}
}

// buildOnFullDisk builds pool onto a tmpfs of kb KiB and reports whether the build failed, which it
// must do by saying the disk is full, naming the index, and leaving nothing.
func buildOnFullDisk(t *testing.T, pool string, kb int, mem int64, stdin bool) (failed bool) {
	t.Helper()
	small := t.TempDir()
	if out, err := exec.Command("mount", "-t", "tmpfs", "-o", fmt.Sprintf("size=%dk", kb), "tmpfs", small).CombinedOutput(); err != nil {
		t.Skipf("cannot mount a tmpfs here: %v %s", err, out)
	}
	// Unmounted before the TempDir cleanup, which runs later, removes the mount point.
	t.Cleanup(func() {
		if out, err := exec.Command("umount", small).CombinedOutput(); err != nil {
			t.Errorf("umount %s: %v %s", small, err, out)
		}
	})
	src := pool
	if stdin {
		f, err := os.Open(pool)
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close()
		old := os.Stdin
		os.Stdin = f
		defer func() { os.Stdin = old }()
		src = "-"
	}
	dir := filepath.Join(small, "idx")
	_, err := Build(context.Background(), dir, []string{src}, Options{Mem: mem, Workers: 2, batchRows: 512})
	if err == nil {
		return false
	}
	if !errors.Is(err, syscall.ENOSPC) {
		t.Fatalf("build on %d KiB: %v, want ENOSPC", kb, err)
	}
	if msg := err.Error(); strings.Contains(msg, ".tmp-") || !strings.Contains(msg, dir) {
		t.Errorf("build on %d KiB: the error names the working folder, or not the index: %s", kb, msg)
	}
	if entries, _ := os.ReadDir(small); len(entries) != 0 {
		t.Errorf("build on %d KiB left %v", kb, entries)
	}
	return true
}

// TestUnwritableFolder builds into a folder that cannot be written (a read-only tmpfs, since root
// ignores permission bits): a clear error, and nothing left.
func TestUnwritableFolder(t *testing.T) {
	if os.Geteuid() != 0 {
		t.Skip("needs root to mount a read-only tmpfs")
	}
	ro := t.TempDir()
	if out, err := exec.Command("mount", "-t", "tmpfs", "-o", "ro,size=64k", "tmpfs", ro).CombinedOutput(); err != nil {
		t.Skipf("cannot mount a tmpfs here: %v %s", err, out)
	}
	t.Cleanup(func() { exec.Command("umount", ro).Run() })
	_, err := Build(context.Background(), filepath.Join(ro, "idx"), []string{testPool(t, 10)}, Options{})
	if !errors.Is(err, syscall.EROFS) {
		t.Fatalf("build into a read-only folder: %v, want EROFS", err)
	}
	if entries, _ := os.ReadDir(ro); len(entries) != 0 {
		t.Errorf("left in the read-only folder: %v", entries)
	}
}
