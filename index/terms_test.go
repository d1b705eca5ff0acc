package index

import (
	"bufio"
	"bytes"
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"sluice/index/analysis"
)

// kept returns the terms of text under an that an index keeps: those of at most MaxTermBytes.
func kept(an *analysis.Analyzer, text []byte) []string {
	var terms []string
	an.Each(text, func(t []byte) {
		if len(t) <= MaxTermBytes {
			terms = append(terms, string(t))
		}
	})
	return terms
}

// TestCutLongRunsKeepsTerms: cutting the middle out of long runs of letters, digits and underscores
// changes no term an index keeps, whatever stands around the runs (punctuation that joins words,
// like "." and "'", non-ASCII letters and marks, which send text through bleve's own tokenizer)
// and whichever analyzer reads them. The property is internal, so no reference values are
// involved: the analyzer, itself checked against bleve, is the judge.
func TestCutLongRunsKeepsTerms(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	pieces := []string{" ", "  ", ".", "'", "'s ", ":", ",", "-", "_", "a", "Z", "7", "é", "\u0301", "日本", "x.y", "3.5", "\n", "ß", "İ", "\t"}
	run := func() string {
		var b strings.Builder
		n := []int{longRun - 1, longRun, longRun + 1, 2000, 5000}[rng.IntN(5)]
		alphabet := []string{"abcxyz", "0123456789", "_", "aZ09_", "a1"}[rng.IntN(5)]
		for b.Len() < n {
			b.WriteByte(alphabet[rng.IntN(len(alphabet))])
		}
		// Letters only in the middle, so the cut leaves digits or underscores alone at the ends.
		if rng.IntN(4) == 0 {
			s := []byte(b.String())
			for i := range s {
				s[i] = '_'
			}
			s[len(s)/2] = 'q'
			return string(s)
		}
		return b.String()
	}
	cuts := 0
	for _, name := range analysis.Names() {
		an, err := analysis.New(name)
		if err != nil {
			t.Fatal(err)
		}
		var buf []byte
		for i := range 400 {
			var b strings.Builder
			for range 1 + rng.IntN(6) {
				for range rng.IntN(4) {
					b.WriteString(pieces[rng.IntN(len(pieces))])
				}
				if rng.IntN(2) == 0 {
					b.WriteString(run())
				} else {
					b.WriteString("ferry tide harbour")
				}
				for range rng.IntN(4) {
					b.WriteString(pieces[rng.IntN(len(pieces))])
				}
			}
			text := []byte(b.String())
			var cut []byte
			cut, buf = cutLongRuns(text, buf)
			if len(cut) < len(text) {
				cuts++
			}
			if want, got := kept(an, text), kept(an, cut); !slices.Equal(want, got) {
				t.Fatalf("%s, text %d (%d bytes, cut to %d): terms\n%q\nwant\n%q", name, i, len(text), len(cut), got, want)
			}
		}
	}
	if cuts < 200 {
		t.Errorf("only %d texts of 800 were cut: the test does not test", cuts)
	}
}

// TestCutLongRunsLeavesOrdinaryText: text without a long run comes back as it is, not copied.
func TestCutLongRunsLeavesOrdinaryText(t *testing.T) {
	for _, text := range []string{"", "short", strings.Repeat("word ", 2000), strings.Repeat("x", longRun) + " " + strings.Repeat("y", longRun)} {
		got, _ := cutLongRuns([]byte(text), nil)
		if string(got) != text {
			t.Errorf("%.20q… changed", text)
		}
	}
	long := strings.Repeat("x", 5000)
	got, _ := cutLongRuns([]byte("a "+long+" b"), nil)
	if want := "a " + long[:keepRun] + long[:keepRun] + " b"; string(got) != want {
		t.Errorf("cut to %d bytes, want %d", len(got), len(want))
	}
}

// TestLongTermsDropped: a term longer than MaxTermBytes is left out of the index and of its row's
// length, and out of target rows, however long it is; a term of exactly MaxTermBytes stays.
func TestLongTermsDropped(t *testing.T) {
	edge := strings.Repeat("q", MaxTermBytes)
	over := strings.Repeat("k", MaxTermBytes+1)
	huge := strings.Repeat("h", 1<<20)
	row := fmt.Sprintf(`{"text":"ferry %s %s %s tide"}`, edge, over, huge)
	pool := filepath.Join(t.TempDir(), "pool.jsonl")
	os.WriteFile(pool, []byte(row+"\n"+`{"text":"tide"}`+"\n"), 0o644)
	dir, _ := build(t, pool, Options{Text: "text", Analyzer: "plain"})
	ix, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	for term, df := range map[string]int{"ferry": 1, "tide": 2, edge: 1, over: 0, huge: 0} {
		if got := ix.DF(term); got != df {
			t.Errorf("df of a term of %d bytes: %d, want %d", len(term), got, df)
		}
	}
	if ix.RowLen(0) != 3 {
		t.Errorf("row length %d, want 3: ferry, tide and the term of %d bytes", ix.RowLen(0), MaxTermBytes)
	}
	an, _ := analysis.New("plain")
	targets, _, err := ReadTargets(pool, "text", "", an, 0)
	if err != nil {
		t.Fatal(err)
	}
	if want := []string{"ferry", edge, "tide"}; !slices.Equal(targets[0].Terms, want) {
		t.Errorf("target terms of %d terms, want %d", len(targets[0].Terms), len(want))
	}
}

// TestSpillBoundsDictionary builds a pool of many long distinct terms, more term bytes in one batch
// than Options.Mem: the worker must spill between rows, at least as often as the term bytes alone
// require, and the index must be the same as with memory to spare.
func TestSpillBoundsDictionary(t *testing.T) {
	pool := filepath.Join(t.TempDir(), "pool.jsonl")
	f, err := os.Create(pool)
	if err != nil {
		t.Fatal(err)
	}
	w := bufio.NewWriter(f)
	var termBytes int64
	for r := range 1500 {
		w.WriteString(`{"text":"ferry`)
		for k := range 20 {
			// 200 bytes, all distinct: a row number and a term number, then padding.
			term := fmt.Sprintf("t%dx%dz", r, k)
			term += strings.Repeat("w", 200-len(term))
			termBytes += int64(len(term))
			w.WriteString(" " + term)
		}
		w.WriteString(`"}` + "\n")
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	f.Close()
	const mem = 1 << 20
	small, st := build(t, pool, Options{Text: "text", Analyzer: "plain", Workers: 1, Mem: mem})
	t.Logf("%d runs", st.Runs)
	if min := int(termBytes / mem); st.Runs < min {
		t.Errorf("%d runs with %d bytes of terms and --mem %d: a dictionary outgrew its memory, want %d runs at least", st.Runs, termBytes, mem, min)
	}
	large, st := build(t, pool, Options{Text: "text", Analyzer: "plain", Workers: 1, Mem: 1 << 30})
	if st.Runs != 0 {
		t.Errorf("%d runs with memory to spare", st.Runs)
	}
	for _, name := range []string{lexiconFile, postingsFile, rowsFile, normsFile, rejectedFile} {
		a, _ := os.ReadFile(filepath.Join(small, name))
		b, _ := os.ReadFile(filepath.Join(large, name))
		if !bytes.Equal(a, b) {
			t.Errorf("%s differs between --mem %d and --mem 1 GiB", name, mem)
		}
	}
}

// TestTokenCountTooLarge: a token count that the rows file cannot hold is quarantined with a reason
// that names the field and the limit.
func TestTokenCountTooLarge(t *testing.T) {
	pool := filepath.Join(t.TempDir(), "pool.jsonl")
	os.WriteFile(pool, []byte(`{"text":"ferry","n_tok":4294967295}`+"\n"+`{"text":"tide","n_tok":7}`+"\n"), 0o644)
	dir, st := build(t, pool, Options{Text: "text", Tokens: "n_tok"})
	if st.RowsRejected != 1 {
		t.Fatalf("%d rows quarantined, want 1", st.RowsRejected)
	}
	b, _ := os.ReadFile(filepath.Join(dir, rejectedFile))
	var r Reject
	if err := json.Unmarshal(b, &r); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{`"n_tok"`, "4294967294", "4294967295"} {
		if !strings.Contains(r.Reason, want) {
			t.Errorf("reason lacks %s: %s", want, r.Reason)
		}
	}
}

// TestMidBatchSpillFloor: a tiny memory share must not make a run of every row, which would open as
// many files at the merge; below midBatchSpill a worker spills only between batches. The pool is
// read in two batches: the first hundred rows, read to settle the text shape, and the rest.
func TestMidBatchSpillFloor(t *testing.T) {
	_, st := build(t, testPool(t, 3000), Options{Workers: 1, Mem: 1 << 10, batchRows: 1 << 14})
	if st.Runs > 2 {
		t.Errorf("%d runs from two batches with a tiny --mem", st.Runs)
	}
}
