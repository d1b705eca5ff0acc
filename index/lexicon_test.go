package index

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestSparseLexiconAndIDs checks what Open keeps of the lexicon and the ids (every 64th term, every
// 16th id offset) against what the pool holds: every term's df and postings, terms it lacks (before
// the first, between two, after the last), and every row's id, read in reverse. The property is
// internal, so no reference values are involved.
func TestSparseLexiconAndIDs(t *testing.T) {
	const rows, words = 700, 1000
	var b bytes.Buffer
	df := map[string]int{}
	var ids []string
	for i := range rows {
		id := fmt.Sprintf("row%d-%s", i, strings.Repeat("x", i%37*i%5))
		ids = append(ids, id)
		fmt.Fprintf(&b, `{"id":%q,"text":"`, id)
		seen := map[string]bool{}
		for j := range 3 {
			w := fmt.Sprintf("q%04dq", 2*((i*7+j*311)%words)) // even numbers only: odd ones are absent
			fmt.Fprintf(&b, "%s ", w)
			if !seen[w] {
				seen[w] = true
				df[w]++
			}
		}
		b.WriteString("\"}\n")
	}
	pool := filepath.Join(t.TempDir(), "pool.jsonl")
	if err := os.WriteFile(pool, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	dir, _ := build(t, pool, Options{ID: "id", Text: "text"})
	ix, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	if ix.NumTerms() != len(df) || len(df) <= 2*lexStride {
		t.Fatalf("%d terms, want %d (more than %d)", ix.NumTerms(), len(df), 2*lexStride)
	}
	if want := (len(df) + lexStride - 1) / lexStride; len(ix.lex.end) != want || cap(ix.lex.at) > want+1 {
		t.Errorf("%d terms kept in memory (room for %d), want %d", len(ix.lex.end), cap(ix.lex.at), want)
	}
	if err := ix.idOffsets(); err != nil { // found when an id is first asked
		t.Fatal(err)
	}
	if want := (rows + idStride - 1) / idStride; len(ix.idOff) != want {
		t.Errorf("%d id offsets kept, want %d", len(ix.idOff), want)
	}
	for _, tc := range []struct {
		term string
		df   int
	}{{"", 0}, {"a", 0}, {"q0001q", 0}, {"q0999q", 0}, {"q1999q", 0}, {"q2000q", 0}, {"zzz", 0}} {
		if got := ix.DF(tc.term); got != tc.df {
			t.Errorf("DF(%q) = %d, want %d", tc.term, got, tc.df)
		}
	}
	for w, want := range df {
		rs, _, err := ix.Postings(w, nil, nil)
		if got := ix.DF(w); got != want || len(rs) != want || err != nil {
			t.Errorf("%q: df %d and %d postings (%v), want %d", w, got, len(rs), err, want)
		}
	}
	for r := rows - 1; r >= 0; r-- {
		if got := ix.RowID(r); got != ids[r] {
			t.Errorf("row %d: id %q, want %q", r, got, ids[r])
		}
	}
	// Open kept the terms of the keys file, reading no entry: every look-up, present or absent,
	// finds what a lexicon walked whole finds.
	if !ix.lex.keyed {
		t.Fatal("Open walked the lexicon; the build wrote its keys")
	}
	var whole lexicon
	if err := whole.load(ix.lex.b, ix.meta.Terms, ix.meta.Rows, uint64(len(ix.postings))); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(whole.keep, ix.lex.keep) || fmt.Sprint(whole.at, whole.post) != fmt.Sprint(ix.lex.at, ix.lex.post) {
		t.Error("the keys file keeps other terms than a walk of the lexicon")
	}
	for i := range 2*words + 2 {
		for _, term := range []string{fmt.Sprintf("q%04dq", i), fmt.Sprintf("q%04d", i), fmt.Sprintf("q%04dqa", i)} {
			e, ok, err := ix.lex.find(term)
			we, wok, _ := whole.find(term)
			if e != we || ok != wok || err != nil {
				t.Errorf("%q: keyed %v %v (%v), walked %v %v", term, e, ok, err, we, wok)
			}
		}
	}
}
