package tokens

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// smallFile is testdata/gpt2-small.json decoded: GPT-2's byte symbols, its first 2,000 merges and
// their tokens, made by testdata/ref/ref.mjs from GPT-2's own files.
func smallFile(tb testing.TB) map[string]any {
	tb.Helper()
	var f map[string]any
	readJSON(tb, "testdata/gpt2-small.json", &f)
	return f
}

// truncated keeps the first n merges of a decoded tokenizer.json and the vocabulary they and the
// byte symbols need, for fuzz seeds small enough to mutate.
func truncated(f map[string]any, n int) map[string]any {
	model := f["model"].(map[string]any)
	vocab := model["vocab"].(map[string]any)
	merges := model["merges"].([]any)[:n]
	keep := map[string]any{}
	for b := range 256 {
		s := string(byteRune(byte(b)))
		keep[s] = vocab[s]
	}
	for _, m := range merges {
		p := m.([]any)
		s := p[0].(string) + p[1].(string)
		keep[s] = vocab[s]
	}
	out := map[string]any{}
	for k, v := range f {
		out[k] = v
	}
	m := map[string]any{}
	for k, v := range model {
		m[k] = v
	}
	m["vocab"], m["merges"] = keep, merges
	out["model"] = m
	return out
}

// writeJSON writes v as JSON to name in dir and returns the path.
func writeJSON(tb testing.TB, dir, name string, v any) string {
	tb.Helper()
	data, err := json.Marshal(v)
	if err != nil {
		tb.Fatal(err)
	}
	return writeFile(tb, dir, name, string(data))
}

func writeFile(tb testing.TB, dir, name, content string) string {
	tb.Helper()
	path := filepath.Join(dir, name)
	if err := os.WriteFile(path, []byte(content), 0o644); err != nil {
		tb.Fatal(err)
	}
	return path
}

// pairFiles writes the vocabulary and merges of a decoded tokenizer.json as GPT-2's vocab.json and
// merges.txt under the given names.
func pairFiles(tb testing.TB, dir string, f map[string]any, vocabName, mergesName string) (string, string) {
	tb.Helper()
	model := f["model"].(map[string]any)
	var b strings.Builder
	b.WriteString("#version: 0.2\n")
	for _, m := range model["merges"].([]any) {
		p := m.([]any)
		b.WriteString(p[0].(string) + " " + p[1].(string) + "\n")
	}
	return writeJSON(tb, dir, vocabName, model["vocab"]), writeFile(tb, dir, mergesName, b.String())
}

func mustLoad(tb testing.TB, path string) *Tokenizer {
	tb.Helper()
	tok, err := Load(path)
	if err != nil {
		tb.Fatal(err)
	}
	return tok
}

func readFile(tb testing.TB, path string) []byte {
	tb.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		tb.Fatal(err)
	}
	return data
}
