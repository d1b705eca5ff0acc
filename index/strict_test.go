package index

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestStrictErrorNotHidden: with Strict, a bad row cancels the build while the reader is still
// sending batches; the error returned must be the row's, not the reader's "context canceled".
func TestStrictErrorNotHidden(t *testing.T) {
	dir := t.TempDir()
	var b strings.Builder
	for i := range 20000 {
		if i == 50 {
			b.WriteString("{\"text\":\"cut\n")
			continue
		}
		fmt.Fprintf(&b, "{\"text\":\"row %d of the pool\"}\n", i)
	}
	pool := filepath.Join(dir, "pool.jsonl")
	if err := os.WriteFile(pool, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	for run := range 5 {
		out := filepath.Join(dir, fmt.Sprintf("idx%d", run))
		_, err := Build(context.Background(), out, []string{pool}, Options{Text: "text", Strict: true, Workers: 1, batchRows: 8})
		var re *RowError
		if !errors.As(err, &re) || re.Line != 51 || re.File != pool {
			t.Fatalf("run %d: %v, want the RowError of line 51", run, err)
		}
		if _, err := os.Stat(out); !os.IsNotExist(err) {
			t.Errorf("run %d: index written after a strict failure", run)
		}
	}
}
