package dedup

import (
	"encoding/hex"
	"errors"
	"slices"
	"testing"
)

func TestNormalize(t *testing.T) {
	// Expected forms follow the rules stated on Normalize; the foldings are those of
	// CaseFolding.txt (status C and S), as TestFoldMatchesCaseFolding checks.
	tests := []struct{ name, in, want string }{
		{"empty", "", ""},
		{"only space", " \t\n\u00a0\u3000", ""},
		{"trim and collapse", "  a \t\r\n b  ", "a b"},
		{"ascii case", "Hello WORLD", "hello world"},
		{"punctuation kept", "a+b = c-d!", "a+b = c-d!"},
		{"final sigma", "ΣΊΣΥΦΟΣ σίσυφος", "σίσυφοσ σίσυφοσ"},
		{"sharp s stays", "Straße STRASSE ẞ", "straße strasse ß"},
		{"kelvin sign", "\u212a", "k"},
		{"dotted and dotless i", "ı I İ", "ı i İ"},
		{"cherokee folds to capitals", "\uab70\u13a0", "\u13a0\u13a0"},
		{"no NFC", "e\u0301 é", "e\u0301 é"},
		{"invalid bytes kept", "A\xffB \xc3", "a\xffb \xc3"},
		{"U+FFFD kept", "\ufffd", "\ufffd"},
		{"next line and no-break space are space", "a\u0085b\u00a0c", "a b c"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := string(Normalize(nil, []byte(tc.in))); got != tc.want {
				t.Errorf("Normalize(%q) = %q, want %q", tc.in, got, tc.want)
			}
		})
	}
}

// TestExactMatchesPython checks normalised texts, keys and duplicate groups against a plain
// hash-and-group in Python (testdata/reference.py: str.casefold, str.split, hashlib.sha256) on
// the rows of testdata/rows.json.
func TestExactMatchesPython(t *testing.T) {
	texts, ref := loadFixture(t)
	var h Hasher
	var ex Exact
	groups := map[int][]int{}
	for i, text := range texts {
		if got := string(Normalize(nil, []byte(text))); got != ref.Normalised[i] {
			t.Errorf("row %d: Normalize = %q, Python %q", i, got, ref.Normalised[i])
		}
		h.Write([]byte(text))
		k := h.Sum()
		if got := hex.EncodeToString(k[:]); got != ref.Keys[i] {
			t.Errorf("row %d: key %s, Python %s", i, got, ref.Keys[i])
		}
		first, err := ex.Add(i, k)
		if err != nil {
			t.Fatal(err)
		}
		groups[first] = append(groups[first], i)
	}
	if ex.Len() != ref.DistinctKeys {
		t.Errorf("%d distinct keys, Python %d", ex.Len(), ref.DistinctKeys)
	}
	var got [][]int
	for i := range texts {
		if g := groups[i]; len(g) > 1 {
			got = append(got, g)
		}
	}
	if !slices.EqualFunc(got, ref.Groups, slices.Equal) {
		t.Errorf("groups\n%v\nPython\n%v", got, ref.Groups)
	}
	if len(ref.Groups) == 0 {
		t.Error("the fixture has no exact duplicates: nothing was checked")
	}
}

// TestHasherParts checks that a text written in parts, cut anywhere (inside runes, inside white
// space), has the key of the whole, and that Reset and Sum start a new row.
func TestHasherParts(t *testing.T) {
	texts := []string{"", "  Ab\u00a0\u00a0Σ ς\xff\xe2\x82 x ", "Straße\u3000  \t end\u0085", "\xe2\x82\xac\xc3"}
	for _, text := range texts {
		var whole Hasher
		whole.Write([]byte(text))
		want := whole.Sum()
		for cut := 0; cut <= len(text); cut++ {
			for cut2 := cut; cut2 <= len(text); cut2++ {
				var h Hasher
				h.Write([]byte("something to drop"))
				h.Reset()
				h.Write([]byte(text[:cut]))
				h.Write([]byte(text[cut:cut2]))
				h.Write([]byte(text[cut2:]))
				if got := h.Sum(); got != want {
					t.Fatalf("%q cut at %d and %d: key differs from the whole", text, cut, cut2)
				}
				h.Write([]byte(text))
				if got := h.Sum(); got != want {
					t.Fatalf("%q: second row after Sum differs", text)
				}
			}
		}
		if got := Normalize(nil, []byte(text)); string(Normalize(nil, got)) != string(got) {
			t.Errorf("Normalize(%q) is not idempotent", text)
		}
	}
}

func TestHasherLongRow(t *testing.T) {
	// A row far longer than the Hasher's buffer: the key must still be that of the whole.
	var b []byte
	for i := 0; len(b) < 3*flushAt; i++ {
		b = append(b, "Ünïcode  wörds\tand ASCII "...)
	}
	var h Hasher
	h.Write(b)
	got := h.Sum()
	n := Normalize(nil, b)
	var h2 Hasher
	h2.init()
	h2.n.d.Write(n)
	var sum [32]byte
	h2.n.d.Sum(sum[:0])
	if !slices.Equal(got[:], sum[:16]) {
		t.Error("key of a long row differs from SHA-256 of its normalised text")
	}
	if w := h.Work(); w.Bytes != int64(len(b)) || w.Hashed != int64(len(n)) {
		t.Errorf("work %+v, want %d bytes read and %d hashed", w, len(b), len(n))
	}
}

func TestHasherAllocs(t *testing.T) {
	text := []byte("Some years ago—never mind how long precisely—having little or no money in my purse")
	var h Hasher
	h.Write(text)
	h.Sum()
	if n := testing.AllocsPerRun(100, func() { h.Write(text); h.Sum() }); n != 0 {
		t.Errorf("%v allocations per row", n)
	}
}

func TestExactErrors(t *testing.T) {
	var ex Exact
	for _, row := range []int{-1, MaxRow + 1} {
		if _, err := ex.Add(row, Key{}); !errors.Is(err, ErrRow) {
			t.Errorf("Add(%d): %v, want ErrRow", row, err)
		}
	}
	if first, err := ex.Add(MaxRow, Key{1}); err != nil || first != MaxRow {
		t.Errorf("Add(MaxRow) = %d, %v", first, err)
	}
}

func FuzzNormalize(f *testing.F) {
	f.Add([]byte("  Ab\u00a0Σ ς\xff x "), 3)
	f.Add([]byte("Straße\u3000\t end\u0085"), 0)
	f.Add([]byte("\xe2\x82"), 1)
	f.Fuzz(func(t *testing.T, text []byte, cut int) {
		n := Normalize(nil, text)
		if string(Normalize(nil, n)) != string(n) {
			t.Fatalf("Normalize(%q) = %q is not a fixed point", text, n)
		}
		var whole, parts Hasher
		whole.Write(text)
		if cut < 0 {
			cut = -cut
		}
		if len(text) > 0 {
			cut %= len(text) + 1
		} else {
			cut = 0
		}
		parts.Write(text[:cut])
		parts.Write(text[cut:])
		if whole.Sum() != parts.Sum() {
			t.Fatalf("%q cut at %d: key differs from the whole", text, cut)
		}
	})
}
