package decontam

import (
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// fixture is testdata/rows.json (made by testdata/rows.py from score/testdata/texts.json) and
// testdata/reference.json (made by testdata/reference.py).
type fixture struct {
	Eval []struct {
		File int
		Line int64
		Text string
	}
	Pool []struct {
		How  string
		Text string
	}
	EvalWords [][]string `json:"eval_words"`
	PoolWords [][]string `json:"pool_words"`
	Results   map[string]struct {
		Distinct int
		Rows     []struct {
			Hit   bool
			File  int
			Line  int64
			At    int
			Words []string
		}
	}
}

func loadFixture(t testing.TB) fixture {
	t.Helper()
	var f fixture
	for _, name := range []string{"rows.json", "reference.json"} {
		b, err := os.ReadFile(filepath.Join("testdata", name))
		if err != nil {
			t.Fatal(err)
		}
		if err := json.Unmarshal(b, &f); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
	}
	if len(f.EvalWords) != len(f.Eval) || len(f.PoolWords) != len(f.Pool) {
		t.Fatal("reference.json does not cover rows.json: rerun testdata/reference.py")
	}
	return f
}

// TestWordsMatchesPython checks Words against the split of testdata/reference.py (unicodedata
// categories, str.lower) on every fixture text.
func TestWordsMatchesPython(t *testing.T) {
	f := loadFixture(t)
	for i, e := range f.Eval {
		if got := Words(nil, e.Text); !slices.Equal(got, f.EvalWords[i]) {
			t.Errorf("evaluation row %d: %q, Python %q", i, got, f.EvalWords[i])
		}
	}
	for i, p := range f.Pool {
		if got := Words(nil, p.Text); !slices.Equal(got, f.PoolWords[i]) {
			t.Errorf("pool row %d: %q, Python %q", i, got, f.PoolWords[i])
		}
	}
}

// TestCheckMatchesPython checks every pool row of the fixture against a brute-force n-gram set
// intersection in Python (testdata/reference.py: tuples of words, no hashing) for N = 13, 8
// and 3: whether it hits, the evaluation file and line, and the shared n-gram.
func TestCheckMatchesPython(t *testing.T) {
	f := loadFixture(t)
	for _, n := range []int{DefaultN, 8, 3} {
		t.Run(fmt.Sprint("N=", n), func(t *testing.T) {
			ref, ok := f.Results[fmt.Sprint(n)]
			if !ok {
				t.Fatalf("reference.json has no results for N = %d", n)
			}
			b, err := NewBuilder(n)
			if err != nil {
				t.Fatal(err)
			}
			for _, e := range f.Eval {
				if err := b.Add(e.File, e.Line, Words(nil, e.Text)); err != nil {
					t.Fatal(err)
				}
			}
			s := b.Set()
			if s.Len() != ref.Distinct {
				t.Errorf("%d distinct n-grams, Python %d", s.Len(), ref.Distinct)
			}
			hits := 0
			for i, p := range f.Pool {
				want := ref.Rows[i]
				hit, ok := s.Check(Words(nil, p.Text))
				if ok != want.Hit {
					t.Errorf("pool row %d (%s) %q: hit %v, Python %v", i, p.How, p.Text, ok, want.Hit)
					continue
				}
				if !ok {
					continue
				}
				hits++
				if hit.File != want.File || hit.Line != want.Line || hit.At != want.At || !slices.Equal(hit.Words, want.Words) {
					t.Errorf("pool row %d (%s): %+v, Python %+v", i, p.How, hit, want)
				}
			}
			if hits == 0 || hits == len(f.Pool) {
				t.Errorf("%d of %d rows hit: the fixture checks too little", hits, len(f.Pool))
			}
		})
	}
}

// TestShortRows spells out the rule for rows shorter than N words.
func TestShortRows(t *testing.T) {
	b, err := NewBuilder(4)
	if err != nil {
		t.Fatal(err)
	}
	for i, text := range []string{"veni vidi vici", "a b c d e f"} {
		if err := b.Add(0, int64(i+1), Words(nil, text)); err != nil {
			t.Fatal(err)
		}
	}
	s := b.Set()
	tests := []struct {
		text string
		hit  bool
		line int64
	}{
		{"Veni, vidi, VICI!", true, 1},         // the same short row
		{"veni vidi", false, 0},                // shorter: a different length
		{"veni vidi vici et cetera", false, 0}, // longer rows look for 4-grams only
		{"a b c", false, 0},                    // the start of a long evaluation row
		{"x c d e f", true, 2},                 // a shared 4-gram
		{"", false, 0},
		{"?!", false, 0},
	}
	for _, tc := range tests {
		hit, ok := s.Check(Words(nil, tc.text))
		if ok != tc.hit || ok && hit.Line != tc.line {
			t.Errorf("%q: %+v, %v; want hit %v at line %d", tc.text, hit, ok, tc.hit, tc.line)
		}
	}
}

func TestErrors(t *testing.T) {
	if _, err := NewBuilder(0); !errors.Is(err, ErrParams) {
		t.Errorf("NewBuilder(0): %v, want ErrParams", err)
	}
	b, err := NewBuilder(2)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range [][2]int64{{-1, 1}, {0, -1}, {1 << 40, 1}} {
		if err := b.Add(int(c[0]), c[1], []string{"a", "b"}); !errors.Is(err, ErrRow) {
			t.Errorf("Add(%d, %d): %v, want ErrRow", c[0], c[1], err)
		}
	}
	if _, ok := b.Set().Check([]string{"a", "b"}); ok {
		t.Error("an empty set hits")
	}
}

// TestSetAgainstMap checks the sorted table and its directory on a set large enough for many
// buckets, against a Go map of the same keys.
func TestSetAgainstMap(t *testing.T) {
	b, err := NewBuilder(3)
	if err != nil {
		t.Fatal(err)
	}
	first := map[uint64]int64{}
	for line := int64(0); line < 3000; line++ {
		w := make([]string, 20)
		for i := range w {
			w[i] = fmt.Sprint((line*7 + int64(i)*13) % 99991) // repeats across rows: first lines must win
		}
		if err := b.Add(0, line, w); err != nil {
			t.Fatal(err)
		}
		g := newGrams(w, 3)
		for g.next() {
			if _, ok := first[g.key]; !ok {
				first[g.key] = line
			}
		}
	}
	s := b.Set()
	if s.Len() != len(first) || len(s.dir) < 1000 {
		t.Fatalf("%d keys (map %d), %d buckets", s.Len(), len(first), len(s.dir))
	}
	for k, line := range first {
		row, ok := s.find(k)
		if !ok || s.origins[row].line != line {
			t.Fatalf("key %x: row %d, %v; want line %d", k, row, ok, line)
		}
		if _, in := first[k^1]; !in {
			if _, ok := s.find(k ^ 1); ok {
				t.Fatalf("key %x found but never added", k^1)
			}
		}
	}
	t.Logf("%d n-grams, %d bytes: %.1f B per n-gram", s.Len(), s.Bytes(), float64(s.Bytes()-16*len(s.origins))/float64(s.Len()))
}

func TestCheckAllocs(t *testing.T) {
	b, _ := NewBuilder(DefaultN)
	text := "It was the best of times, it was the worst of times, it was the age of wisdom, it was the age of foolishness"
	b.Add(0, 1, Words(nil, text))
	s := b.Set()
	w := Words(nil, strings.ToUpper(text))
	if n := testing.AllocsPerRun(100, func() { s.Check(w) }); n != 0 {
		t.Errorf("%v allocations per Check", n)
	}
	if _, ok := s.Check(w); !ok {
		t.Error("no hit")
	}
}

func FuzzWords(f *testing.F) {
	f.Add("It was the BEST of times—it was the worst of times.")
	f.Add("e\u0301t\u00e9 \xff\xe2\x82 ΣΊΣΥΦΟΣ İ ǅ")
	f.Fuzz(func(t *testing.T, text string) {
		w := Words(nil, text)
		for _, x := range w {
			if x == "" {
				t.Fatalf("%q: empty word", text)
			}
		}
		if again := Words(nil, strings.Join(w, " ")); !slices.Equal(again, w) {
			t.Fatalf("%q: words %q split again give %q", text, w, again)
		}
	})
}

func FuzzCheck(f *testing.F) {
	f.Add("It was the best of times, it was the worst of times", "the worst of times", 3)
	f.Add("a", "", 1)
	f.Fuzz(func(t *testing.T, eval, pool string, n int) {
		n = 1 + (n%16+16)%16
		b, err := NewBuilder(n)
		if err != nil {
			t.Fatal(err)
		}
		ew := Words(nil, eval)
		if err := b.Add(0, 1, ew); err != nil {
			t.Fatal(err)
		}
		s := b.Set()
		s.Check(Words(nil, pool))
		// An evaluation row always meets itself.
		if _, ok := s.Check(ew); ok != (len(ew) > 0) {
			t.Fatalf("%q with N = %d: hit %v on itself", eval, n, ok)
		}
	})
}
