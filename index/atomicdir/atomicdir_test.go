package atomicdir

import (
	"bufio"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"golang.org/x/sys/unix"
)

func TestPublish(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "out")
	for i, content := range []string{"first", "second"} {
		tmp, err := Temp(dir)
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(tmp, "f"), []byte(content), 0o644); err != nil {
			t.Fatal(err)
		}
		if i == 1 {
			// A file only the old folder has must be gone after the swap.
			os.WriteFile(filepath.Join(dir, "old-only"), nil, 0o644)
		}
		if err := Publish(tmp, dir); err != nil {
			t.Fatal(err)
		}
		got, err := os.ReadFile(filepath.Join(dir, "f"))
		if err != nil || string(got) != content {
			t.Fatalf("after publish %d: %q, %v", i, got, err)
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "old-only")); !os.IsNotExist(err) {
		t.Errorf("the previous folder's file survived: %v", err)
	}
	entries, _ := os.ReadDir(filepath.Dir(dir))
	if len(entries) != 1 {
		t.Errorf("left beside the folder: %v", entries)
	}
}

func TestCheckReplaceable(t *testing.T) {
	root := t.TempDir()
	full := filepath.Join(root, "full")
	os.Mkdir(full, 0o755)
	os.WriteFile(filepath.Join(full, "precious.txt"), []byte("x"), 0o644)
	empty := filepath.Join(root, "empty")
	os.Mkdir(empty, 0o755)
	file := filepath.Join(root, "file")
	os.WriteFile(file, nil, 0o644)
	no := func(string) bool { return false }
	yes := func(string) bool { return true }
	for _, tc := range []struct {
		dir   string
		ours  func(string) bool
		ok    bool
		notUs bool
	}{
		{filepath.Join(root, "new"), no, true, false},
		{empty, no, true, false},
		{full, yes, true, false},
		{full, no, false, true},
		{file, yes, false, false},
		{filepath.Join(root, "missing", "new"), no, false, false},
	} {
		err := CheckReplaceable(tc.dir, tc.ours)
		if (err == nil) != tc.ok || errors.Is(err, ErrNotOurs) != tc.notUs {
			t.Errorf("%s: %v", tc.dir, err)
		}
	}
}

// holdLock locks the working folder at path as a live owner would, through a descriptor of the
// test's own: flock locks belong to an open file description, so a second open in this process
// conflicts as another process's would.
func holdLock(t *testing.T, path string) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { f.Close() })
	if err := unix.Flock(int(f.Fd()), unix.LOCK_EX|unix.LOCK_NB); err != nil {
		t.Fatal(err)
	}
}

// TestRemoveStale: a working folder is removed when its lock can be taken, whatever process id its
// name holds (a live one of another PID namespace or host may look dead here, and a dead one's
// number may have been reused), and kept while its lock is held. A folder named as by a sluice
// from before the locks, without a descriptor, is judged by its process id as it was then.
func TestRemoveStale(t *testing.T) {
	root := t.TempDir()
	dir := filepath.Join(root, "out")
	const deadPID = 1 << 30 // above any pid_max
	for _, tc := range []struct {
		name    string
		held    bool
		removed bool
	}{
		{fmt.Sprintf(".out.tmp-%d-1-9", deadPID), true, false},
		{".out.tmp-1-2-9", false, true}, // pid 1 lives, but the folder's process need not be it
		{fmt.Sprintf(".out.tmp-%d-3-9", os.Getpid()), false, true},
		{fmt.Sprintf(".out.tmp-%d-4-9", os.Getpid()), true, false},
		{fmt.Sprintf(".out.tmp-%d-5", deadPID), false, true},
		{".out.tmp-1-6", false, false},
		{".out.tmp-x-7-9", false, false},
		{".other.tmp-1-8-9", false, false},
	} {
		path := filepath.Join(root, tc.name)
		if err := os.Mkdir(path, 0o755); err != nil {
			t.Fatal(err)
		}
		os.WriteFile(filepath.Join(path, "rows"), []byte("x"), 0o644)
		if tc.held {
			holdLock(t, path)
		}
		defer func() {
			_, err := os.Stat(path)
			if gone := os.IsNotExist(err); gone != tc.removed {
				t.Errorf("%s (lock held %v): removed %v, want %v", tc.name, tc.held, gone, tc.removed)
			}
		}()
	}
	tmp, err := Temp(dir)
	if err != nil {
		t.Fatal(err)
	}
	if err := Discard(tmp); err != nil {
		t.Fatal(err)
	}
}

// openDescriptors counts this process's open descriptors, or skips the test where it cannot.
func openDescriptors(t *testing.T) int {
	t.Helper()
	entries, err := os.ReadDir("/proc/self/fd")
	if err != nil {
		t.Skipf("cannot count descriptors: %v", err)
	}
	return len(entries)
}

// TestTempLock: a working folder's lock is held from Temp on, so that neither another process nor a
// second Temp here takes it for dead; Publish leaves the published folder holding only what was
// written in it and releases the lock, as Discard does, so that no descriptor is left open.
func TestTempLock(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "out")
	before := openDescriptors(t)
	for i := range 5 {
		tmp, err := Temp(dir)
		if err != nil {
			t.Fatal(err)
		}
		f, err := os.Open(tmp)
		if err != nil {
			t.Fatal(err)
		}
		if err := unix.Flock(int(f.Fd()), unix.LOCK_EX|unix.LOCK_NB); !errors.Is(err, unix.EWOULDBLOCK) {
			t.Errorf("lock of a live working folder taken (%v)", err)
		}
		f.Close()
		other, err := Temp(dir)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := os.Stat(tmp); err != nil {
			t.Fatalf("a second Temp removed the first's live folder: %v", err)
		}
		if err := Discard(other); err != nil {
			t.Fatal(err)
		}
		os.WriteFile(filepath.Join(tmp, "f"), []byte("x"), 0o644)
		if err := Publish(tmp, dir); err != nil {
			t.Fatal(err)
		}
		if entries, _ := os.ReadDir(dir); len(entries) != 1 || entries[0].Name() != "f" {
			t.Fatalf("published %d: %v, want f alone", i, entries)
		}
	}
	if after := openDescriptors(t); after != before {
		t.Errorf("%d descriptors open before, %d after", before, after)
	}
	if entries, _ := os.ReadDir(filepath.Dir(dir)); len(entries) != 1 {
		t.Errorf("left beside the folder: %v", entries)
	}
}

// TestErrorsNameDestination: errors name the folder being made, not the working folder, whose
// name means nothing to the reader.
func TestErrorsNameDestination(t *testing.T) {
	ro := t.TempDir()
	if os.Geteuid() == 0 {
		// Root writes into a folder whatever its mode; a read-only mount stops it.
		if out, err := exec.Command("mount", "-t", "tmpfs", "-o", "ro,size=64k", "tmpfs", ro).CombinedOutput(); err != nil {
			t.Skipf("cannot mount a read-only tmpfs: %v %s", err, out)
		}
		t.Cleanup(func() { exec.Command("umount", ro).Run() })
	} else if err := os.Chmod(ro, 0o555); err != nil {
		t.Fatal(err)
	} else {
		t.Cleanup(func() { os.Chmod(ro, 0o755) })
	}
	gone := filepath.Join(t.TempDir(), "out")
	for _, tc := range []struct {
		name, dir string
		do        func(dir string) error
	}{
		{"Temp in a read-only folder", filepath.Join(ro, "out"), func(dir string) error { _, err := Temp(dir); return err }},
		{"Publish of a working folder gone", gone, func(dir string) error {
			return Publish(filepath.Join(filepath.Dir(dir), ".out.tmp-1-2"), dir)
		}},
	} {
		err := tc.do(tc.dir)
		if err == nil || strings.Contains(err.Error(), ".tmp-") || !strings.Contains(err.Error(), tc.dir) {
			t.Errorf("%s: %v", tc.name, err)
		}
	}
}

// TestModesFollowUmask checks that a published folder, and a file made by TempFile, have the mode
// mkdir and creat give under the process umask, not MkdirTemp's and CreateTemp's private ones. It
// sets the umask of the whole process, so it must not run in parallel with anything.
func TestModesFollowUmask(t *testing.T) {
	for _, umask := range []int{0o022, 0o002, 0o027, 0o077, 0o000} {
		t.Run(fmt.Sprintf("%03o", umask), func(t *testing.T) {
			old := unix.Umask(umask)
			defer unix.Umask(old)
			root := t.TempDir()
			dir := filepath.Join(root, "deep", "out")
			tmp, err := Temp(dir)
			if err != nil {
				t.Fatal(err)
			}
			if err := Publish(tmp, dir); err != nil {
				t.Fatal(err)
			}
			f, err := TempFile(filepath.Join(root, "page.html"))
			if err != nil {
				t.Fatal(err)
			}
			f.Close()
			wantDir, wantFile := os.FileMode(0o777&^umask), os.FileMode(0o666&^umask)
			for _, c := range []struct {
				path string
				want os.FileMode
			}{{dir, wantDir}, {filepath.Dir(dir), wantDir}, {f.Name(), wantFile}} {
				fi, err := os.Stat(c.path)
				if err != nil {
					t.Fatal(err)
				}
				if got := fi.Mode().Perm(); got != c.want {
					t.Errorf("%s: mode %03o, want %03o", c.path, got, c.want)
				}
			}
		})
	}
}

func TestWriteFile(t *testing.T) {
	path := filepath.Join(t.TempDir(), "f")
	if err := WriteFile(path, func(w *bufio.Writer) error { _, err := w.WriteString("hello\n"); return err }); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(path); string(b) != "hello\n" {
		t.Errorf("wrote %q", b)
	}
	boom := errors.New("boom")
	if err := WriteFile(path, func(*bufio.Writer) error { return boom }); !errors.Is(err, boom) {
		t.Errorf("fill's error: got %v", err)
	}
}
