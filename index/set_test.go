package index

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// setFiles returns a few T0 files from ../shared/data (real rows, several shapes of text), or
// skips.
func setFiles(t *testing.T, n int) []string {
	t.Helper()
	files, _ := sharedPool(t)
	step := len(files) / n
	var out []string
	for i := 0; i < n; i++ {
		out = append(out, files[i*step])
	}
	return out
}

// buildOne builds one index of files and opens it until the test ends.
func buildOne(t *testing.T, files []string, opt Options) *Index {
	t.Helper()
	dir := filepath.Join(t.TempDir(), "one")
	if _, err := Build(context.Background(), dir, files, opt); err != nil {
		t.Fatal(err)
	}
	ix, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { ix.Close() })
	return ix
}

// buildSet builds one segment per part of files, cut at cuts, and writes a set naming them.
func buildSet(t *testing.T, files []string, cuts []int, opt Options) string {
	t.Helper()
	return buildSetOverlap(t, files, cuts, opt, false)
}

// buildSetOverlap is buildSet for files that may repeat when overlap is true.
func buildSetOverlap(t *testing.T, files []string, cuts []int, opt Options, overlap bool) string {
	t.Helper()
	dir := t.TempDir()
	var segs []string
	from := 0
	for i, to := range append(cuts, len(files)) {
		seg := filepath.Join(dir, fmt.Sprintf("seg%d", i))
		if _, err := Build(context.Background(), seg, files[from:to], opt); err != nil {
			t.Fatal(err)
		}
		segs, from = append(segs, seg), to
	}
	set := filepath.Join(dir, "pool.set")
	if _, err := WriteSet(set, segs, overlap); err != nil {
		t.Fatal(err)
	}
	return set
}

// TestSetReadsAsOneIndex checks that segments of a pool, read through a set file, give every
// answer a scorer or a pick asks of an index, bit for bit, as one index of the same files: the
// statistics summed, postings renumbered, TF-IDF norms under the set's document frequencies, rows
// copied byte for byte. The pool is cut 1, 2, 3 and 7 ways, and at random places.
func TestSetReadsAsOneIndex(t *testing.T) {
	files := setFiles(t, 14)
	opt := Options{Text: "prompt,completion", NoDups: true}
	one := buildOne(t, files, opt)
	splits := map[string][]int{
		"1 way":  nil,
		"2 ways": {7},
		"3 ways": {5, 9},
		"7 ways": {2, 4, 6, 8, 10, 12},
	}
	rng := rand.New(rand.NewPCG(1, 2))
	for i := range 3 {
		var cuts []int
		for c := 1; c < len(files); c++ {
			if rng.IntN(3) == 0 {
				cuts = append(cuts, c)
			}
		}
		splits[fmt.Sprintf("random %d: %v", i, cuts)] = cuts
	}
	for name, cuts := range splits {
		t.Run(name, func(t *testing.T) {
			set, err := Open(buildSet(t, files, cuts, opt))
			if err != nil {
				t.Fatal(err)
			}
			defer set.Close()
			// The norms pass gives back what it has read after every page or so, here: its sums
			// cannot change for it.
			set.set.releaseEvery = 1
			sameIndex(t, one, set)
		})
	}
}

func sameIndex(t *testing.T, one, set *Index) {
	t.Helper()
	a, b := one.Meta(), set.Meta()
	if a.Rows != b.Rows || a.TotalLen != b.TotalLen || a.Terms != b.Terms || a.Postings != b.Postings ||
		math.Float64bits(a.AvgLen) != math.Float64bits(b.AvgLen) || a.Text != b.Text || len(a.Sources) != len(b.Sources) {
		t.Fatalf("meta differs:\none %+v\nset %+v", a, b)
	}
	if one.NumTerms() != set.NumTerms() {
		t.Fatalf("terms: one %d, set %d", one.NumTerms(), set.NumTerms())
	}
	var terms []string
	one.lex.each(func(term []byte) { terms = append(terms, string(term)) })
	var r1, t1, r2, t2 []uint32
	for i, term := range terms {
		if one.DF(term) != set.DF(term) {
			t.Fatalf("df(%q): one %d, set %d", term, one.DF(term), set.DF(term))
		}
		r1, t1, _ = one.Postings(term, r1[:0], t1[:0])
		r2, t2, _ = set.Postings(term, r2[:0], t2[:0])
		if fmt.Sprint(r1, t1) != fmt.Sprint(r2, t2) {
			t.Fatalf("postings of %q differ", term)
		}
		if i%97 == 0 { // cursors, a stretch of rows at a time
			c, stretch := set.NewCursor(term), 1+i%1000
			r2, t2 = r2[:0], t2[:0]
			for end := stretch; len(r2) < len(r1) && end < set.NumRows()+stretch; end += stretch {
				r2, t2, _ = c.Next(end, r2, t2)
			}
			if fmt.Sprint(r1, t1) != fmt.Sprint(r2, t2) {
				t.Fatalf("cursor over %q differs", term)
			}
		}
	}
	var all []int
	for r := range one.NumRows() {
		t1, ok1, b1 := one.RowTokens(r)
		t2, ok2, b2 := set.RowTokens(r)
		switch {
		case one.RowLen(r) != set.RowLen(r), t1 != t2, ok1 != ok2, b1 != b2:
			t.Fatalf("row %d: length or tokens differ", r)
		case math.Float64bits(one.RowNorm(r)) != math.Float64bits(set.RowNorm(r)):
			t.Fatalf("row %d: norm %v, set %v", r, one.RowNorm(r), set.RowNorm(r))
		case one.RowID(r) != set.RowID(r), one.RowLocation(r) != set.RowLocation(r):
			t.Fatalf("row %d: id or location differ: %v %v", r, one.RowLocation(r), set.RowLocation(r))
		}
		if r%3 != 1 {
			all = append(all, r)
		}
	}
	var c1, c2 bytes.Buffer
	if err := one.CopyRows(&c1, all); err != nil {
		t.Fatal(err)
	}
	if err := set.CopyRows(&c2, all); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(c1.Bytes(), c2.Bytes()) {
		t.Fatal("copied rows differ")
	}
}

// TestSetRefuses checks what a set will not be made of, and that each refusal names both sides.
func TestSetRefuses(t *testing.T) {
	pool := testPool(t, 40)
	a, _ := build(t, pool, Options{Text: "prompt,completion"})
	other := filepath.Join(t.TempDir(), "other.jsonl")
	os.WriteFile(other, []byte(`{"prompt":"ferry","completion":"tide"}`+"\n"), 0o644)
	mk := func(opt Options) string {
		dir := filepath.Join(t.TempDir(), "idx")
		if _, err := Build(context.Background(), dir, []string{other}, opt); err != nil {
			t.Fatal(err)
		}
		return dir
	}
	dir := t.TempDir()
	notSet := filepath.Join(dir, "notes.txt")
	os.WriteFile(notSet, []byte("mine\n"), 0o644)
	for _, tc := range []struct {
		name string
		out  string
		segs []string
		want error
		says string
	}{
		{"another analyzer", "", []string{a, mk(Options{Text: "prompt,completion", Analyzer: "plain"})}, ErrIncompatible, "analyzer"},
		{"other text fields", "", []string{a, mk(Options{Text: "prompt"})}, ErrIncompatible, `"prompt"`},
		{"a file twice", "", []string{a, a}, ErrOverlap, "pool.jsonl is in"},
		{"not a set file", notSet, []string{a}, nil, "did not write as a set file"},
		{"a folder", a, []string{a}, nil, "is a folder"},
		{"inside another index", filepath.Join(mk(Options{Text: "prompt,completion"}), "pool.set"), []string{a}, nil, "is an index folder"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			out := tc.out
			if out == "" {
				out = filepath.Join(t.TempDir(), "pool.set")
			}
			_, err := WriteSet(out, tc.segs, false)
			if err == nil || tc.want != nil && !errors.Is(err, tc.want) || !strings.Contains(err.Error(), tc.says) {
				t.Fatalf("got %v, want %v saying %q", err, tc.want, tc.says)
			}
			if b, _ := os.ReadFile(notSet); string(b) != "mine\n" {
				t.Fatal("a file that is not a set was replaced")
			}
		})
	}
	// The same file twice is allowed when asked for, and its rows are then read twice.
	out := filepath.Join(t.TempDir(), "twice.set")
	if _, err := WriteSet(out, []string{a, a}, true); err != nil {
		t.Fatal(err)
	}
	ix, err := Open(out)
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	one, _ := Open(a)
	defer one.Close()
	if ix.NumRows() != 2*one.NumRows() {
		t.Fatalf("rows %d, want %d", ix.NumRows(), 2*one.NumRows())
	}
}

// TestRebuildRefuses checks that a rebuild refuses a pool file changed since it was indexed, and
// segments that found duplicates differently.
func TestRebuildRefuses(t *testing.T) {
	pool := testPool(t, 30)
	a, _ := build(t, pool, Options{Text: "prompt,completion"})
	other := filepath.Join(t.TempDir(), "other.jsonl")
	os.WriteFile(other, []byte(`{"prompt":"ferry","completion":"tide"}`+"\n"), 0o644)
	b := filepath.Join(t.TempDir(), "idx")
	if _, err := Build(context.Background(), b, []string{other}, Options{Text: "prompt,completion", NoDups: true}); err != nil {
		t.Fatal(err)
	}
	set := filepath.Join(t.TempDir(), "pool.set")
	if _, err := WriteSet(set, []string{a, b}, false); err != nil {
		t.Fatal(err)
	}
	if _, _, err := RebuildFrom(set, Options{}); err == nil || !strings.Contains(err.Error(), "found duplicates differently") {
		t.Errorf("segments with and without duplicates: got %v", err)
	}
	files, opt, err := RebuildFrom(a, Options{Mem: 1 << 24})
	if err != nil || len(files) != 1 || opt.Text != "prompt,completion" || opt.Mem != 1<<24 || opt.NoDups {
		t.Fatalf("got %v %+v %v", files, opt, err)
	}
	f, _ := os.OpenFile(pool, os.O_APPEND|os.O_WRONLY, 0)
	f.WriteString(`{"prompt":"new","completion":"row"}` + "\n")
	f.Close()
	if _, _, err := RebuildFrom(a, Options{}); err == nil || !strings.Contains(err.Error(), "has changed since") {
		t.Errorf("a changed pool file: got %v", err)
	}
}
