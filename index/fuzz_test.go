package index

import (
	"context"
	"encoding/json"
	"fmt"
	"hash/crc32"
	"os"
	"path/filepath"
	"slices"
	"testing"
)

// FuzzOpen writes fuzzed bytes over one file of a good index, with its checksum made to match so the
// parsers behind the checksums are reached, and requires Open and the readers to fail cleanly or
// work, never to panic.
func FuzzOpen(f *testing.F) {
	pool := filepath.Join(f.TempDir(), "pool.jsonl")
	os.WriteFile(pool, []byte(`{"id":"a","text":"ferry leaves at nine"}`+"\n"+`{"id":"b","text":"the ferry is late"}`+"\n"), 0o644)
	good := filepath.Join(f.TempDir(), "idx")
	if _, err := Build(context.Background(), good, []string{pool}, Options{ID: "id"}); err != nil {
		f.Fatal(err)
	}
	names := []string{metaFile, lexiconFile, lexKeysFile, postingsFile, rowsFile, normsFile, idsFile}
	for i, name := range names {
		b, _ := os.ReadFile(filepath.Join(good, name))
		f.Add(byte(i), b)
		if len(b) > 1 {
			f.Add(byte(i), b[:len(b)/2])
		}
	}
	f.Fuzz(func(t *testing.T, which byte, data []byte) {
		dir := t.TempDir()
		for _, name := range append(names, rejectedFile) {
			b, _ := os.ReadFile(filepath.Join(good, name))
			os.WriteFile(filepath.Join(dir, name), b, 0o644)
		}
		name := names[int(which)%len(names)]
		os.WriteFile(filepath.Join(dir, name), data, 0o644)
		if name != metaFile {
			var m map[string]any
			b, _ := os.ReadFile(filepath.Join(dir, metaFile))
			json.Unmarshal(b, &m)
			files, _ := m["files"].(map[string]any)
			if files != nil {
				// The sums made anew, block sums too, so that the checks of the content are reached.
				f := map[string]any{"size": len(data), "crc32c": fmt.Sprintf("%08x", crc32.Checksum(data, castagnoli))}
				if block := blockSize(name); block > 0 {
					h := &blockSummer{block: block}
					h.Write(data)
					h.flush()
					f["block"], f["block_crc32c"] = block, string(h.blocks)
				}
				files[name] = f
			}
			b, _ = json.Marshal(m)
			os.WriteFile(filepath.Join(dir, metaFile), b, 0o644)
		}
		ix, err := Open(dir)
		if err != nil {
			return
		}
		defer ix.Close()
		for _, term := range []string{"ferri", "late", "nine", "zzz"} {
			ix.DF(term)
			rows, tfs, perr := ix.Postings(term, nil, nil)
			// A cursor read in stretches fails where Postings does, or gives the same list.
			c := ix.NewCursor(term)
			var crows, ctfs []uint32
			var cerr error
			for _, end := range []int{0, 1, ix.NumRows() / 2, ix.NumRows()} {
				if crows, ctfs, cerr = c.Next(end, crows, ctfs); cerr != nil {
					break
				}
			}
			if (perr == nil) != (cerr == nil) || perr == nil && (!slices.Equal(rows, crows) || !slices.Equal(tfs, ctfs)) {
				t.Fatalf("%q: Postings %d rows (%v), cursor %d rows (%v)", term, len(rows), perr, len(crows), cerr)
			}
		}
		for r := 0; r < ix.NumRows(); r++ {
			ix.RowID(r)
			ix.RowLen(r)
			ix.RowNorm(r)
			ix.RowLocation(r)
			ix.DupFirst(r)
		}
		ix.Err()
	})
}
