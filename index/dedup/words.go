package dedup

import (
	"unicode"
	"unicode/utf8"
)

// fold is Unicode simple case folding (CaseFolding.txt, statuses C and S) of one rune. It is
// unicode.ToLower(unicode.ToUpper(r)) but for the three places where that differs: dotless ı and
// dotted İ fold to themselves (their foldings to i are Turkic or full ones), and Cherokee small
// letters fold to their capitals, as the capitals came first in Unicode.
// TestFoldMatchesCaseFolding checks every code point against CaseFolding.txt.
func fold(r rune) rune {
	if r < utf8.RuneSelf {
		if 'A' <= r && r <= 'Z' {
			r += 'a' - 'A'
		}
		return r
	}
	switch {
	case r == 'ı', r == 'İ':
		return r
	case 0x13A0 <= r && r <= 0x13FD, 0xAB70 <= r && r <= 0xABBF: // Cherokee
		return unicode.ToUpper(r)
	}
	return unicode.ToLower(unicode.ToUpper(r))
}

// isWordRune reports whether r belongs in a word: letters (L), marks (M, so that a decomposed
// accent stays in its word) and decimal digits (Nd).
func isWordRune(r rune) bool {
	if r < utf8.RuneSelf {
		return 'a' <= r && r <= 'z' || 'A' <= r && r <= 'Z' || '0' <= r && r <= '9'
	}
	return unicode.IsLetter(r) || unicode.IsMark(r) || unicode.IsDigit(r)
}

// isSpace is the white space of Normalize: unicode.IsSpace, with an ASCII fast path.
func isSpace(r rune) bool {
	if r < utf8.RuneSelf {
		return r == ' ' || '\t' <= r && r <= '\r'
	}
	return unicode.IsSpace(r)
}

// runes holds the bytes of a rune cut at the end of one write, for the next write to complete.
// Writers decode their own bytes in line (a call per byte would cost more than the work) and use
// runes only at the edges of a write, so that splitting a text anywhere gives the same runes.
type runes struct {
	pend  [utf8.UTFMax]byte
	npend int
}

// feed completes the kept bytes with the first bytes of p, passes the runes that come out to fn,
// and returns the rest of p. A byte that starts no valid UTF-8 sequence is passed as
// utf8.RuneError with its own value in raw, so that it stays apart from a real U+FFFD.
func (d *runes) feed(p []byte, fn func(r rune, raw byte)) []byte {
	for d.npend > 0 && len(p) > 0 {
		d.pend[d.npend] = p[0]
		d.npend++
		p = p[1:]
		d.drain(fn, false)
	}
	return p
}

// keep stores p, the start of a rune cut by the end of a write (utf8.FullRune(p) is false).
func (d *runes) keep(p []byte) { d.npend = copy(d.pend[:], p) }

// drain passes on the kept bytes that form full runes (or invalid bytes) and keeps the start of a
// rune that the next write may complete; at the end of the text (final) it passes everything.
func (d *runes) drain(fn func(r rune, raw byte), final bool) {
	for d.npend > 0 {
		b := d.pend[:d.npend]
		if !final && !utf8.FullRune(b) {
			return
		}
		r, n := utf8.DecodeRune(b)
		if r == utf8.RuneError && n == 1 {
			fn(r, b[0])
		} else {
			fn(r, 0)
		}
		d.npend = copy(d.pend[:], b[n:])
	}
}

// decode decodes the rune at the start of p, which is not ASCII and is a full rune or invalid,
// as feed does.
func decode(p []byte) (r rune, raw byte, n int) {
	r, n = utf8.DecodeRune(p)
	if r == utf8.RuneError && n == 1 {
		return r, p[0], 1
	}
	return r, 0, n
}
