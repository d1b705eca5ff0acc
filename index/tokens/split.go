package tokens

import (
	"unicode"
	"unicode/utf8"
)

// pattern is one of the pre-tokenisation regular expressions this package implements by hand.
// Each is an alternation tried left to right at the current position, so a splitter decides its
// next piece from the first runes alone; only \s+(?!\S) looks ahead, and it gives back the last
// white-space rune when a non-space follows, so that the space starts the next word.
type pattern uint8

const (
	// patGPT2 is GPT-2's expression, also the one ByteLevel uses when use_regex is true:
	//	's|'t|'re|'ve|'m|'ll|'d| ?\p{L}+| ?\p{N}+| ?[^\s\p{L}\p{N}]+|\s+(?!\S)|\s+
	patGPT2 pattern = iota + 1
	// patCL100K is the expression Llama-3 files carry (tiktoken's cl100k_base):
	//	(?i:'s|'t|'re|'ve|'m|'ll|'d)|[^\r\n\p{L}\p{N}]?\p{L}+|\p{N}{1,3}| ?[^\s\p{L}\p{N}]+[\r\n]*|\s*[\r\n]+|\s+(?!\S)|\s+
	patCL100K
	// patQwen2 is patCL100K with single digits (\p{N} for \p{N}{1,3}), as Qwen2 and Qwen3 files carry.
	patQwen2
)

const (
	gpt2Regex   = `'s|'t|'re|'ve|'m|'ll|'d| ?\p{L}+| ?\p{N}+| ?[^\s\p{L}\p{N}]+|\s+(?!\S)|\s+`
	cl100kRegex = `(?i:'s|'t|'re|'ve|'m|'ll|'d)|[^\r\n\p{L}\p{N}]?\p{L}+|\p{N}{1,3}| ?[^\s\p{L}\p{N}]+[\r\n]*|\s*[\r\n]+|\s+(?!\S)|\s+`
	qwen2Regex  = `(?i:'s|'t|'re|'ve|'m|'ll|'d)|[^\r\n\p{L}\p{N}]?\p{L}+|\p{N}| ?[^\s\p{L}\p{N}]+[\r\n]*|\s*[\r\n]+|\s+(?!\S)|\s+`
)

// patternOf names the splitter for a regular expression as tokenizer files write it.
func patternOf(re string) (pattern, bool) {
	switch re {
	case gpt2Regex:
		return patGPT2, true
	case cl100kRegex:
		return patCL100K, true
	case qwen2Regex:
		return patQwen2, true
	}
	return 0, false
}

// class is a rune's class in the expressions: \p{L}, \p{N}, \s, or none of them.
type class uint8

const (
	other class = iota
	letter
	number
	space
)

// decode is utf8.DecodeRune with the ASCII case first; an invalid byte is U+FFFD of width 1.
func decode(s []byte) (rune, int) {
	if s[0] < utf8.RuneSelf {
		return rune(s[0]), 1
	}
	return utf8.DecodeRune(s)
}

func classOf(r rune) class {
	if r < utf8.RuneSelf {
		switch {
		case 'a' <= r && r <= 'z' || 'A' <= r && r <= 'Z':
			return letter
		case '0' <= r && r <= '9':
			return number
		case r == ' ' || '\t' <= r && r <= '\r':
			return space
		}
		return other
	}
	switch {
	case unicode.IsLetter(r):
		return letter
	case unicode.IsNumber(r):
		return number
	case unicode.IsSpace(r): // Unicode's White_Space above Latin-1; U+0085 and U+00A0 within it
		return space
	}
	return other
}

// run is the length of the longest prefix of s whose runes are all of class c, taking at most
// limit runes (limit < 0: no limit).
func run(s []byte, c class, limit int) int {
	i := 0
	for i < len(s) && limit != 0 {
		r, n := decode(s[i:])
		if classOf(r) != c {
			break
		}
		i += n
		limit--
	}
	return i
}

// newlines is the length of the prefix of s made of '\r' and '\n'.
func newlines(s []byte) int {
	i := 0
	for i < len(s) && (s[i] == '\r' || s[i] == '\n') {
		i++
	}
	return i
}

// contraction is the length of the contraction at the start of s (which begins with an
// apostrophe), or 0: 's 't 're 've 'm 'll 'd, in any case when fold is set.
func contraction(s []byte, fold bool) int {
	if len(s) < 2 {
		return 0
	}
	r1, n1 := decode(s[1:])
	switch {
	case is(r1, 's', fold), is(r1, 't', fold), is(r1, 'm', fold), is(r1, 'd', fold):
		return 1 + n1
	}
	if len(s) < 1+n1+1 {
		return 0
	}
	r2, n2 := decode(s[1+n1:])
	switch {
	case is(r1, 'r', fold) && is(r2, 'e', fold),
		is(r1, 'v', fold) && is(r2, 'e', fold),
		is(r1, 'l', fold) && is(r2, 'l', fold):
		return 1 + n1 + n2
	}
	return 0
}

// is reports whether r matches the lower-case ASCII letter x, folding case when fold is set. Of
// the letters in contractions only 's' has a non-ASCII simple case fold: U+017F, long s.
func is(r, x rune, fold bool) bool {
	return r == x || fold && (r == x-'a'+'A' || x == 's' && r == 0x17F)
}

// next is the length of the first piece of s (s is not empty) under p; it is at least 1.
func (p pattern) next(s []byte) int {
	r, n := decode(s)
	if r == '\'' {
		if m := contraction(s, p != patGPT2); m > 0 {
			return m
		}
	}
	c := classOf(r)
	if p == patGPT2 {
		return nextGPT2(s, r, n, c)
	}
	// [^\r\n\p{L}\p{N}]?\p{L}+
	if c == letter {
		return run(s, letter, -1)
	}
	if c != number && r != '\r' && r != '\n' && n < len(s) {
		if r2, _ := decode(s[n:]); classOf(r2) == letter {
			return n + run(s[n:], letter, -1)
		}
	}
	// \p{N}{1,3} or \p{N}
	if c == number {
		if p == patQwen2 {
			return n
		}
		return run(s, number, 3)
	}
	//  ?[^\s\p{L}\p{N}]+[\r\n]*
	if r == ' ' && n < len(s) {
		if r2, _ := decode(s[n:]); classOf(r2) == other {
			k := n + run(s[n:], other, -1)
			return k + newlines(s[k:])
		}
	}
	if c == other {
		k := run(s, other, -1)
		return k + newlines(s[k:])
	}
	// White space from here on. \s*[\r\n]+ ends at the run's last line break, if it has one.
	end, last := spaces(s)
	for i := end - 1; i >= 0; i-- {
		if s[i] == '\r' || s[i] == '\n' {
			return i + 1
		}
	}
	return giveBack(s, end, last)
}

func nextGPT2(s []byte, r rune, n int, c class) int {
	//  ?\p{L}+ |  ?\p{N}+ |  ?[^\s\p{L}\p{N}]+
	if r == ' ' && n < len(s) {
		r2, _ := decode(s[n:])
		if c2 := classOf(r2); c2 != space {
			return n + run(s[n:], c2, -1)
		}
	}
	if c != space {
		return run(s, c, -1)
	}
	end, last := spaces(s)
	return giveBack(s, end, last)
}

// spaces is the length of the white-space run that starts s, and where its last rune starts.
func spaces(s []byte) (end, last int) {
	for end < len(s) {
		r, n := decode(s[end:])
		if classOf(r) != space {
			break
		}
		last = end
		end += n
	}
	return end, last
}

// giveBack applies \s+(?!\S)|\s+ to a white-space run of length end whose last rune starts at
// last: the whole run at the end of s; before a non-space, all but its last rune, which then
// starts the next piece (" word"), unless that rune is the whole run.
func giveBack(s []byte, end, last int) int {
	if end == len(s) || last == 0 {
		return end
	}
	return last
}
