package analysis

import (
	"errors"
	"fmt"
	"slices"
	"strings"
	"testing"
)

// bleveTerms runs bleve's own analyzer over the whole text: the reference
// every test here compares the fast path with.
func bleveTerms(a *Analyzer, text []byte) []string {
	var terms []string
	a.bleveEach(text, func(term []byte, _ *uint64) { terms = append(terms, string(term)) })
	return terms
}

func mustNew(t testing.TB, name string) *Analyzer {
	t.Helper()
	a, err := New(name)
	if err != nil {
		t.Fatal(err)
	}
	return a
}

func TestNew(t *testing.T) {
	if got, want := Names(), []string{"english", "plain", "english-nostem", "sklearn"}; !slices.Equal(got, want) {
		t.Fatalf("Names() = %q, want %q", got, want)
	}
	for _, name := range Names() {
		a := mustNew(t, name)
		if a.Name() != name {
			t.Errorf("New(%q).Name() = %q", name, a.Name())
		}
		if a.Describe() == "" {
			t.Errorf("New(%q).Describe() = %q", name, a.Describe())
		}
	}
	for _, name := range []string{"", "English", "en", "standard"} {
		_, err := New(name)
		if !errors.Is(err, ErrUnknownAnalyzer) {
			t.Fatalf("New(%q) error = %v, want ErrUnknownAnalyzer", name, err)
		}
		for _, known := range Names() {
			if !strings.Contains(err.Error(), known) {
				t.Errorf("New(%q) error %q does not list %q", name, err, known)
			}
		}
	}
}

// TestClasses derives the byte classes again from the ASCII entries of
// segment's ragel/uwb.rl (Unicode 8.0 WordBreakProperty.txt).
func TestClasses(t *testing.T) {
	for i := 0; i < 256; i++ {
		var want byte
		switch c := byte(i); {
		case c >= 0x80:
			want = cHigh
		case 'A' <= c && c <= 'Z', 'a' <= c && c <= 'z': // ALetter 0x41..0x5A, 0x61..0x7A
			want = cLetter
		case '0' <= c && c <= '9': // Numeric 0x30..0x39
			want = cDigit
		case c == 0x5F: // ExtendNumLet
			want = cExtend
		case c == 0x3A: // MidLetter
			want = cMidLet
		case c == 0x2C, c == 0x3B: // MidNum
			want = cMidNum
		case c == 0x2E, c == 0x27: // MidNumLet, Single_Quote
			want = cMidBoth
		case c == 0x22: // Double_Quote
			want = cQuote
		case c == 0x0A: // LF
			want = cLF
		default: // CR, Newline (0x0B, 0x0C) and Other
			want = cCut
		}
		if classes[i] != want {
			t.Errorf("classes[%#x] = %d, want %d", i, classes[i], want)
		}
	}
}

// tricky holds inputs around every ASCII word-break rule and around the
// hand-over to bleve for non-ASCII text.
var tricky = []string{
	"",
	" ",
	"\t\r\n",
	"John's book", "JOHN'S", "James' car", "it's", "'s", "s's", "a's'", "1's",
	"o'clock", "rock 'n' roll", "don't can't won't", "can''t", "'quoted'",
	"3.14", "3.14.15", "3..14", "1,000", "1,000,000.50", "1,", ",1", "1;2", "1:2",
	"1'000", "1.a", "a.1", "a1.b2", "1a.1", "e.g.", "i.e. this", "U.S.A.", "U.S.A", "a.b.c.",
	"foo_bar", "_", "__init__", "_a_", "a_.b", "a._b", "1_000", "x__1",
	"a:b", "a::b", "http://example.com:8080/path?q=1", "a:1", "std::vector",
	"well-known", "a-b-c", "--flag", "x - y",
	"abc123", "123abc", "h2o", "2nd 3rd 4th", "COVID-19", "v1.2.3",
	"line one\r\nline two\rline three\nline four", "a\r\n\r\nb", "\r", "\n\n",
	"col1\tcol2\tcol3", "a\vb\fc", "a\x00b", "\x7f",
	"\"double\" quotes", "say \"hi\"", "x\"y",
	"Hello, World! How are you?", "THE QUICK BROWN FOX JUMPS", "running runners ran easily",
	"caresses ponies ties caress cats feed agreed plastered motoring hopping falling",
	"The United States of America is a country.",
	"emoji 😀 here", "😀", "thumbs 👍🏽 up", "flags 🇺🇸🇬🇧", "a😀b",
	"café naïve résumé", "Café's", "CAFÉ", "Ångström", "straße STRASSE", "İstanbul",
	"don’t John’s", "John＇s", "“smart quotes”", "en–dash — em", "ellipsis…",
	"中文分词 测试", "日本語のテキスト", "カタカナ", "한국어 텍스트", "abc中文def",
	"a\u0301b", " \u0301abc", "x\u200by", "e\u0301.g", "1\u00a0000",
	"mixed ascii then é then ascii again, with 3.14 and John's",
	"Σίσυφος ΟΔΟΣ", "Ⱥ", "ǅ",
	// Final sigma and the dotted capital I, which Python's str.lower() (the sklearn chain) treats
	// apart; K is the Kelvin sign, which lowercases to ASCII.
	"ΟΔΟΣ's", "aΣ'b", "aΣ.", "Σ", "ΣΣ", "xΣ\u0301", "ΑΣ\xff", "\xffΣa", "İİ", "aİb", "KEEP", "ａｂｃ ＡＢＣ",
	"x_y __ a1 ½ ²³ ⅣⅤ ٣٤", "\u00adab\u00ad",
	"\xff", "a \xff b", "a\xffb", "ab\xc3", "\xc3(", "ok \xed\xa0\x80 surrogate",
}

func TestTricky(t *testing.T) {
	for _, name := range Names() {
		a := mustNew(t, name)
		for _, s := range tricky {
			want := refTerms(a, []byte(s))
			got := a.Terms([]byte(s))
			if !slices.Equal(got, want) {
				t.Errorf("%s %q: fast %q, reference %q", name, s, got, want)
			}
		}
	}
}

// TestExpected pins a few results so that a change in bleve shows up as a
// failure here and not only as agreement on new behaviour. The values are
// bleve v2.6.3's output; the stems of the Porter words are the examples of
// Porter (1980), "An algorithm for suffix stripping", Program 14(3), steps
// 1a/1b (recalled from memory).
func TestExpected(t *testing.T) {
	tests := []struct {
		analyzer, text string
		want           []string
	}{
		{"english", "John's book", []string{"john", "book"}},
		{"english", "It's o'clock", []string{"o'clock"}},
		{"english", "The U.S.A. and e.g. 3.14 or 1,000", []string{"u.s.a", "e.g", "3.14", "1,000"}},
		{"english", "foo_bar a:b well-known", []string{"foo_bar", "a:b", "well", "known"}},
		{"english", "caresses ponies cats feed agreed plastered motoring hopping falling filing happy",
			[]string{"caress", "poni", "cat", "feed", "agre", "plaster", "motor", "hop", "fall", "file", "happi"}},
		{"plain", "The John's U.S.A. CAN'T", []string{"the", "john's", "u.s.a", "can't"}},
		{"plain", "", nil},
		{"english-nostem", "John's ponies were running to the U.S.A.", []string{"john", "ponies", "running", "u.s.a"}},
	}
	for _, tt := range tests {
		a := mustNew(t, tt.analyzer)
		if got := a.Terms([]byte(tt.text)); !slices.Equal(got, tt.want) {
			t.Errorf("%s %q = %q, want %q", tt.analyzer, tt.text, got, tt.want)
		}
		if got := bleveTerms(a, []byte(tt.text)); !slices.Equal(got, tt.want) {
			t.Errorf("bleve %s %q = %q, want %q", tt.analyzer, tt.text, got, tt.want)
		}
	}
}

func TestEachLeavesTextAlone(t *testing.T) {
	for _, name := range Names() {
		a := mustNew(t, name)
		for _, s := range []string{"HELLO John's WORLD", "CAFÉ ÉCOLE Straße", "A \xff B"} {
			text := []byte(s)
			a.Each(text, func([]byte) {})
			if string(text) != s {
				t.Errorf("%s: Each changed %q to %q", name, s, text)
			}
		}
	}
}

// TestCacheBounded runs more distinct words than the cache holds and checks
// that the terms stay right and the cache stays bounded.
func TestCacheBounded(t *testing.T) {
	a := mustNew(t, "english")
	var b strings.Builder
	for i := 0; i < cacheMaxEntries+1000; i++ {
		fmt.Fprintf(&b, "walking%dx ", i)
	}
	b.WriteString("walking talked")
	text := []byte(b.String())
	got, want := a.Terms(text), bleveTerms(a, text)
	if !slices.Equal(got, want) {
		t.Fatalf("terms differ after cache overflow")
	}
	if a.cache.n > cacheMaxEntries {
		t.Errorf("cache has %d entries, bound is %d", a.cache.n, cacheMaxEntries)
	}
	if got := a.Terms([]byte("walking talked")); !slices.Equal(got, []string{"walk", "talk"}) {
		t.Errorf("after overflow: %q", got)
	}
}

func TestEachAllocations(t *testing.T) {
	text := []byte("The quick brown fox's jumps over the lazy dog, 3.14 times at 10:30 o'clock. ")
	for _, name := range Names() {
		a := mustNew(t, name)
		n := 0
		fn := func([]byte) { n++ }
		a.Each(text, fn) // warm the cache and buffers
		if allocs := testing.AllocsPerRun(100, func() { a.Each(text, fn) }); allocs != 0 {
			t.Errorf("%s: %v allocations per Each, want 0", name, allocs)
		}
	}
}

// TestBlockEdges shifts the tricky inputs across the 64-byte blocks of the
// word scanner, after fills that make words and joining bytes fall on
// block edges and words span blocks.
func TestBlockEdges(t *testing.T) {
	for _, name := range Names() {
		a := mustNew(t, name)
		for _, s := range tricky {
			for _, fill := range []string{" ", "a", "1", "a.", "1,"} {
				for n := 0; n <= 132; n += len(fill) {
					text := []byte(strings.Repeat(fill, n/len(fill)) + s)
					want := refTerms(a, text)
					if got := a.Terms(text); !slices.Equal(got, want) {
						t.Fatalf("%s %q: fast %q, reference %q", name, text, got, want)
					}
				}
			}
		}
	}
}
