package decontam

import (
	"strings"
	"unicode"
	"unicode/utf8"
)

// Words appends the words of text to dst and returns the result: maximal runs of letters (L),
// marks (M, so that a decomposed accent stays in its word) and decimal digits (Nd), lowercased
// rune by rune with unicode.ToLower. Everything else separates words and is dropped; invalid
// UTF-8 separates words too. Evaluation and pool rows must be split the same way; this is the
// split for callers with none of their own.
//
// A word already in lower case is a substring of text and allocates nothing.
func Words(dst []string, text string) []string {
	start, lower := -1, true
	for i, r := range text {
		if !isWordRune(r) { // invalid UTF-8 decodes to U+FFFD, a symbol
			if start >= 0 {
				dst = appendWord(dst, text[start:i], lower)
				start = -1
			}
			continue
		}
		if start < 0 {
			start, lower = i, true
		}
		if lower && unicode.ToLower(r) != r {
			lower = false
		}
	}
	if start >= 0 {
		dst = appendWord(dst, text[start:], lower)
	}
	return dst
}

func appendWord(dst []string, w string, lower bool) []string {
	if !lower {
		w = strings.Map(unicode.ToLower, w)
	}
	return append(dst, w)
}

// isWordRune is the word rune of package dedup's Signer too, so that both split alike.
func isWordRune(r rune) bool {
	if r < utf8.RuneSelf {
		return 'a' <= r && r <= 'z' || 'A' <= r && r <= 'Z' || '0' <= r && r <= '9'
	}
	return unicode.IsLetter(r) || unicode.IsMark(r) || unicode.IsDigit(r)
}
