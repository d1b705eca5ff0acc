package tokens

import (
	"slices"
	"strings"
	"testing"
)

// split cuts s into the pieces p makes of it.
func split(p pattern, s string) []string {
	var out []string
	for len(s) > 0 {
		k := p.next([]byte(s))
		out = append(out, s[:k])
		s = s[k:]
	}
	return out
}

// byteLevel writes s in GPT-2's byte-level alphabet.
func byteLevel(s string) string {
	var b strings.Builder
	for i := 0; i < len(s); i++ {
		b.WriteRune(byteRune(s[i]))
	}
	return b.String()
}

// TestSplitMatchesReference compares the splitters with the pre-tokenizers of
// @huggingface/tokenizers (JavaScript regular expressions, the Split ones translated to
// Oniguruma's semantics by that library) on every fixture text: testdata/reference.json's
// "pieces", written by testdata/ref/ref.mjs.
func TestSplitMatchesReference(t *testing.T) {
	texts := readTexts(t)
	var ref struct {
		Pieces map[string][]string `json:"pieces"`
	}
	readJSON(t, "testdata/reference.json", &ref)
	for name, p := range map[string]pattern{"gpt2": patGPT2, "cl100k": patCL100K, "qwen2": patQwen2} {
		want := ref.Pieces[name]
		if len(want) != len(texts) {
			t.Fatalf("%s: %d piece lists for %d texts", name, len(want), len(texts))
		}
		for i, text := range texts {
			got := split(p, text.Text)
			for j := range got {
				got[j] = byteLevel(got[j])
			}
			if g := strings.Join(got, " "); g != want[i] {
				w := strings.Split(want[i], " ")
				d := 0
				for d < len(got) && d < len(w) && got[d] == w[d] {
					d++
				}
				t.Errorf("%s: text %d (%s): piece %d is %q, want %q", name, i, text.Source, d,
					got[d:min(d+3, len(got))], w[d:min(d+3, len(w))])
			}
		}
	}
}

// TestSplit checks cases worked by hand from the expressions (their text is in split.go): each
// alternative, the look-ahead's giving back of a space, and the classes at their edges.
func TestSplit(t *testing.T) {
	tests := []struct {
		name string
		p    pattern
		in   string
		want []string
	}{
		{"gpt2 words", patGPT2, "Hello world", []string{"Hello", " world"}},
		{"gpt2 contractions are case-sensitive", patGPT2, "it's IT'S we'll", []string{"it", "'s", " IT", "'", "S", " we", "'ll"}},
		{"gpt2 apostrophe after space", patGPT2, "a 's", []string{"a", " '", "s"}},
		{"gpt2 numbers are one run", patGPT2, "x 12345", []string{"x", " 12345"}},
		{"gpt2 symbols run", patGPT2, "a ?!.b", []string{"a", " ?!.", "b"}},
		{"gpt2 spaces give back one", patGPT2, "a   b", []string{"a", "  ", " b"}},
		{"gpt2 trailing spaces stay", patGPT2, "a   ", []string{"a", "   "}},
		{"gpt2 newline before word", patGPT2, "a\n\nb", []string{"a", "\n", "\n", "b"}},
		{"gpt2 tab then space", patGPT2, "\t x", []string{"\t", " x"}},
		{"gpt2 lone newline", patGPT2, "\nb", []string{"\n", "b"}},
		{"gpt2 NBSP is space but not the optional space", patGPT2, "a\u00a0\u00a0b", []string{"a", "\u00a0", "\u00a0", "b"}},
		{"gpt2 NEL is space", patGPT2, "a\u0085", []string{"a", "\u0085"}},
		{"gpt2 BOM is a symbol", patGPT2, "\ufeffa", []string{"\ufeff", "a"}},
		{"gpt2 invalid byte is a symbol", patGPT2, "a\xffb", []string{"a", "\xff", "b"}},
		{"gpt2 letters of any script", patGPT2, "naïve 日本語", []string{"naïve", " 日本語"}},
		{"gpt2 other numbers", patGPT2, "½Ⅻ", []string{"½Ⅻ"}},
		{"cl100k contractions fold case", patCL100K, "IT'S we'LL", []string{"IT", "'S", " we", "'LL"}},
		{"cl100k long s folds to s", patCL100K, "x'\u017f", []string{"x", "'\u017f"}},
		{"cl100k contraction before letters", patCL100K, "'sam", []string{"'s", "am"}},
		{"cl100k one symbol joins a word", patCL100K, "(hello) \"x", []string{"(hello", ")", " \"", "x"}},
		{"cl100k digits in threes", patCL100K, "1234567", []string{"123", "456", "7"}},
		{"cl100k space before digits alone", patCL100K, "a 12", []string{"a", " ", "12"}},
		{"cl100k symbols take newlines", patCL100K, "{\n\tx", []string{"{\n", "\tx"}},
		{"cl100k newline runs end at the last break", patCL100K, "a\n\n  b", []string{"a", "\n\n", " ", " b"}},
		{"cl100k spaces then break", patCL100K, "a  \nb", []string{"a", "  \n", "b"}},
		{"cl100k CRLF", patCL100K, "a\r\n\r\nb", []string{"a", "\r\n\r\n", "b"}},
		{"cl100k no letter joins a newline", patCL100K, "\nb", []string{"\n", "b"}},
		{"cl100k tab joins a word", patCL100K, "\tb", []string{"\tb"}},
		{"cl100k ideographic space joins a word", patCL100K, "a\u3000b", []string{"a", "\u3000b"}},
		{"qwen2 single digits", patQwen2, "x 2024", []string{"x", " ", "2", "0", "2", "4"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := split(tt.p, tt.in); !slices.Equal(got, tt.want) {
				t.Errorf("split(%q) = %q, want %q", tt.in, got, tt.want)
			}
		})
	}
}

func TestByteLevelAlphabet(t *testing.T) {
	// Values from GPT-2's bytes_to_unicode: space is 'Ġ' (U+0120), newline 'Ċ' (U+010A), byte 0
	// is U+0100, 0x7F is U+0121, 0xAD is U+0143, and the printable bytes are themselves.
	for b, r := range map[byte]rune{' ': 'Ġ', '\n': 'Ċ', 0: 0x100, 0x7F: 0x121, 0xA0: 0x142, 0xAD: 0x143, 'a': 'a', 0xFF: 'ÿ'} {
		if got := byteRune(b); got != r {
			t.Errorf("byteRune(%#x) = %U, want %U", b, got, r)
		}
	}
	seen := map[rune]bool{}
	for b := range 256 {
		r := byteRune(byte(b))
		if seen[r] {
			t.Fatalf("byte %#x: %U used twice", b, r)
		}
		seen[r] = true
		if back, ok := runeByte(r); !ok || back != byte(b) {
			t.Errorf("runeByte(%U) = %#x, %v, want %#x", r, back, ok, b)
		}
	}
	for _, r := range []rune{' ', 0x144, 0xAD, 0x7F, '€'} {
		if _, ok := runeByte(r); ok {
			t.Errorf("runeByte(%U) is in the alphabet", r)
		}
	}
}
