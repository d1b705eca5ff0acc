package index

import (
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// TestSources: a folder stands for its JSONL files in name order, other files in it are left
// out, and a folder without any is refused with a message that says so.
func TestSources(t *testing.T) {
	dir := t.TempDir()
	pool := filepath.Join(dir, "pool")
	os.Mkdir(pool, 0o755)
	for _, name := range []string{"b.jsonl", "a.jsonl.zst", "notes.txt", "c.json"} {
		os.WriteFile(filepath.Join(pool, name), []byte("{}\n"), 0o644)
	}
	os.Mkdir(filepath.Join(pool, "sub.jsonl"), 0o755)
	one := filepath.Join(dir, "one.jsonl")
	os.WriteFile(one, []byte("{}\n{}\n"), 0o644)
	got, total, err := Sources([]string{one, pool, "-"})
	if err != nil {
		t.Fatal(err)
	}
	want := []string{one, filepath.Join(pool, "a.jsonl.zst"), filepath.Join(pool, "b.jsonl"), filepath.Join(pool, "c.json"), "-"}
	if !slices.Equal(got, want) || total != 6+3*3 {
		t.Errorf("got %q (%d bytes), want %q (15 bytes)", got, total, want)
	}
	empty := filepath.Join(dir, "empty")
	os.Mkdir(empty, 0o755)
	if _, _, err := Sources([]string{empty}); err == nil || !strings.Contains(err.Error(), "no JSONL files") {
		t.Errorf("an empty folder: %v", err)
	}
	if _, _, err := Sources([]string{filepath.Join(dir, "none")}); err == nil || !strings.Contains(err.Error(), "no such file") {
		t.Errorf("a missing file: %v", err)
	}
}
