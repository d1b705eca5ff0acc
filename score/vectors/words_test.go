package vectors

import (
	"errors"
	"io"
	"math"
	"path/filepath"
	"strings"
	"testing"
)

type wordsRef struct {
	NumPy string
	IDF   map[string]float64
	Rows  []struct {
		Words    []string
		Known    int
		Mean     []string
		Weighted []string
	}
}

// Source: NumPy 1.24 (Debian python3-numpy), testdata/make_fixtures.py: a
// word-vector text file of 12 words (non-ASCII among them) and 6 seeded
// random float32 values each, written as NumPy's shortest round-trip
// decimals, and for five rows of words (repeats, unknown words, a row with
// none known) the mean of the known words' vectors, plain and weighted by
// the fixture's idf table, summed in float64 in word order and rounded to
// float32 by NumPy. They must agree bit for bit.
func TestWordMeanAgainstNumPy(t *testing.T) {
	var ref wordsRef
	readJSON(t, filepath.Join("testdata", "words_ref.json"), &ref)
	w, err := LoadWordVectors(filepath.Join("testdata", "words.vec"))
	if err != nil {
		t.Fatal(err)
	}
	if w.Len() != 12 || w.Dim() != 6 {
		t.Fatalf("%d words of %d values, want 12 of 6", w.Len(), w.Dim())
	}
	idf := func(word string) float64 { return ref.IDF[word] }
	dst := make([]float32, 6)
	for i, row := range ref.Rows {
		for _, weighted := range []bool{false, true} {
			var weight func(string) float64
			want := row.Mean
			if weighted {
				weight, want = idf, row.Weighted
			}
			known, err := w.Mean(dst, row.Words, weight)
			if err != nil || known != row.Known {
				t.Fatalf("row %d: known %d, %v; want %d", i, known, err, row.Known)
			}
			if known == 0 {
				if !sameBits(dst, make([]float32, 6)) {
					t.Errorf("row %d: no known word, vector %v, want zero", i, dst)
				}
				continue
			}
			var w32 []float32
			for _, h := range want {
				w32 = append(w32, float32(hexFloat(t, h)))
			}
			if !sameBits(dst, w32) {
				t.Errorf("row %d weighted=%v: %v, NumPy %v", i, weighted, dst, w32)
			}
		}
	}
}

// WordSource embeds row after row as Mean does, counts its work and tells
// which rows had no known word.
func TestWordSource(t *testing.T) {
	var ref wordsRef
	readJSON(t, filepath.Join("testdata", "words_ref.json"), &ref)
	w, err := LoadWordVectors(filepath.Join("testdata", "words.vec"))
	if err != nil {
		t.Fatal(err)
	}
	i := 0
	next := func() ([]string, error) {
		if i == len(ref.Rows) {
			return nil, io.EOF
		}
		i++
		return ref.Rows[i-1].Words, nil
	}
	src := w.Source(next, nil)
	m, err := ReadMatrix(src)
	if err != nil {
		t.Fatal(err)
	}
	var lookups, known int64
	for r, row := range ref.Rows {
		lookups += int64(len(row.Words))
		known += int64(row.Known)
		want := make([]float32, 6)
		if _, err := w.Mean(want, row.Words, nil); err != nil {
			t.Fatal(err)
		}
		if !sameBits(m.Row(r), want) {
			t.Errorf("row %d: %v, Mean %v", r, m.Row(r), want)
		}
	}
	if got := src.Work(); got.WordLookups != lookups || got.MultiplyAdds != known*6 {
		t.Errorf("work %+v, want %d lookups and %d multiply-adds", got, lookups, known*6)
	}
	if got := src.Work().FLOPs(); got != float64(8*lookups+2*6*known) {
		t.Errorf("FLOPs %v", got)
	}
	if n, first := src.NoWords(); n != 1 || len(first) != 1 || first[0] != 4 {
		t.Errorf("NoWords %d %v, want 1 [4]", n, first)
	}
	if w.Bytes() != 12*6*4+int64(len("thecatsatonmatdogranfastübernaïvex42"))+12*40 {
		t.Errorf("Bytes %d", w.Bytes())
	}
}

func TestWordMeanWeights(t *testing.T) {
	w, err := ReadWordVectors(strings.NewReader("2 2\na 1 0\nb 0 1\n"), "w.vec", -1)
	if err != nil {
		t.Fatal(err)
	}
	dst := make([]float32, 2)
	for _, bad := range []float64{-1, math.NaN(), math.Inf(1)} {
		if _, err := w.Mean(dst, []string{"a"}, func(string) float64 { return bad }); !errors.Is(err, ErrNotFinite) {
			t.Errorf("weight %v: error %v", bad, err)
		}
	}
	known, err := w.Mean(dst, []string{"a", "b"}, func(string) float64 { return 0 })
	if err != nil || known != 2 || dst[0] != 0 || dst[1] != 0 {
		t.Errorf("zero weights: %d %v %v", known, dst, err)
	}
	if _, err := w.Mean(make([]float32, 3), nil, nil); err == nil {
		t.Error("wrong dst length: no error")
	}
}

func TestWordVectorRefusals(t *testing.T) {
	tests := []struct {
		name, text string
		size       int64
		want       error
		says       string
	}{
		{"empty", "", -1, ErrFormat, "header"},
		{"one number", "3\n", -1, ErrFormat, "w.vec:1: header"},
		{"zero dim", "1 0\na\n", -1, ErrFormat, "header"},
		{"huge count", "2000000000 300\n", 100, ErrTruncated, "more than a file of 100 bytes"},
		{"short", "2 2\na 1 2\n", -1, ErrTruncated, "1 words, the header gives 2"},
		{"long", "1 2\na 1 2\nb 3 4\n", -1, ErrFormat, "w.vec:3: more than the 1 words"},
		{"few values", "1 3\na 1 2\n", -1, ErrLength, "w.vec:2: word \"a\": 2 values"},
		{"many values", "1 1\na 1 2\n", -1, ErrLength, "more than 1 values"},
		{"nan", "1 2\na nan 2\n", -1, ErrNotFinite, "value 1"},
		{"inf", "1 2\na 1 1e39\n", -1, ErrNotFinite, "value 2"},
		{"not a number", "1 2\na 1 x\n", -1, ErrFormat, `value 2 "x"`},
		{"duplicate", "2 1\na 1\na 2\n", -1, ErrDuplicate, "w.vec:3: word \"a\" repeats line 2"},
		{"no values", "1 1\na\n", -1, ErrFormat, "want"},
		{"blank line", "2 1\na 1\n\nb 2\n", -1, ErrFormat, "w.vec:3"},
	}
	for _, tt := range tests {
		_, err := ReadWordVectors(strings.NewReader(tt.text), "w.vec", tt.size)
		if !errors.Is(err, tt.want) || !strings.Contains(err.Error(), tt.says) {
			t.Errorf("%s: error %v, want %v saying %q", tt.name, err, tt.want, tt.says)
		}
	}
	// CRLF lines, double spaces and trailing blank lines are fine.
	w, err := ReadWordVectors(strings.NewReader("2 2\r\na 1  2 \r\nb 3 4\r\n\n"), "w.vec", -1)
	if err != nil {
		t.Fatal(err)
	}
	if v, ok := w.Lookup("a"); !ok || v[0] != 1 || v[1] != 2 {
		t.Errorf("a = %v", v)
	}
}
