package index

import (
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
)

// mergePool writes rows of many distinct terms on both sides of mergeSplit, skewed so that a few
// terms are in most rows and most terms in a few, with term frequencies above one.
func mergePool(t *testing.T, rows int) string {
	t.Helper()
	syl := []string{"ba", "ce", "di", "fo", "gu", "hy", "ka", "lo", "mu", "ne", "po", "ri", "su", "ty", "vo", "ze"}
	r := rand.New(rand.NewPCG(16, 3))
	var b strings.Builder
	for i := range rows {
		fmt.Fprintf(&b, `{"prompt":"`)
		for range 1 + r.IntN(60) {
			// Log-uniform over 40,000 words: word k is drawn about as often as 1/k.
			k := int(float64(40000) * r.Float64() * r.Float64() * r.Float64())
			w := ""
			for k > 0 || w == "" {
				w += syl[k%len(syl)]
				k /= len(syl)
			}
			fmt.Fprintf(&b, "%s ", w)
		}
		fmt.Fprintf(&b, `","completion":"row%d"}`+"\n", i%97)
	}
	p := filepath.Join(t.TempDir(), "pool.jsonl")
	if err := os.WriteFile(p, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// mergeHashes is the SHA-256 of the files the merge writes.
func mergeHashes(t *testing.T, dir string) map[string]string {
	t.Helper()
	h := map[string]string{}
	for _, f := range []string{lexiconFile, postingsFile, normsFile} {
		b, err := os.ReadFile(filepath.Join(dir, f))
		if err != nil {
			t.Fatal(err)
		}
		s := sha256.Sum256(b)
		h[f] = hex.EncodeToString(s[:])
	}
	return h
}

// TestMergeBytesUnchanged builds one pool with one to four workers and memory bounds from no spill
// to a run for every batch, and checks the lexicon, postings and norms against their SHA-256 as
// written by the merge before each worker's runs were concatenated per term (commit 1bddc1f, a
// k-way merge of every run posting by posting), with the same configurations.
func TestMergeBytesUnchanged(t *testing.T) {
	want := map[string]string{
		lexiconFile:  "ea6bcaeeb31dc5b97773cd45a680bf78a2307ec82d628a86b900d68b6965d61b",
		postingsFile: "bce861ede684c91f3203dced679d17045e345a36be572fc9441510523e757241",
		normsFile:    "21537ffa553115f93f0cd0e08c3e7390919d6787164ba2c9d959a45ed2fe046e",
	}
	pool := mergePool(t, 6000)
	for _, tc := range []struct {
		workers, batch int
		mem            int64
		runs           int // at least
	}{
		{1, 64, 0, 0}, {2, 64, 0, 0}, {4, 64, 0, 0},
		// A run for every batch.
		{1, 64, 1 << 10, 90}, {2, 64, 1 << 10, 90}, {3, 64, 1 << 10, 90},
		// A run every few batches.
		{2, 64, 1 << 20, 2}, {3, 64, 2 << 20, 1}, {4, 64, 1 << 20, 2},
		// Runs spilled in the middle of batches.
		{2, 4096, 1 << 10, 3},
	} {
		t.Run(fmt.Sprintf("workers=%d/batch=%d/mem=%d", tc.workers, tc.batch, tc.mem), func(t *testing.T) {
			dir, st := build(t, pool, Options{Workers: tc.workers, Mem: tc.mem, batchRows: tc.batch, NoDups: true})
			if st.Runs < tc.runs {
				t.Errorf("%d runs, want at least %d", st.Runs, tc.runs)
			}
			for f, h := range mergeHashes(t, dir) {
				if f == normsFile && runtime.GOARCH != "amd64" {
					// math.Log has an assembly version on amd64 whose last bits other
					// architectures need not match; the hashes were made on amd64.
					continue
				}
				if h != want[f] {
					t.Errorf("%s: SHA-256 %s, want %s (runs %d)", f, h, want[f], st.Runs)
				}
			}
		})
	}
}

// TestRunCursorWindows writes a run as spill does and reads it back through buffers from the
// smallest allowed up, so that entries and postings straddle refills, skipping some terms'
// postings unread; a run cut short is an error naming it, never a panic or a short read.
func TestRunCursorWindows(t *testing.T) {
	type entry struct {
		term      string
		keys, tfs []uint64
	}
	r := rand.New(rand.NewPCG(7, 9))
	var entries []entry
	var data []byte
	for i := range 300 {
		e := entry{term: fmt.Sprintf("%s%05d", strings.Repeat("x", r.IntN(MaxTermBytes-5)), i)}
		key := uint64(0)
		var post []byte
		for range 1 + r.IntN(1+i*i/16) {
			d := 1 + uint64(r.IntN(1<<r.IntN(30)))
			tf := 1 + uint64(r.IntN(1<<r.IntN(20)))
			key += d
			e.keys, e.tfs = append(e.keys, key), append(e.tfs, tf)
			post = binary.AppendUvarint(binary.AppendUvarint(post, d), tf)
		}
		data = binary.AppendUvarint(data, uint64(len(e.term)))
		data = append(data, e.term...)
		data = binary.AppendUvarint(binary.AppendUvarint(data, uint64(len(e.keys))), uint64(len(post)))
		data = append(data, post...)
		entries = append(entries, e)
	}
	path := filepath.Join(t.TempDir(), "run")
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
	for _, size := range []int{maxEntryHead, maxEntryHead + 7, 4 << 10, 1 << 20} {
		c, err := openRun(runFile{path: path, shown: "run", size: int64(len(data))}, 0, int64(len(data)), size)
		if err != nil {
			t.Fatal(err)
		}
		for i, e := range entries {
			if c.done || string(c.term) != e.term || c.df != uint64(len(e.keys)) {
				t.Fatalf("buffer %d, term %d: %q df %d done %v, want %q df %d", size, i, c.term, c.df, c.done, e.term, len(e.keys))
			}
			if i%3 != 2 { // every third term's postings are left for next to skip
				s := postStream{cs: []*runCursor{c}}
				ok, err := s.start()
				for j := 0; ok; j++ {
					if j >= len(e.keys) || s.key != e.keys[j] || s.tf != e.tfs[j] {
						t.Fatalf("buffer %d, term %d, posting %d: key %d tf %d", size, i, j, s.key, s.tf)
					}
					ok, err = s.advance()
				}
				if err != nil || s.n != uint64(len(e.keys)) {
					t.Fatalf("buffer %d, term %d: %d postings, %v", size, i, s.n, err)
				}
			}
			if err := c.next(); err != nil {
				t.Fatal(err)
			}
		}
		if !c.done {
			t.Fatalf("buffer %d: terms after the last", size)
		}
	}
	for _, cut := range []int{1, 2, 5, 100, len(data) / 2} {
		c, err := openRun(runFile{path: path, shown: "run-cut"}, 0, int64(len(data)-cut), maxEntryHead)
		for err == nil && !c.done {
			s := postStream{cs: []*runCursor{c}}
			ok, e := s.start()
			for ok && e == nil {
				ok, e = s.advance()
			}
			if err = e; err == nil {
				err = c.next()
			}
		}
		if !errors.Is(err, io.ErrUnexpectedEOF) || !strings.Contains(err.Error(), "run-cut") {
			t.Errorf("cut %d bytes: %v, want an unexpected EOF naming the run", cut, err)
		}
	}
}
