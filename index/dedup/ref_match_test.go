package dedup

import (
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

// matchTexts returns texts that exercise the Signer and Hasher: the fixture's rows, up to 3,000
// T0 rows when the shared corpus is there, and random strings drawn from an alphabet of ASCII
// letters, digits, punctuation, white space of every kind, letters that fold to other lengths,
// marks, invalid bytes and cut sequences.
func matchTexts(t testing.TB) []string {
	t.Helper()
	texts, _ := loadFixture(t)
	if rows, from := benchRows(t, 3000); from == "T0" {
		for _, r := range rows {
			texts = append(texts, string(r))
		}
	}
	alphabet := []string{"a", "b", "Z", "Q", "0", "9", "_", " ", "  ", "\t", "\n", "\r\n", "\v", "\f",
		"\u0085", "\u00a0", "\u3000", "\u2028", ".", ",", "—", "'", "é", "e\u0301", "É", "ß", "ẞ",
		"Σ", "ς", "ı", "İ", "K", "\u212a", "ſ", "Ꭰ", "ꭰ", "ǅ", "\xff", "\xe2\x82", "\xc3",
		"\xed\xa0\x80", "日本", "٣", "ⅷ", "😀"}
	rng := rand.New(rand.NewPCG(1, 2))
	for range 2000 {
		var sb strings.Builder
		n := rng.IntN(60)
		if rng.IntN(20) == 0 {
			n = rng.IntN(20000)
		}
		for range n {
			sb.WriteString(alphabet[rng.IntN(len(alphabet))])
		}
		texts = append(texts, sb.String())
	}
	// Long rows of words: past the Hasher's buffer and, for a short shingle, past maxBuffered.
	words := strings.Fields(strings.Repeat("The quick brown Fox jumps over the lazy dog 42 times ", 3))
	var sb strings.Builder
	for i := 0; sb.Len() < 500000; i++ {
		sb.WriteString(words[rng.IntN(len(words))])
		sb.WriteString([]string{" ", "  ", "\n", ", "}[rng.IntN(4)])
		if i%997 == 0 {
			sb.WriteString("Ünïcödé ")
		}
	}
	return append(texts, sb.String(), strings.Repeat("a ", 70000), strings.Repeat("x", 5000))
}

// writeCut writes text to w in pieces cut at random places, as the build's parts and a stream's
// reads may cut it.
func writeCut(rng *rand.Rand, w interface{ Write([]byte) (int, error) }, text string) {
	for len(text) > 0 {
		n := len(text)
		if rng.IntN(2) == 0 {
			n = rng.IntN(len(text) + 1)
		}
		w.Write([]byte(text[:n]))
		text = text[n:]
	}
}

func TestSignerMatchesReference(t *testing.T) {
	texts := matchTexts(t)
	rng := rand.New(rand.NewPCG(5, 6))
	for _, p := range []Params{ForThreshold(0.8), {Shingle: 1, Hashes: 16, Seed: 9}, {Shingle: 3, Hashes: 12, Bands: 4, Seed: 5}, {Shingle: 7, Hashes: 64}} {
		s, err := NewSigner(p)
		if err != nil {
			t.Fatal(err)
		}
		ref, _ := newRefSigner(p)
		var got, want Signature
		for i, text := range texts {
			writeCut(rng, s, text)
			got = s.Sum(got)
			ref.Write([]byte(text))
			want = ref.Sum(want)
			if !slices.Equal(got, want) {
				t.Fatalf("params %+v, text %d (%.80q): signature differs from the reference", p, i, text)
			}
			if s.Work() != ref.Work() {
				t.Fatalf("params %+v, text %d: work %+v, reference %+v", p, i, s.Work(), ref.Work())
			}
		}
		words := strings.Fields(texts[0])
		if got, want := s.SignWords(nil, words), ref.SignWords(nil, words); !slices.Equal(got, want) {
			t.Errorf("SignWords differs from the reference")
		}
	}
}

func TestHasherMatchesReference(t *testing.T) {
	texts := matchTexts(t)
	rng := rand.New(rand.NewPCG(7, 8))
	var h Hasher
	var ref refHasher
	for i, text := range texts {
		writeCut(rng, &h, text)
		ref.Write([]byte(text))
		if got, want := h.Sum(), ref.Sum(); got != want {
			t.Fatalf("text %d (%.80q): key differs from the reference", i, text)
		}
		if h.Work() != ref.Work() {
			t.Fatalf("text %d: work %+v, reference %+v", i, h.Work(), ref.Work())
		}
		n := refNormalizer{}
		n.write([]byte(text))
		n.end()
		if got := Normalize([]byte("x"), []byte(text)); string(got) != "x"+string(n.out) {
			t.Fatalf("text %d (%.80q): Normalize = %.80q, reference %.80q", i, text, got, n.out)
		}
	}
}

func FuzzMatchesReference(f *testing.F) {
	f.Add([]byte("It was the best of times, it was the WORST of times"), 7)
	f.Add([]byte("e\u0301t\u00e9 \xff\xe2\x82 ΣΊΣΥΦΟΣ  \t x"), 2)
	s, _ := NewSigner(Params{Hashes: 16, Shingle: 3})
	ref, _ := newRefSigner(Params{Hashes: 16, Shingle: 3})
	f.Fuzz(func(t *testing.T, text []byte, seed int) {
		rng := rand.New(rand.NewPCG(uint64(seed), 0))
		writeCut(rng, s, string(text))
		ref.Write(text)
		if got, want := s.Sum(nil), ref.Sum(nil); !slices.Equal(got, want) {
			t.Fatalf("%q: signature differs from the reference", text)
		}
		var h Hasher
		var rh refHasher
		writeCut(rng, &h, string(text))
		rh.Write(text)
		if h.Sum() != rh.Sum() {
			t.Fatalf("%q: key differs from the reference", text)
		}
	})
}

// BenchmarkAgainstReference times the Signer and Hasher against their references on the same
// rows in one run: compare each pair's MB/s.
func BenchmarkAgainstReference(b *testing.B) {
	rows, _ := benchRows(b, 5000)
	var size int64
	for _, r := range rows {
		size += int64(len(r))
	}
	p := ForThreshold(0.8)
	s, _ := NewSigner(p)
	ref, _ := newRefSigner(p)
	var h Hasher
	var rh refHasher
	var sig Signature
	for _, c := range []struct {
		name string
		row  func([]byte)
	}{
		{"sign", func(r []byte) { s.Write(r); sig = s.Sum(sig) }},
		{"sign-reference", func(r []byte) { ref.Write(r); sig = ref.Sum(sig) }},
		{"key", func(r []byte) { h.Write(r); h.Sum() }},
		{"key-reference", func(r []byte) { rh.Write(r); rh.Sum() }},
	} {
		b.Run(c.name, func(b *testing.B) {
			b.SetBytes(size)
			for b.Loop() {
				for _, r := range rows {
					c.row(r)
				}
			}
		})
	}
}
