package tokens

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strings"
)

// Load reads a tokenizer file and tells its kind from its content:
//
//   - A Hugging Face tokenizer.json (a JSON object with a "model" object) whose model is
//     byte-level BPE: "model" of type "BPE" with "vocab" and "merges", each merge an "a b" string
//     or an ["a", "b"] pair, and a ByteLevel pre-tokenizer, alone or last in a Sequence after
//     Split pre-tokenizers. A Split must use one of the regular expressions implemented here by
//     hand — GPT-2's, the cl100k one Llama-3 files carry, or Qwen2's — with behaviour "Isolated",
//     not inverted. The normalizer may be null, NFC, or a Sequence of those. Anything else
//     (another model type, pre-tokenizer, expression or normalizer, dropout, a subword prefix or
//     suffix) is refused with ErrUnsupported rather than counted wrongly.
//   - One of GPT-2's pair of files: vocab.json or encoder.json (a JSON object of token → id), or
//     merges.txt or vocab.bpe (one merge a line after a "#version" line). The other file of the
//     pair is looked for beside it under those two names; LoadPair takes both paths. The pair's
//     pre-tokeniser is GPT-2's expression, and it has no added tokens: "<|endoftext|>" in a text
//     is ordinary text, as in GPT-2's own encoder.
//
// Added tokens follow the library's documented semantics, whatever their "special" flag, which
// only decides whether decoding skips them: each is matched where its content appears literally
// (the leftmost match, the longest there), counts as one token, and splits the text around it,
// as Hugging Face's encode does by default. Those marked "normalized": false are matched first,
// in the raw text; "lstrip" and "rstrip" make a token take the white space beside it, and
// "single_word" keeps it from matching beside a word character (\w, Unicode).
//
// BPE runs as Hugging Face's does: a pre-token's bytes are symbols, and the merge of lowest rank
// among adjacent pairs applies, the leftmost on a tie, until none does; with "ignore_merges" a
// pre-token that is itself in the vocabulary is one token. The classes of the expressions are
// Unicode's (Go's tables, Unicode 15): \p{L} letters, \p{N} numbers, \s the White_Space property
// (U+0085 is white space, U+FEFF is not), as in the Oniguruma and Rust engines; JavaScript's \s
// differs on those two. The contractions of the cl100k and Qwen2 expressions fold case as
// Unicode's simple case folding does ('ſ matches 's). Bytes that are not UTF-8 are classed as
// U+FFFD, a symbol, and tokenised as the bytes they are.
//
// An NFC normalizer is applied as Unicode's UAX #15 defines it, with Unicode 15.0's data
// (nfc_data.go, made by gen_nfc.go); text whose runes are all below U+0300, which NFC cannot
// change, skips it.
//
// Errors name the file and where in it (a line, or a JSON path such as model.merges[12]), and wrap
// ErrUnsupported, ErrInvalid or the file system's error.
func Load(path string) (*Tokenizer, error) {
	data, err := read(path)
	if err != nil {
		return nil, err
	}
	switch firstByte(data) {
	case '{':
	case '[':
		return nil, fmt.Errorf("tokens: %s: a JSON array, want an object: %w", path, ErrInvalid)
	default:
		vocab, err := beside(path, "vocab.json", "encoder.json")
		if err != nil {
			return nil, err
		}
		vocabData, err := read(vocab)
		if err != nil {
			return nil, err
		}
		return loadPair(vocab, vocabData, path, data)
	}
	var top hfTop
	if err := json.Unmarshal(data, &top); err != nil {
		return nil, jsonError(path, data, err)
	}
	if firstByte(top.Model) == '{' {
		return loadHF(path, &top)
	}
	merges, err := beside(path, "merges.txt", "vocab.bpe")
	if err != nil {
		return nil, err
	}
	mergesData, err := read(merges)
	if err != nil {
		return nil, err
	}
	return loadPair(path, data, merges, mergesData)
}

// LoadPair reads GPT-2's pair of files, a vocab.json (token → id) and a merges.txt, from any
// paths; see Load.
func LoadPair(vocabPath, mergesPath string) (*Tokenizer, error) {
	vocabData, err := read(vocabPath)
	if err != nil {
		return nil, err
	}
	mergesData, err := read(mergesPath)
	if err != nil {
		return nil, err
	}
	return loadPair(vocabPath, vocabData, mergesPath, mergesData)
}

func read(path string) ([]byte, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("tokens: %w", err) // the error names the path
	}
	return bytes.TrimPrefix(data, []byte("\uFEFF")), nil
}

func firstByte(data []byte) byte {
	data = bytes.TrimLeft(data, " \t\r\n")
	if len(data) == 0 {
		return 0
	}
	return data[0]
}

// beside finds the other file of GPT-2's pair in path's folder, under the first of names present.
func beside(path string, names ...string) (string, error) {
	dir := filepath.Dir(path)
	for _, name := range names {
		p := filepath.Join(dir, name)
		if _, err := os.Stat(p); err == nil {
			return p, nil
		}
	}
	return "", fmt.Errorf("tokens: %s: looked for its pair %s beside it: %w",
		path, strings.Join(names, " or "), fs.ErrNotExist)
}

// jsonError places a JSON error at a line and column of the file.
func jsonError(path string, data []byte, err error) error {
	var offset int64 = -1
	var syntax *json.SyntaxError
	var typ *json.UnmarshalTypeError
	switch {
	case errors.As(err, &syntax):
		offset = syntax.Offset
	case errors.As(err, &typ):
		offset = typ.Offset
	}
	if offset < 0 || offset > int64(len(data)) {
		return fmt.Errorf("tokens: %s: %w: %w", path, ErrInvalid, err)
	}
	before := data[:offset]
	line := bytes.Count(before, []byte("\n")) + 1
	// Offset counts the faulty byte, so the column is the length of its line so far.
	col := len(before) - bytes.LastIndexByte(before, '\n') - 1
	return fmt.Errorf("tokens: %s:%d:%d: %w: %w", path, line, col, ErrInvalid, err)
}

// loadPair builds GPT-2's tokenizer from vocab.json and merges.txt.
func loadPair(vocabPath string, vocabData []byte, mergesPath string, mergesData []byte) (*Tokenizer, error) {
	var vocab map[string]int64
	if err := json.Unmarshal(vocabData, &vocab); err != nil {
		return nil, jsonError(vocabPath, vocabData, err)
	}
	var merges [][2]string
	var where []int // the line of each merge
	for i, line := range strings.Split(string(mergesData), "\n") {
		line = strings.TrimSuffix(line, "\r")
		if i == 0 && strings.HasPrefix(line, "#version") || strings.TrimSpace(line) == "" {
			continue
		}
		f := strings.Fields(line)
		if len(f) != 2 {
			return nil, fmt.Errorf("tokens: %s:%d: want two symbols, found %d: %w", mergesPath, i+1, len(f), ErrInvalid)
		}
		merges = append(merges, [2]string{f[0], f[1]})
		where = append(where, i+1)
	}
	m := &model{splits: nil, byteRegex: true}
	err := m.bpe.build(vocab, merges, false,
		func() string { return vocabPath },
		func(i int) string { return fmt.Sprintf("%s:%d", mergesPath, where[i]) })
	if err != nil {
		return nil, err
	}
	return &Tokenizer{m: m}, nil
}

// build fills m from a vocabulary of byte-level strings and the merges in rank order; vocabAt and
// mergeAt name the place of the vocabulary and of merge i in errors.
func (m *bpe) build(vocab map[string]int64, merges [][2]string, ignoreMerges bool, vocabAt func() string, mergeAt func(i int) string) error {
	id := func(tok string) (uint32, bool) {
		v, ok := vocab[tok]
		return uint32(v), ok
	}
	for tok, v := range vocab {
		if v < 0 || v > math.MaxUint32 {
			return fmt.Errorf("tokens: %s: token %q has id %d, outside 0..2³²−1: %w", vocabAt(), tok, v, ErrInvalid)
		}
	}
	for b := range 256 {
		v, ok := id(string(byteRune(byte(b))))
		if !ok {
			return fmt.Errorf("tokens: %s: no symbol %q for byte 0x%02X: not a byte-level vocabulary: %w",
				vocabAt(), byteRune(byte(b)), b, ErrUnsupported)
		}
		m.bytes[b] = v
	}
	if len(merges) >= 1<<31 {
		return fmt.Errorf("tokens: %s: %d merges, more than 2³¹: %w", mergeAt(0), len(merges), ErrUnsupported)
	}
	m.merges = newPairTable(len(merges))
	for i, pair := range merges {
		a, okA := id(pair[0])
		b, okB := id(pair[1])
		ab, okAB := id(pair[0] + pair[1])
		var missing string
		switch {
		case !okA:
			missing = pair[0]
		case !okB:
			missing = pair[1]
		case !okAB:
			missing = pair[0] + pair[1]
		}
		if missing != "" {
			return fmt.Errorf("tokens: %s: merge %q %q: token %q is not in the vocabulary: %w",
				mergeAt(i), pair[0], pair[1], missing, ErrInvalid)
		}
		// A pair listed twice takes its later rank, as GPT-2's dict and Hugging Face's map do.
		m.merges.put(uint64(a)<<32|uint64(b), uint64(i)<<32|uint64(ab))
	}
	if ignoreMerges {
		m.whole = make(map[string]uint32, len(vocab))
		var buf []byte
		for tok, v := range vocab {
			var ok bool
			if buf, ok = byteLevelDecode(tok, buf[:0]); ok {
				m.whole[string(buf)] = uint32(v)
			}
		}
	}
	return nil
}
