package index

import (
	"bytes"
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/klauspost/compress/gzip"
)

// TestBuildStopsOnCancel builds from a file of zeros with no newline, as a device or a damaged file
// may be: one line that never ends, which the reader skips past the row limit for as long as the
// file lasts (a sparse terabyte here, costing no disk). A cancelled build must stop and leave
// nothing behind. The deadline is generous: it tells "stops" from "runs for many minutes".
func TestBuildStopsOnCancel(t *testing.T) {
	root := t.TempDir()
	zeros := filepath.Join(root, "zeros.jsonl")
	f, err := os.Create(zeros)
	if err != nil {
		t.Fatal(err)
	}
	if err := f.Truncate(1 << 40); err != nil {
		f.Close()
		t.Skipf("cannot make a sparse terabyte here: %v", err)
	}
	f.Close()
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	time.AfterFunc(100*time.Millisecond, cancel)
	dir := filepath.Join(root, "idx")
	done := make(chan error, 1)
	go func() {
		_, err := Build(ctx, dir, []string{zeros}, Options{Text: "text"})
		done <- err
	}()
	select {
	case err := <-done:
		if !errors.Is(err, context.Canceled) {
			t.Fatalf("cancelled build of an endless line: %v, want context.Canceled", err)
		}
	case <-time.After(10 * time.Second):
		t.Fatal("build of an endless line still running 10 s after its context was cancelled")
	}
	entries, _ := os.ReadDir(root)
	if len(entries) != 1 {
		t.Errorf("left beside the pool after a cancelled build: %v", entries)
	}
}

// TestBuildFromFIFO builds from a named pipe, as a shell's <(…) gives one. Opening it again to copy
// rows would wait forever for a writer, so the index must keep a copy of what it read, as it does
// for stdin, and copy rows from that.
func TestBuildFromFIFO(t *testing.T) {
	pool := testPool(t, 300)
	plain, err := os.ReadFile(pool)
	if err != nil {
		t.Fatal(err)
	}
	var gz bytes.Buffer
	zw := gzip.NewWriter(&gz)
	zw.Write(plain)
	zw.Close()
	refDir, _ := build(t, pool, Options{ID: "id"})
	ref, err := Open(refDir)
	if err != nil {
		t.Fatal(err)
	}
	defer ref.Close()
	rows := []int{0, 5, 150, ref.NumRows() - 1}
	var want bytes.Buffer
	if err := ref.CopyRows(&want, rows); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name string
		data []byte
	}{{"plain", plain}, {"gzip", gz.Bytes()}} {
		t.Run(tc.name, func(t *testing.T) {
			root := t.TempDir()
			fifo := filepath.Join(root, "pool.fifo")
			if err := syscall.Mkfifo(fifo, 0o600); err != nil {
				t.Skipf("cannot make a FIFO here: %v", err)
			}
			// Should either end be left waiting on the FIFO, a partner that comes and goes releases it.
			t.Cleanup(func() {
				for _, flag := range []int{os.O_WRONLY, os.O_RDONLY} {
					if f, err := os.OpenFile(fifo, flag|syscall.O_NONBLOCK, 0); err == nil {
						f.Close()
					}
				}
			})
			go func() {
				f, err := os.OpenFile(fifo, os.O_WRONLY, 0)
				if err != nil {
					return
				}
				f.Write(tc.data)
				f.Close()
			}()
			dir := filepath.Join(root, "idx")
			if _, err := Build(context.Background(), dir, []string{fifo}, Options{ID: "id"}); err != nil {
				t.Fatal(err)
			}
			for _, f := range []string{lexiconFile, postingsFile, rowsFile, normsFile, idsFile} {
				a, _ := os.ReadFile(filepath.Join(refDir, f))
				b, _ := os.ReadFile(filepath.Join(dir, f))
				if !bytes.Equal(a, b) {
					t.Errorf("%s differs from the build of the file", f)
				}
			}
			ix, err := Open(dir)
			if err != nil {
				t.Fatal(err)
			}
			defer ix.Close()
			if s := ix.Meta().Sources[0]; s.Path != fifo || !strings.HasPrefix(s.Stored, stdinPrefix) || s.Locate != "" {
				t.Errorf("source recorded as %+v, want its path, a stored copy and no locate", s)
			}
			got := make(chan error, 1)
			var buf bytes.Buffer
			go func() { got <- ix.CopyRows(&buf, rows) }()
			select {
			case err := <-got:
				if err != nil {
					t.Fatal(err)
				}
			case <-time.After(10 * time.Second):
				t.Fatal("copying rows of a FIFO pool still waiting after 10 s")
			}
			if !bytes.Equal(buf.Bytes(), want.Bytes()) {
				t.Errorf("copied rows differ from the file's")
			}
		})
	}
}
