package tokens

import (
	"bytes"
	"unicode"
	"unicode/utf8"
)

// addedToken is an entry of a tokenizer.json's "added_tokens".
type addedToken struct {
	id         uint32
	content    []byte
	singleWord bool // match only where no word character touches it
	lstrip     bool // take the white space on its left
	rstrip     bool // take the white space on its right
}

// addedSet finds added tokens in text as Hugging Face's added vocabulary does: the match that
// starts leftmost, the longest of those, then on from its end.
type addedSet struct {
	tokens []addedToken
	// byFirst lists, for each first byte, the indices of the tokens starting with it, longest
	// first, so that the first one found at a position is the longest.
	byFirst map[byte][]int
	// first marks the bytes some token starts with; when there is only one (every special token
	// of Llama-3 and Qwen starts with '<'), only is it, and bytes.IndexByte finds candidates.
	first [256]bool
	only  int // the one first byte, or -1
}

func newAddedSet(tokens []addedToken) addedSet {
	a := addedSet{tokens: tokens, byFirst: map[byte][]int{}, only: -1}
	for i, t := range tokens {
		a.byFirst[t.content[0]] = append(a.byFirst[t.content[0]], i)
		a.first[t.content[0]] = true
	}
	if len(a.byFirst) == 1 {
		a.only = int(tokens[0].content[0])
	}
	for _, list := range a.byFirst {
		// Insertion sort, stable: of two tokens of one length (a file listing one twice) the
		// first listed wins, as in the automaton Hugging Face builds.
		for i := 1; i < len(list); i++ {
			for j := i; j > 0 && len(tokens[list[j]].content) > len(tokens[list[j-1]].content); j-- {
				list[j], list[j-1] = list[j-1], list[j]
			}
		}
	}
	return a
}

// find returns the span of the first added token in s at or after from, its white space taken
// when it strips, and its index; k < 0 when there is none.
func (a *addedSet) find(s []byte, from int) (start, end, k int) {
	if len(a.tokens) == 0 {
		return 0, 0, -1
	}
	for i := from; i < len(s); {
		if a.only >= 0 {
			j := bytes.IndexByte(s[i:], byte(a.only))
			if j < 0 {
				break
			}
			i += j
		} else if !a.first[s[i]] {
			i++
			continue
		}
		k = a.match(s[i:])
		if k < 0 {
			i++
			continue
		}
		t := &a.tokens[k]
		start, end = i, i+len(t.content)
		if t.singleWord && (wordBefore(s[:start]) || wordAfter(s[end:])) {
			// The matcher has moved past this match: its bytes start no other.
			i = end
			continue
		}
		if t.lstrip {
			// Not before from: that white space belongs to the previous match.
			for start > from {
				r, n := utf8.DecodeLastRune(s[:start])
				if !unicode.IsSpace(r) {
					break
				}
				start -= n
			}
		}
		if t.rstrip {
			for end < len(s) {
				r, n := utf8.DecodeRune(s[end:])
				if !unicode.IsSpace(r) {
					break
				}
				end += n
			}
		}
		return start, end, k
	}
	return 0, 0, -1
}

// match is the index of the longest token s starts with, or -1.
func (a *addedSet) match(s []byte) int {
	for _, k := range a.byFirst[s[0]] {
		if bytes.HasPrefix(s, a.tokens[k].content) {
			return k
		}
	}
	return -1
}

// isWord is \w of the Rust regex engine: Alphabetic, marks, decimal digits, connector punctuation
// and the joiners.
func isWord(r rune) bool {
	return r < utf8.RuneSelf && (r == '_' || '0' <= r && r <= '9' || 'a' <= r && r <= 'z' || 'A' <= r && r <= 'Z') ||
		r >= utf8.RuneSelf && (unicode.IsLetter(r) || unicode.Is(unicode.Nl, r) || unicode.Is(unicode.Other_Alphabetic, r) ||
			unicode.IsMark(r) || unicode.Is(unicode.Nd, r) || unicode.Is(unicode.Pc, r) || unicode.Is(unicode.Join_Control, r))
}

func wordBefore(s []byte) bool {
	if len(s) == 0 {
		return false
	}
	r, _ := utf8.DecodeLastRune(s)
	return isWord(r)
}

func wordAfter(s []byte) bool {
	if len(s) == 0 {
		return false
	}
	r, _ := utf8.DecodeRune(s)
	return isWord(r)
}
