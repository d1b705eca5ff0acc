package tokens

import (
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestPairMatchesTokenizerJSON loads the same model (gpt2-small.json's vocabulary and merges) as a
// tokenizer.json and as GPT-2's pair of files under each name, naming either file, and checks
// every fixture text counts the same. The texts hold no "<|endoftext|>", the one added token the
// pair lacks.
func TestPairMatchesTokenizerJSON(t *testing.T) {
	f := smallFile(t)
	whole := mustLoad(t, "testdata/gpt2-small.json")
	texts := readTexts(t)
	for _, names := range [][2]string{{"vocab.json", "merges.txt"}, {"encoder.json", "vocab.bpe"}} {
		dir := t.TempDir()
		vocab, merges := pairFiles(t, dir, f, names[0], names[1])
		byPair, err := LoadPair(vocab, merges)
		if err != nil {
			t.Fatal(err)
		}
		for _, tok := range []*Tokenizer{mustLoad(t, vocab), mustLoad(t, merges), byPair} {
			for i, text := range texts {
				if strings.Contains(text.Text, "<|endoftext|>") {
					t.Fatalf("text %d holds <|endoftext|>", i)
				}
				if got, want := tok.Count([]byte(text.Text)), whole.Count([]byte(text.Text)); got != want {
					t.Errorf("%v: text %d: %d tokens, tokenizer.json %d", names, i, got, want)
				}
			}
		}
	}
}

// TestMergesAsStrings loads gpt2-small.json with its merges written "a b" (as Llama-3's file
// does) instead of as pairs, and checks the counts agree.
func TestMergesAsStrings(t *testing.T) {
	f := smallFile(t)
	model := f["model"].(map[string]any)
	var merges []any
	for _, m := range model["merges"].([]any) {
		p := m.([]any)
		merges = append(merges, p[0].(string)+" "+p[1].(string))
	}
	model["merges"] = merges
	tok := mustLoad(t, writeJSON(t, t.TempDir(), "tokenizer.json", f))
	pairs := mustLoad(t, "testdata/gpt2-small.json")
	for i, text := range readTexts(t) {
		if got, want := tok.Count([]byte(text.Text)), pairs.Count([]byte(text.Text)); got != want {
			t.Errorf("text %d: %d tokens with string merges, %d with pairs", i, got, want)
		}
	}
}

// TestAddedTokens checks the added-token rules as Hugging Face's documentation states them
// (huggingface.co/docs/tokenizers, "Added Tokens": lstrip on "[MASK]" in "I saw a [MASK]"
// matches " [MASK]"; single_word "ing" does not match in "tokenizing") and as its
// added_vocabulary.rs does them (tokens with "normalized": false are taken out first). Each
// expectation is a relation between counts, so it holds whatever the merges.
func TestAddedTokens(t *testing.T) {
	base := mustLoad(t, "testdata/gpt2-small.json")
	count := func(s string) int { return base.Count([]byte(s)) }
	added := func(content string, opts map[string]bool) map[string]any {
		a := map[string]any{"id": 60000, "content": content, "special": true, "normalized": false}
		for k, v := range opts {
			a[k] = v
		}
		return a
	}
	tests := []struct {
		name  string
		added []map[string]any
		text  string
		want  int
	}{
		{"special tokens match in text", []map[string]any{added("<|endoftext|>", nil)},
			"a<|endoftext|>b", count("a") + 1 + count("b")},
		{"non-special tokens match too", []map[string]any{added("<think>", map[string]bool{"special": false})},
			"x <think>y", count("x ") + 1 + count("y")},
		{"without lstrip the space stays", []map[string]any{added("[MASK]", nil)},
			"I saw a [MASK]", count("I saw a ") + 1},
		{"lstrip takes the space", []map[string]any{added("[MASK]", map[string]bool{"lstrip": true})},
			"I saw a [MASK]", count("I saw a") + 1},
		{"lstrip takes every space", []map[string]any{added("[MASK]", map[string]bool{"lstrip": true})},
			"a \t [MASK]", count("a") + 1},
		{"rstrip takes the space after", []map[string]any{added("[MASK]", map[string]bool{"rstrip": true})},
			"[MASK]  x", 1 + count("x")},
		{"single_word not inside a word", []map[string]any{added("ing", map[string]bool{"single_word": true})},
			"tokenizing", count("tokenizing")},
		{"single_word as a word", []map[string]any{added("ing", map[string]bool{"single_word": true})},
			"an ing here", count("an ") + 1 + count(" here")},
		{"longest match at the leftmost place", []map[string]any{added("<a>", nil), added("<a>b", nil)},
			"x<a>bc", count("x") + 1 + count("c")},
		{"leftmost before longest", []map[string]any{added("a<b>", nil), added("<b>cdef", nil)},
			"xa<b>cdef", count("x") + 1 + count("cdef")},
		{"raw tokens first", []map[string]any{added("<x>", nil), added("<x>y", map[string]bool{"normalized": true})},
			"<x>y", 1 + count("y")},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			f := smallFile(t)
			var list []any
			for _, a := range tt.added {
				list = append(list, a)
			}
			f["added_tokens"] = list
			tok := mustLoad(t, writeJSON(t, t.TempDir(), "tokenizer.json", f))
			if got := tok.Count([]byte(tt.text)); got != tt.want {
				t.Errorf("Count(%q) = %d, want %d", tt.text, got, tt.want)
			}
			if got := len(tok.appendIDs(nil, []byte(tt.text))); got != tt.want {
				t.Errorf("appendIDs(%q) has %d ids, want %d", tt.text, got, tt.want)
			}
		})
	}
}

// TestPrefixSpace checks ByteLevel's add_prefix_space: a text not starting with a space counts as
// if it did (Hugging Face's byte_level.rs prepends one to each piece that reaches it).
func TestPrefixSpace(t *testing.T) {
	f := smallFile(t)
	f["pre_tokenizer"].(map[string]any)["add_prefix_space"] = true
	tok := mustLoad(t, writeJSON(t, t.TempDir(), "tokenizer.json", f))
	base := mustLoad(t, "testdata/gpt2-small.json")
	for _, s := range []string{"Hello world", " Hello world", "x"} {
		want := base.Count([]byte(" " + strings.TrimPrefix(s, " ")))
		if got := tok.Count([]byte(s)); got != want {
			t.Errorf("Count(%q) = %d, want %d", s, got, want)
		}
	}
}

func TestLoadErrors(t *testing.T) {
	edit := func(change func(f map[string]any)) func(t *testing.T, dir string) string {
		return func(t *testing.T, dir string) string {
			f := truncated(smallFile(t), 50)
			change(f)
			return writeJSON(t, dir, "tokenizer.json", f)
		}
	}
	model := func(f map[string]any) map[string]any { return f["model"].(map[string]any) }
	tests := []struct {
		name  string
		write func(t *testing.T, dir string) string
		kind  error
		where string // a part of the message that places the fault
	}{
		{"missing file", func(t *testing.T, dir string) string { return filepath.Join(dir, "nothing.json") },
			fs.ErrNotExist, "nothing.json"},
		{"JSON syntax", func(t *testing.T, dir string) string {
			return writeFile(t, dir, "tokenizer.json", "{\n \"model\": {\n  \"vocab\": {,}\n }\n}")
		}, ErrInvalid, "tokenizer.json:3:13"},
		{"not BPE", edit(func(f map[string]any) { model(f)["type"] = "WordPiece" }), ErrUnsupported, "model.type"},
		{"dropout", edit(func(f map[string]any) { model(f)["dropout"] = 0.1 }), ErrUnsupported, "model.dropout"},
		{"suffix", edit(func(f map[string]any) { model(f)["end_of_word_suffix"] = "</w>" }), ErrUnsupported, "model.end_of_word_suffix"},
		{"no vocab", edit(func(f map[string]any) { delete(model(f), "vocab") }), ErrInvalid, "model.vocab"},
		{"vocab id not a number", edit(func(f map[string]any) { model(f)["vocab"].(map[string]any)["a"] = "x" }), ErrInvalid, "model"},
		{"negative id", edit(func(f map[string]any) { model(f)["vocab"].(map[string]any)["a"] = -1 }), ErrInvalid, `"a"`},
		{"byte symbol missing", edit(func(f map[string]any) { delete(model(f)["vocab"].(map[string]any), "Ġ") }),
			ErrUnsupported, "byte 0x20"},
		{"merge of three", edit(func(f map[string]any) { model(f)["merges"].([]any)[3] = "a b c" }), ErrInvalid, "model.merges[3]"},
		{"merge pair of one", edit(func(f map[string]any) { model(f)["merges"].([]any)[4] = []any{"a"} }), ErrInvalid, "model.merges[4]"},
		{"merge not in vocab", edit(func(f map[string]any) { model(f)["merges"].([]any)[5] = []any{"a", "zzz"} }),
			ErrInvalid, "model.merges[5]"},
		{"unknown regex", edit(func(f map[string]any) {
			f["pre_tokenizer"] = map[string]any{"type": "Sequence", "pretokenizers": []any{
				map[string]any{"type": "Split", "pattern": map[string]any{"Regex": `\w+`}, "behavior": "Isolated", "invert": false},
				map[string]any{"type": "ByteLevel", "use_regex": false},
			}}
		}), ErrUnsupported, "pre_tokenizer.pretokenizers[0].pattern"},
		{"Split removed", edit(func(f map[string]any) {
			f["pre_tokenizer"] = map[string]any{"type": "Sequence", "pretokenizers": []any{
				map[string]any{"type": "Split", "pattern": map[string]any{"Regex": cl100kRegex}, "behavior": "Removed", "invert": false},
				map[string]any{"type": "ByteLevel", "use_regex": false},
			}}
		}), ErrUnsupported, "pre_tokenizer.pretokenizers[0]"},
		{"no ByteLevel", edit(func(f map[string]any) { f["pre_tokenizer"] = map[string]any{"type": "Whitespace"} }),
			ErrUnsupported, "pre_tokenizer"},
		{"no pre-tokenizer", edit(func(f map[string]any) { f["pre_tokenizer"] = nil }), ErrUnsupported, "pre_tokenizer"},
		{"normalizer", edit(func(f map[string]any) {
			f["normalizer"] = map[string]any{"type": "Sequence", "normalizers": []any{map[string]any{"type": "NFC"}, map[string]any{"type": "Lowercase"}}}
		}), ErrUnsupported, "normalizer.normalizers[1]"},
		{"not an object", func(t *testing.T, dir string) string { return writeFile(t, dir, "tokenizer.json", "[1, 2]") },
			ErrInvalid, "tokenizer.json"},
		{"vocab.json alone", func(t *testing.T, dir string) string { return writeFile(t, dir, "vocab.json", `{"a": 0}`) },
			fs.ErrNotExist, "merges.txt or vocab.bpe"},
		{"merges.txt alone", func(t *testing.T, dir string) string { return writeFile(t, dir, "merges.txt", "#version: 0.2\na b\n") },
			fs.ErrNotExist, "vocab.json or encoder.json"},
		{"merges line of one symbol", func(t *testing.T, dir string) string {
			vocab, _ := pairFiles(t, dir, truncated(smallFile(t), 50), "vocab.json", "merges.txt")
			writeFile(t, dir, "merges.txt", "#version: 0.2\nĠ t\nab\n")
			return vocab
		}, ErrInvalid, "merges.txt:3"},
		{"merges token not in vocab", func(t *testing.T, dir string) string {
			vocab, _ := pairFiles(t, dir, truncated(smallFile(t), 50), "vocab.json", "merges.txt")
			writeFile(t, dir, "merges.txt", "#version: 0.2\nĠ t\nqq zz\n")
			return vocab
		}, ErrInvalid, "merges.txt:3"},
		{"vocab.json syntax", func(t *testing.T, dir string) string {
			pairFiles(t, dir, truncated(smallFile(t), 50), "vocab.json", "merges.txt")
			writeFile(t, dir, "vocab.json", "{\"a\": 1,\n\"b\": }")
			return filepath.Join(dir, "merges.txt")
		}, ErrInvalid, "vocab.json:2:6"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			path := tt.write(t, t.TempDir())
			_, err := Load(path)
			if !errors.Is(err, tt.kind) {
				t.Fatalf("Load: %v, want %v", err, tt.kind)
			}
			if !strings.Contains(err.Error(), tt.where) {
				t.Errorf("Load: %q does not say %q", err, tt.where)
			}
		})
	}
}

// TestLoadAcceptsKnownFiles loads variants that must be accepted: a BOM, no model type (older
// files), NFC, a Sequence with several Splits.
func TestLoadAcceptsKnownFiles(t *testing.T) {
	dir := t.TempDir()
	f := truncated(smallFile(t), 50)
	delete(f["model"].(map[string]any), "type")
	f["normalizer"] = map[string]any{"type": "Sequence", "normalizers": []any{map[string]any{"type": "NFC"}}}
	f["pre_tokenizer"] = map[string]any{"type": "Sequence", "pretokenizers": []any{
		map[string]any{"type": "Split", "pattern": map[string]any{"Regex": qwen2Regex}, "behavior": "Isolated", "invert": false},
		map[string]any{"type": "Split", "pattern": map[string]any{"Regex": gpt2Regex}, "behavior": "Isolated", "invert": false},
		map[string]any{"type": "ByteLevel", "use_regex": true},
	}}
	path := writeJSON(t, dir, "tokenizer.json", f)
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	tok := mustLoad(t, writeFile(t, dir, "bom.json", "\uFEFF"+string(data)))
	if n := tok.Count([]byte("it's 2024")); n <= 0 {
		t.Errorf("Count = %d", n)
	}
}
