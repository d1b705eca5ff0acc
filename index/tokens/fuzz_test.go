package tokens

import (
	"encoding/json"
	"errors"
	"slices"
	"strings"
	"testing"
	"unicode/utf8"
)

// fuzzSeeds are fixture texts cut short, plus the edges of the splitters' rules.
func fuzzSeeds(tb testing.TB) []string {
	seeds := []string{"", " ", "a  \n\n b", "it's 'S '\u017f", "\r\n\t\u00a0\u0085\u3000x", "1234567 ½", "\xff\xfe a\xc3", "<|endoftext|>x"}
	for _, text := range readTexts(tb) {
		seeds = append(seeds, text.Text[:min(len(text.Text), 200)])
	}
	return seeds
}

// FuzzSplit checks that each splitter cuts any input, UTF-8 or not, into non-empty pieces that
// join to the input, and that a piece split again is itself.
func FuzzSplit(f *testing.F) {
	for _, s := range fuzzSeeds(f) {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		for _, p := range []pattern{patGPT2, patCL100K, patQwen2} {
			pieces := split(p, s)
			if strings.Join(pieces, "") != s {
				t.Fatalf("pattern %d: pieces %q do not join to %q", p, pieces, s)
			}
			for _, piece := range pieces {
				if piece == "" {
					t.Fatalf("pattern %d: empty piece in %q", p, pieces)
				}
				if again := split(p, piece); len(again) != 1 {
					t.Fatalf("pattern %d: piece %q splits again into %q", p, piece, again)
				}
			}
		}
	})
}

// FuzzCount counts any text with gpt2-small.json, a variant holding added tokens with every
// option, and one with NFC besides: Count is never negative, never more than a token a byte of the
// normalised text, equals the number of ids, and
// the two merge loops agree on the text taken as one word.
func FuzzCount(f *testing.F) {
	plain := mustLoad(f, "testdata/gpt2-small.json")
	file := smallFile(f)
	file["added_tokens"] = []any{
		map[string]any{"id": 50256, "content": "<|endoftext|>", "special": true, "normalized": false},
		map[string]any{"id": 50257, "content": " [MASK]", "lstrip": true, "rstrip": true, "special": true},
		map[string]any{"id": 50258, "content": "ing", "single_word": true, "normalized": true},
	}
	withAdded := mustLoad(f, writeJSON(f, f.TempDir(), "tokenizer.json", file))
	file["normalizer"] = map[string]any{"type": "NFC"}
	withNFC := mustLoad(f, writeJSON(f, f.TempDir(), "tokenizer.json", file))
	for _, s := range fuzzSeeds(f) {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		for _, tok := range []*Tokenizer{plain, withAdded, withNFC} {
			n := tok.Count([]byte(s))
			// NFC can lengthen text (a composition-excluded character such as U+FB3A decomposes),
			// so the bound is a token a byte of the normalised text.
			limit := len(s)
			if tok.m.nfc != nil {
				b, _ := tok.m.nfc.appendNFC(nil, []byte(s), nil)
				limit = max(limit, len(b))
			}
			if n < 0 || n > limit {
				t.Fatalf("Count(%q) = %d for %d bytes (%d normalised)", s, n, len(s), limit)
			}
			if ids := tok.appendIDs(nil, []byte(s)); len(ids) != n {
				t.Fatalf("Count(%q) = %d, but %d ids", s, n, len(ids))
			}
		}
		if s == "" {
			return
		}
		var sc scratch
		b := &plain.m.bpe
		scan := slices.Clone(b.mergeScan(wordIDs(b, s), &sc))
		heap := b.mergeHeap(wordIDs(b, s), &sc)
		if !slices.Equal(scan, heap) {
			t.Fatalf("%q: scan merges to %v, heap to %v", s, scan, heap)
		}
	})
}

// FuzzNFC checks NFC on any bytes: it is idempotent, keeps what the quick check calls NFC, and
// keeps valid UTF-8 valid.
func FuzzNFC(f *testing.F) {
	n, err := newNFC()
	if err != nil {
		f.Fatal(err)
	}
	for _, s := range fuzzSeeds(f) {
		f.Add(s)
	}
	f.Add("e\u0301\u0323 \u1100\u1161\u11a8 \u0958 \u0300a")
	f.Fuzz(func(t *testing.T, s string) {
		once, _ := n.appendNFC(nil, []byte(s), nil)
		twice, _ := n.appendNFC(nil, once, nil)
		if string(once) != string(twice) {
			t.Fatalf("NFC(%+q) = %+q, but NFC of that is %+q", s, once, twice)
		}
		if n.isNFC([]byte(s)) && string(once) != s {
			t.Fatalf("isNFC(%+q), but NFC gives %+q", s, once)
		}
		if utf8.ValidString(s) && !utf8.Valid(once) {
			t.Fatalf("NFC(%+q) = %+q is not UTF-8", s, once)
		}
	})
}

func wordIDs(b *bpe, s string) []uint32 {
	ids := make([]uint32, len(s))
	for i := range len(s) {
		ids[i] = b.bytes[s[i]]
	}
	return ids
}

// FuzzLoadTokenizerJSON reads any bytes as a tokenizer.json: no panic, an error wraps ErrInvalid
// or ErrUnsupported, and a file that loads counts.
func FuzzLoadTokenizerJSON(f *testing.F) {
	small := truncated(smallFile(f), 30)
	seed, err := json.Marshal(small)
	if err != nil {
		f.Fatal(err)
	}
	f.Add(seed)
	small["pre_tokenizer"] = map[string]any{"type": "Sequence", "pretokenizers": []any{
		map[string]any{"type": "Split", "pattern": map[string]any{"Regex": cl100kRegex}, "behavior": "Isolated", "invert": false},
		map[string]any{"type": "ByteLevel", "use_regex": false, "add_prefix_space": true},
	}}
	small["added_tokens"] = []any{map[string]any{"id": 1, "content": "ab", "lstrip": true}}
	small["model"].(map[string]any)["ignore_merges"] = true
	if seed, err = json.Marshal(small); err != nil {
		f.Fatal(err)
	}
	f.Add(seed)
	f.Add([]byte(`{"model": {}}`))
	f.Fuzz(func(t *testing.T, data []byte) {
		var top hfTop
		if json.Unmarshal(data, &top) != nil || firstByte(top.Model) != '{' {
			return
		}
		tok, err := loadHF("tokenizer.json", &top)
		checkLoaded(t, tok, err)
	})
}

// FuzzLoadPair reads any pair of bytes as GPT-2's vocab.json and merges.txt.
func FuzzLoadPair(f *testing.F) {
	dir := f.TempDir()
	vocab, merges := pairFiles(f, dir, truncated(smallFile(f), 30), "vocab.json", "merges.txt")
	f.Add(readFile(f, vocab), readFile(f, merges))
	f.Add([]byte(`{"a": 0}`), []byte("#version: 0.2\na b\n"))
	f.Fuzz(func(t *testing.T, vocab, merges []byte) {
		tok, err := loadPair("vocab.json", vocab, "merges.txt", merges)
		checkLoaded(t, tok, err)
	})
}

func checkLoaded(t *testing.T, tok *Tokenizer, err error) {
	t.Helper()
	if err != nil {
		if !errors.Is(err, ErrInvalid) && !errors.Is(err, ErrUnsupported) {
			t.Fatalf("error wraps neither ErrInvalid nor ErrUnsupported: %v", err)
		}
		return
	}
	for _, s := range []string{"", "Hello, world!", " ab  ab\n", "\xff"} {
		if n := tok.Count([]byte(s)); n < 0 || n != len(tok.appendIDs(nil, []byte(s))) {
			t.Fatalf("Count(%q) = %d, ids %v", s, n, tok.appendIDs(nil, []byte(s)))
		}
	}
}
