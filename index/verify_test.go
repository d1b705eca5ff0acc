package index

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"testing"
)

// TestChecksAsRead damages one file of an index at a time and checks that Open finds nothing, that
// what is read of the other files (and of the damaged file's other blocks) reads as before, and
// that the first read of the damaged bytes reports ErrDamaged: as an error, or through Err for the
// reads that return none. Internal properties: no reference values are involved.
func TestChecksAsRead(t *testing.T) {
	const n = 70000 // the rows file takes three blocks (rowRecSize<<15 bytes each)
	pool := testPool(t, n)
	good, _ := build(t, pool, Options{ID: "id"})
	last := n - 1
	for _, tc := range []struct {
		file string
		at   func(size int) int // the byte damaged
		read func(ix *Index) error
	}{
		{rowsFile, func(size int) int { return size - 1 }, func(ix *Index) error {
			ix.RowLen(last)
			return ix.Err()
		}},
		{rowsFile, func(size int) int { return size - 1 }, func(ix *Index) error {
			return ix.CopyRows(io.Discard, []int{0, last}) // the damage, not a row unlike its pool file
		}},
		{normsFile, func(int) int { return 3 }, func(ix *Index) error {
			ix.RowNorm(0)
			return ix.Err()
		}},
		{dupsFile, func(int) int { return 2 }, func(ix *Index) error {
			ix.DupFirst(0)
			return ix.Err()
		}},
		{idsFile, func(int) int { return 5 }, func(ix *Index) error {
			ix.RowID(0)
			return ix.Err()
		}},
		{postingsFile, func(int) int { return 0 }, func(ix *Index) error {
			_, _, err := ix.Postings("tax", nil, nil)
			return err
		}},
		{lexiconFile, func(int) int { return 1 }, func(ix *Index) error {
			_, _, err := ix.Postings("bread", nil, nil)
			return err
		}},
	} {
		t.Run(tc.file, func(t *testing.T) {
			dir := filepath.Join(t.TempDir(), "idx")
			if err := os.CopyFS(dir, os.DirFS(good)); err != nil {
				t.Fatal(err)
			}
			p := filepath.Join(dir, tc.file)
			b, _ := os.ReadFile(p)
			b[tc.at(len(b))] ^= 0x5a
			os.WriteFile(p, b, 0o644)
			ix, err := Open(dir)
			if err != nil {
				t.Fatalf("open: %v; a damaged %s is found when read", err, tc.file)
			}
			defer ix.Close()
			// Reads of every other file, and of the rows' first block, find nothing.
			if tc.file != rowsFile || n*rowRecSize <= rowRecSize<<15 {
				ix.RowLen(last)
			}
			ix.RowLen(0)
			if tc.file != normsFile {
				ix.RowNorm(last)
			}
			if tc.file != dupsFile {
				ix.DupFirst(last)
			}
			if tc.file != idsFile {
				ix.RowID(last)
			}
			if tc.file != postingsFile && tc.file != lexiconFile {
				if _, _, err := ix.Postings("harbour", nil, nil); err != nil {
					t.Errorf("postings of harbour: %v", err)
				}
			}
			if err := ix.Err(); err != nil {
				t.Fatalf("reads of the undamaged parts: %v", err)
			}
			if err := tc.read(ix); !errors.Is(err, ErrDamaged) {
				t.Errorf("read of the damaged %s: %v, want ErrDamaged", tc.file, err)
			}
		})
	}
}

// TestRowTF checks RowTF, which reads a list only as far as the row, against the whole list read by
// Postings, for every term and every row, read through the mapping and through small windows, one
// stretch and many. Internal property: no reference values are involved.
func TestRowTF(t *testing.T) {
	pool := testPool(t, 900)
	dir, _ := build(t, pool, Options{})
	ix, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	var terms []string
	ix.lex.each(func(term []byte) { terms = append(terms, string(term)) })
	for _, resident := range []bool{true, false} {
		ix.resident, ix.window, ix.tfStretch = resident, 64, 100
		for _, term := range append(terms, "absent") {
			rows, tfs, err := ix.Postings(term, nil, nil)
			if err != nil {
				t.Fatal(err)
			}
			want := make([]int, ix.NumRows())
			for i, r := range rows {
				want[r] = int(tfs[i])
			}
			for r := range ix.NumRows() {
				if got, err := ix.RowTF(term, r); got != want[r] || err != nil {
					t.Fatalf("resident %v: RowTF(%q, %d) = %d (%v), want %d", resident, term, r, got, err, want[r])
				}
			}
		}
	}
}
