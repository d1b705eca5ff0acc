package index

import (
	"bytes"
	"context"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"hash/crc32"
	"math"
	"os"
	"path/filepath"
	"sync"
	"sync/atomic"
	"testing"
)

// twoRowIndex builds an index of two rows: few enough that a count near 2^62 can wrap a size check
// around to the real size, as 2+2^62 rows of 36 bytes do.
func twoRowIndex(t *testing.T) string {
	t.Helper()
	pool := filepath.Join(t.TempDir(), "pool.jsonl")
	os.WriteFile(pool, []byte(`{"id":"a","text":"ferry leaves at nine"}`+"\n"+`{"id":"b","text":"the ferry is late"}`+"\n"), 0o644)
	dir := filepath.Join(t.TempDir(), "idx")
	if _, err := Build(context.Background(), dir, []string{pool}, Options{ID: "id"}); err != nil {
		t.Fatal(err)
	}
	return dir
}

// editMeta rewrites meta.json of the index at dir through edit, numbers kept exact.
func editMeta(t *testing.T, dir string, edit func(m map[string]any)) {
	t.Helper()
	p := filepath.Join(dir, metaFile)
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	d := json.NewDecoder(bytes.NewReader(b))
	d.UseNumber()
	var m map[string]any
	if err := d.Decode(&m); err != nil {
		t.Fatal(err)
	}
	edit(m)
	if b, err = json.Marshal(m); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(p, b, 0o644); err != nil {
		t.Fatal(err)
	}
}

// openNoPanic opens dir and reads every term and row, as a pick would, turning a panic into an error.
func openNoPanic(dir string) (err error) {
	defer func() {
		if r := recover(); r != nil {
			err = fmt.Errorf("panic: %v", r)
		}
	}()
	ix, err := Open(dir)
	if err != nil {
		return err
	}
	defer ix.Close()
	var terms []string
	ix.lex.each(func(t []byte) { terms = append(terms, string(t)) })
	for _, term := range terms {
		if _, _, err := ix.Postings(term, nil, nil); err != nil {
			return err
		}
	}
	for r := range ix.NumRows() {
		ix.RowID(r)
		ix.RowLocation(r)
	}
	return ix.Err() // what the reads above found, the files being checked as they are read
}

// TestOpenDamagedMeta: counts and sizes in meta.json may say anything, including numbers whose
// products with record sizes overflow (2+2^62 rows times 36 bytes wraps around to the 72 bytes of
// two rows). Open must refuse each as damaged, never panic.
func TestOpenDamagedMeta(t *testing.T) {
	n := func(s string) json.Number { return json.Number(s) }
	source := func(m map[string]any) map[string]any { return m["sources"].([]any)[0].(map[string]any) }
	for _, tc := range []struct {
		name string
		edit func(m map[string]any)
	}{
		{"rows 2+2^62", func(m map[string]any) { m["rows"] = n("4611686018427387906") }},
		{"rows 2+2^63 wraps negative", func(m map[string]any) { m["rows"] = n("-9223372036854775806") }},
		{"rows -1", func(m map[string]any) { m["rows"] = n("-1") }},
		{"rows max int64", func(m map[string]any) { m["rows"] = n("9223372036854775807") }},
		{"rows 3", func(m map[string]any) { m["rows"] = n("3") }},
		{"terms 2+2^62", func(m map[string]any) { m["terms"] = n("4611686018427387906") }},
		{"terms -1", func(m map[string]any) { m["terms"] = n("-1") }},
		{"no sources", func(m map[string]any) { m["sources"] = []any{} }},
		{"source size -1", func(m map[string]any) { source(m)["size"] = n("-1") }},
		{"source size 1", func(m map[string]any) { source(m)["size"] = n("1") }},
		{"source stored elsewhere", func(m map[string]any) { source(m)["stored"] = "../../../etc/passwd" }},
		{"source stored as rows", func(m map[string]any) { source(m)["stored"] = rowsFile }},
		{"file size -1", func(m map[string]any) { m["files"].(map[string]any)[rowsFile].(map[string]any)["size"] = n("-1") }},
		{"file size 2^63-1", func(m map[string]any) {
			m["files"].(map[string]any)[rowsFile].(map[string]any)["size"] = n("9223372036854775807")
		}},
		{"file name ..", func(m map[string]any) {
			m["files"].(map[string]any)[".."] = map[string]any{"size": 0, "crc32c": "00000000"}
		}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := twoRowIndex(t)
			editMeta(t, dir, tc.edit)
			if err := openNoPanic(dir); !errors.Is(err, ErrDamaged) {
				t.Errorf("open: %v, want ErrDamaged", err)
			}
		})
	}
}

// lexEntry is one entry of a lexicon written by hand.
type lexEntry struct {
	term    string
	df, len uint64 // len is the byte length of the term's postings, as the lexicon says it
}

// writeDamaged replaces the lexicon and postings of the index at dir, with meta.json made to agree
// on sizes, checksums and the number of terms, so that only the parsers stand between the bytes
// and a panic.
func writeDamaged(t *testing.T, dir string, lex []lexEntry, postings []byte) {
	t.Helper()
	var lb []byte
	for _, e := range lex {
		lb = binary.AppendUvarint(lb, uint64(len(e.term)))
		lb = append(lb, e.term...)
		lb = binary.AppendUvarint(lb, e.df)
		lb = binary.AppendUvarint(lb, e.len)
	}
	files := map[string][]byte{lexiconFile: lb, postingsFile: postings}
	for name, b := range files {
		if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	editMeta(t, dir, func(m map[string]any) {
		m["terms"] = len(lex)
		for name, b := range files {
			m["files"].(map[string]any)[name] = map[string]any{"size": len(b), "crc32c": fmt.Sprintf("%08x", crc32.Checksum(b, castagnoli))}
		}
	})
}

// TestOpenDamagedFiles: a lexicon or postings whose checksums agree with meta.json may still hold
// offsets and gaps that overflow; each must be refused as damaged, never panic or give rows out of
// range.
func TestOpenDamagedFiles(t *testing.T) {
	// Rows 0 and 1, each with tf 1: gaps 1 and 1 from row -1.
	good := binary.AppendUvarint(binary.AppendUvarint(nil, 1<<1|1), 1<<1|1)
	for _, tc := range []struct {
		name     string
		lex      []lexEntry
		postings []byte
	}{
		// The lengths sum, wrapping, to the size of postings, but the first runs past its end.
		{"postings length wraps", []lexEntry{{"a", 2, uint64(len(good)) + 10}, {"b", 2, math.MaxUint64 - 9}}, good},
		{"postings length past the end", []lexEntry{{"a", 2, 100}}, good},
		// Row 1, then a gap of 2^63-1 that carries the row number past the largest int64.
		{"row gap wraps", []lexEntry{{"a", 2, 11}}, binary.AppendUvarint(binary.AppendUvarint(nil, 2<<1|1), math.MaxUint64)},
		{"first gap 0", []lexEntry{{"a", 1, 1}}, binary.AppendUvarint(nil, 0<<1|1)},
		{"df above rows", []lexEntry{{"a", 3, uint64(len(good))}}, good},
		{"df 0", []lexEntry{{"a", 0, uint64(len(good))}}, good},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := twoRowIndex(t)
			writeDamaged(t, dir, tc.lex, tc.postings)
			if err := openNoPanic(dir); !errors.Is(err, ErrDamaged) {
				t.Errorf("open: %v, want ErrDamaged", err)
			}
		})
	}
	t.Run("undamaged by hand", func(t *testing.T) {
		dir := twoRowIndex(t)
		writeDamaged(t, dir, []lexEntry{{"a", 2, uint64(len(good))}}, good)
		if err := openNoPanic(dir); err != nil {
			t.Errorf("open of a good lexicon written by hand: %v", err)
		}
	})
}

// TestOpenWhileRebuilt opens an index again and again while it is rebuilt in place from one pool and
// then another. Each Open must see one whole version: the old meta.json with the new files would
// be reported as damaged.
func TestOpenWhileRebuilt(t *testing.T) {
	pools := []string{testPool(t, 40), testPool(t, 90)}
	dir := filepath.Join(t.TempDir(), "idx")
	counts := map[int]bool{}
	for _, p := range pools {
		if _, err := Build(context.Background(), dir, []string{p}, Options{Workers: 1}); err != nil {
			t.Fatal(err)
		}
		ix, err := Open(dir)
		if err != nil {
			t.Fatal(err)
		}
		counts[ix.NumRows()] = true
		ix.Close()
	}
	var stop atomic.Bool
	var opens atomic.Int64
	var wg sync.WaitGroup
	errs := make(chan error, 1)
	wg.Go(func() {
		for !stop.Load() {
			ix, err := Open(dir)
			if err != nil {
				select {
				case errs <- err:
				default:
				}
				return
			}
			n := ix.NumRows()
			var buf bytes.Buffer
			err = ix.CopyRows(&buf, []int{0, n - 1})
			ix.Close()
			if err == nil && !counts[n] {
				err = fmt.Errorf("opened an index of %d rows, built none such", n)
			}
			if err != nil {
				select {
				case errs <- err:
				default:
				}
				return
			}
			opens.Add(1)
		}
	})
	const rebuilds = 50
	for i := range rebuilds {
		if _, err := Build(context.Background(), dir, []string{pools[i%2]}, Options{Workers: 1}); err != nil {
			stop.Store(true)
			wg.Wait()
			t.Fatal(err)
		}
	}
	stop.Store(true)
	wg.Wait()
	select {
	case err := <-errs:
		t.Fatalf("open during a rebuild: %v", err)
	default:
	}
	t.Logf("%d opens during %d rebuilds", opens.Load(), rebuilds)
}
