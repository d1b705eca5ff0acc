package index

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"testing"
)

// TestSourceFoundWhereverOpened builds through a link with a relative pool path, then opens the index
// by its real path, through the link from another folder, and as "." from inside it: each must find
// the pool to copy rows, and row ids must still read as the path was typed.
func TestSourceFoundWhereverOpened(t *testing.T) {
	root, err := filepath.EvalSymlinks(t.TempDir())
	if err != nil {
		t.Fatal(err)
	}
	data, err := os.ReadFile(testPool(t, 20))
	if err != nil {
		t.Fatal(err)
	}
	for _, d := range []string{"pools", "real/deep", "elsewhere"} {
		if err := os.MkdirAll(filepath.Join(root, d), 0o755); err != nil {
			t.Fatal(err)
		}
	}
	os.WriteFile(filepath.Join(root, "pools", "p.jsonl"), data, 0o644)
	if err := os.Symlink(filepath.Join(root, "real", "deep"), filepath.Join(root, "link")); err != nil {
		t.Skipf("cannot make a link here: %v", err)
	}
	t.Chdir(root)
	if _, err := Build(context.Background(), "link/idx", []string{"pools/p.jsonl"}, Options{}); err != nil {
		t.Fatal(err)
	}
	real := filepath.Join(root, "real", "deep", "idx")
	for _, tc := range []struct {
		name, wd, dir string
	}{
		{"through the link", root, "link/idx"},
		{"by its real path", root, real},
		{"through the link from elsewhere", filepath.Join(root, "elsewhere"), "../link/idx"},
		{"as . from inside, entered by its real path", real, "."},
		{"as . from inside, entered through the link", filepath.Join(root, "link", "idx"), "."},
	} {
		t.Run(tc.name, func(t *testing.T) {
			t.Chdir(tc.wd)
			ix, err := Open(tc.dir)
			if err != nil {
				t.Fatal(err)
			}
			defer ix.Close()
			if id := ix.RowID(0); id != "pools/p.jsonl:1" {
				t.Errorf("row 0 id %q, want it as the path was typed", id)
			}
			var buf bytes.Buffer
			if err := ix.CopyRows(&buf, []int{0}); err != nil {
				t.Fatal(err)
			}
			if !bytes.HasPrefix(data, buf.Bytes()) || buf.Len() == 0 {
				t.Errorf("copied %q", buf.Bytes())
			}
		})
	}
}
