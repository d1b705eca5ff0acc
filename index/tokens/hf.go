package tokens

import (
	"bytes"
	"encoding/json"
	"fmt"
	"strings"
)

// The parts of a Hugging Face tokenizer.json this package reads; decoder, post_processor,
// truncation and padding do not change a count.
type hfAdded struct {
	ID         uint32 `json:"id"`
	Content    string `json:"content"`
	SingleWord bool   `json:"single_word"`
	Lstrip     bool   `json:"lstrip"`
	Rstrip     bool   `json:"rstrip"`
	Normalized *bool  `json:"normalized"`
	Special    bool   `json:"special"`
}

type hfModel struct {
	Type                    string           `json:"type"`
	Vocab                   map[string]int64 `json:"vocab"`
	Merges                  []hfMerge        `json:"merges"`
	Dropout                 *float64         `json:"dropout"`
	ContinuingSubwordPrefix *string          `json:"continuing_subword_prefix"`
	EndOfWordSuffix         *string          `json:"end_of_word_suffix"`
	IgnoreMerges            bool             `json:"ignore_merges"`
}

// hfMerge is a merge written "a b" or ["a", "b"]. Decoding never fails on its shape, so that
// loadHF can name the merge's index; n is the number of symbols found, −1 for neither form.
type hfMerge struct {
	pair [2]string
	n    int
}

func (m *hfMerge) UnmarshalJSON(b []byte) error {
	var parts []string
	switch b[0] {
	case '"':
		s, ok := plainString(b)
		if !ok {
			if err := json.Unmarshal(b, &s); err != nil {
				return err
			}
		}
		parts = strings.Split(s, " ")
	case '[':
		var ok bool
		if parts, ok = plainPair(b); !ok {
			if err := json.Unmarshal(b, &parts); err != nil {
				m.n = -1
				return nil
			}
		}
	default:
		m.n = -1
		return nil
	}
	m.n = len(parts)
	if m.n == 2 {
		m.pair = [2]string{parts[0], parts[1]}
	}
	return nil
}

// plainString reads a JSON string without escapes, which is the bytes between its quotes; most
// merges are, and taking them so spares a decoder call for each of hundreds of thousands.
func plainString(b []byte) (string, bool) {
	if len(b) < 2 || b[0] != '"' || b[len(b)-1] != '"' || bytes.IndexByte(b, '\\') >= 0 {
		return "", false
	}
	return string(b[1 : len(b)-1]), true
}

// plainPair reads ["a", "b"] with plain strings (see plainString), and false for anything else.
func plainPair(b []byte) ([]string, bool) {
	if bytes.IndexByte(b, '\\') >= 0 {
		return nil, false
	}
	b = bytes.TrimSpace(b[1:]) // after '['
	var out []string
	for len(out) < 2 {
		if len(b) == 0 || b[0] != '"' {
			return nil, false
		}
		end := bytes.IndexByte(b[1:], '"')
		if end < 0 {
			return nil, false
		}
		out = append(out, string(b[1:1+end]))
		b = bytes.TrimSpace(b[2+end:])
		if len(out) == 1 {
			if len(b) == 0 || b[0] != ',' {
				return nil, false
			}
			b = bytes.TrimSpace(b[1:])
		}
	}
	return out, string(b) == "]"
}

type hfStep struct {
	Type          string            `json:"type"`
	Pretokenizers []json.RawMessage `json:"pretokenizers"`
	Normalizers   []json.RawMessage `json:"normalizers"`
	Pattern       *struct {
		Regex  *string `json:"Regex"`
		String *string `json:"String"`
	} `json:"pattern"`
	Behavior       string `json:"behavior"`
	Invert         bool   `json:"invert"`
	AddPrefixSpace bool   `json:"add_prefix_space"`
	UseRegex       *bool  `json:"use_regex"`
}

// hfError is an error at a JSON path of a tokenizer.json.
func hfError(path, at string, kind error, format string, args ...any) error {
	return fmt.Errorf("tokens: %s: %s: %s: %w", path, at, fmt.Sprintf(format, args...), kind)
}

func decodePart(path, at string, raw json.RawMessage, v any) error {
	if err := json.Unmarshal(raw, v); err != nil {
		return fmt.Errorf("tokens: %s: %s: %w: %w", path, at, ErrInvalid, err)
	}
	return nil
}

// hfTop is a tokenizer.json's top level, or a vocab.json's, where "model" is a token.
type hfTop struct {
	AddedTokens  json.RawMessage `json:"added_tokens"`
	Normalizer   json.RawMessage `json:"normalizer"`
	PreTokenizer json.RawMessage `json:"pre_tokenizer"`
	Model        json.RawMessage `json:"model"`
}

func loadHF(path string, top *hfTop) (*Tokenizer, error) {
	var hm hfModel
	if err := decodePart(path, "model", top.Model, &hm); err != nil {
		return nil, err
	}
	switch {
	case hm.Type != "" && hm.Type != "BPE":
		return nil, hfError(path, "model.type", ErrUnsupported, "%q, not BPE", hm.Type)
	case hm.Vocab == nil:
		return nil, hfError(path, "model.vocab", ErrInvalid, "missing")
	case hm.Dropout != nil && *hm.Dropout != 0:
		return nil, hfError(path, "model.dropout", ErrUnsupported, "%g drops merges at random", *hm.Dropout)
	case hm.ContinuingSubwordPrefix != nil && *hm.ContinuingSubwordPrefix != "":
		return nil, hfError(path, "model.continuing_subword_prefix", ErrUnsupported, "%q", *hm.ContinuingSubwordPrefix)
	case hm.EndOfWordSuffix != nil && *hm.EndOfWordSuffix != "":
		return nil, hfError(path, "model.end_of_word_suffix", ErrUnsupported, "%q", *hm.EndOfWordSuffix)
	}
	merges := make([][2]string, len(hm.Merges))
	for i, mg := range hm.Merges {
		switch {
		case mg.n < 0:
			return nil, hfError(path, fmt.Sprintf("model.merges[%d]", i), ErrInvalid, "want an \"a b\" string or an [\"a\", \"b\"] pair")
		case mg.n != 2:
			return nil, hfError(path, fmt.Sprintf("model.merges[%d]", i), ErrInvalid, "want two symbols, found %d", mg.n)
		}
		merges[i] = mg.pair
	}
	hm.Merges = nil

	m := &model{}
	if err := m.preTokenizer(path, "pre_tokenizer", top.PreTokenizer, true); err != nil {
		return nil, err
	}
	useNFC, err := normalizer(path, "normalizer", top.Normalizer)
	if err != nil {
		return nil, err
	}
	if useNFC {
		if m.nfc, err = newNFC(); err != nil {
			return nil, err
		}
	}
	if err := m.bpe.build(hm.Vocab, merges, hm.IgnoreMerges,
		func() string { return path + ": model.vocab" },
		func(i int) string { return fmt.Sprintf("%s: model.merges[%d]", path, i) }); err != nil {
		return nil, err
	}
	var added []hfAdded
	if top.AddedTokens != nil {
		if err := decodePart(path, "added_tokens", top.AddedTokens, &added); err != nil {
			return nil, err
		}
	}
	var raw, normal []addedToken
	seen := map[string]bool{}
	for _, a := range added {
		if a.Content == "" || seen[a.Content] {
			continue // Hugging Face ignores empty and repeated tokens
		}
		seen[a.Content] = true
		t := addedToken{id: a.ID, content: []byte(a.Content), singleWord: a.SingleWord, lstrip: a.Lstrip, rstrip: a.Rstrip}
		// Special tokens are not normalised unless the file says so.
		if a.Normalized != nil && *a.Normalized || a.Normalized == nil && !a.Special {
			if m.nfc != nil {
				// Matched in normalised text, so normalised too, as Hugging Face does.
				t.content, _ = m.nfc.appendNFC(nil, t.content, nil)
			}
			normal = append(normal, t)
		} else {
			raw = append(raw, t)
		}
	}
	m.raw, m.normal = newAddedSet(raw), newAddedSet(normal)
	return &Tokenizer{m: m}, nil
}

// preTokenizer reads the pre-tokenizer at JSON path at; last says it ends the chain, the only
// place ByteLevel may stand.
func (m *model) preTokenizer(path, at string, raw json.RawMessage, last bool) error {
	if firstByte(raw) == 0 || string(raw) == "null" {
		return hfError(path, at, ErrUnsupported, "none: not byte-level")
	}
	var s hfStep
	if err := decodePart(path, at, raw, &s); err != nil {
		return err
	}
	switch s.Type {
	case "ByteLevel":
		if !last {
			return hfError(path, at, ErrUnsupported, "ByteLevel before another pre-tokenizer")
		}
		m.byteRegex = s.UseRegex == nil || *s.UseRegex
		m.prefixSpace = s.AddPrefixSpace
		return nil
	case "Split":
		if last {
			return hfError(path, at, ErrUnsupported, "Split without ByteLevel after it: not byte-level")
		}
		if s.Pattern == nil || s.Pattern.Regex == nil {
			return hfError(path, at+".pattern", ErrUnsupported, "only a Regex pattern is implemented")
		}
		p, ok := patternOf(*s.Pattern.Regex)
		if !ok {
			return hfError(path, at+".pattern", ErrUnsupported, "regex %q is not one implemented here", *s.Pattern.Regex)
		}
		if s.Behavior != "Isolated" || s.Invert {
			return hfError(path, at, ErrUnsupported, "behavior %q, invert %v: only Isolated, not inverted", s.Behavior, s.Invert)
		}
		m.splits = append(m.splits, p)
		return nil
	case "Sequence":
		if !last {
			return hfError(path, at, ErrUnsupported, "nested Sequence")
		}
		if len(s.Pretokenizers) == 0 {
			return hfError(path, at, ErrUnsupported, "empty Sequence: not byte-level")
		}
		for i, step := range s.Pretokenizers {
			if err := m.preTokenizer(path, fmt.Sprintf("%s.pretokenizers[%d]", at, i), step, i == len(s.Pretokenizers)-1); err != nil {
				return err
			}
		}
		return nil
	}
	return hfError(path, at, ErrUnsupported, "pre-tokenizer %q", s.Type)
}

// normalizer checks that the normalizer at JSON path at is none, NFC, or a Sequence of those, and
// reports whether NFC is asked for.
func normalizer(path, at string, raw json.RawMessage) (bool, error) {
	if firstByte(raw) == 0 || string(raw) == "null" {
		return false, nil
	}
	var s hfStep
	if err := decodePart(path, at, raw, &s); err != nil {
		return false, err
	}
	switch s.Type {
	case "NFC":
		return true, nil
	case "Sequence":
		any := false
		for i, step := range s.Normalizers {
			nfc, err := normalizer(path, fmt.Sprintf("%s.normalizers[%d]", at, i), step)
			if err != nil {
				return false, err
			}
			any = any || nfc
		}
		return any, nil
	}
	return false, hfError(path, at, ErrUnsupported, "normalizer %q", s.Type)
}
