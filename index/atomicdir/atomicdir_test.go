package atomicdir

import (
	"errors"
	"os"
	"path/filepath"
	"testing"
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
