package atomicdir

import (
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
