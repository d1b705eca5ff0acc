package index

import (
	"context"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"syscall"
	"testing"
)

// TestFullDisk builds onto a file system too small for the index: the error must say the disk is
// full, and neither an index nor a working folder may be left. It needs root to mount a small tmpfs
// and skips without it.
func TestFullDisk(t *testing.T) {
	if os.Geteuid() != 0 {
		t.Skip("needs root to mount a small tmpfs")
	}
	small := t.TempDir()
	if out, err := exec.Command("mount", "-t", "tmpfs", "-o", "size=256k", "tmpfs", small).CombinedOutput(); err != nil {
		t.Skipf("cannot mount a tmpfs here: %v %s", err, out)
	}
	t.Cleanup(func() { exec.Command("umount", small).Run() })
	pool := testPool(t, 20000)
	dir := filepath.Join(small, "idx")
	_, err := Build(context.Background(), dir, []string{pool}, Options{})
	if !errors.Is(err, syscall.ENOSPC) {
		t.Fatalf("build on a full disk: %v, want ENOSPC", err)
	}
	entries, _ := os.ReadDir(small)
	if len(entries) != 0 {
		t.Errorf("left on the full disk: %v", entries)
	}
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
