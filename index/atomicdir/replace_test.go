package atomicdir

import (
	"os"
	"path/filepath"
	"testing"
)

// TestReplaceFile checks that ReplaceFile puts the new bytes in place of the old and leaves no
// working file beside them.
func TestReplaceFile(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "set")
	for _, b := range []string{"first\n", "second, longer\n", ""} {
		if err := ReplaceFile(path, []byte(b)); err != nil {
			t.Fatal(err)
		}
		if got, _ := os.ReadFile(path); string(got) != b {
			t.Fatalf("got %q, want %q", got, b)
		}
	}
	if names, _ := filepath.Glob(filepath.Join(dir, "*")); len(names) != 1 {
		t.Fatalf("left %v", names)
	}
	if err := ReplaceFile(filepath.Join(dir, "no", "such", "folder"), nil); err == nil {
		t.Fatal("wrote into a folder that does not exist")
	}
}
