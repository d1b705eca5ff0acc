package analysis

import (
	"unicode"
	"unicode/utf8"
)

// The sklearn chain is the analyzer that scikit-learn's CountVectorizer and
// TfidfVectorizer build by default with stop_words='english'
// (sklearn.feature_extraction.text, build_analyzer):
//
//  1. Python's str.lower() on the whole text: each character's simple
//     lowercase mapping, except U+0130 (İ), which becomes "i" and U+0307,
//     and U+03A3 (Σ), which becomes final sigma ς where Unicode's
//     Final_Sigma context holds (a cased letter before it, none after it,
//     case-ignorable characters skipped) and σ elsewhere;
//  2. every match of the token pattern (?u)\b\w\w+\b, which is every
//     maximal run of two or more word characters: letters, numbers and
//     '_' (Python's re \w: str.isalnum() or '_');
//  3. the words of scikit-learn's ENGLISH_STOP_WORDS dropped
//     (sklearnStopWords); no stemming.
//
// scikit-learn reads str, not bytes; a byte that is not part of valid UTF-8
// counts here as one character U+FFFD, as Python's
// bytes.decode('utf-8', 'replace') makes it, so it separates words.
// Character properties come from Go's unicode package (unicode.Version);
// Debian's Python 3.11 uses Unicode 14.0, so the two differ only on
// characters assigned since, which TestSklearnUnicode lists.
//
// The chain is defined, character by character, by sklearnRef in the tests,
// and checked against scikit-learn itself there. sklearnEach below is the
// path used, tested equal to sklearnRef: ASCII words go through the same
// caches as the english chains, so they get tags; words with other
// characters are decoded rune by rune.

// sklearnClass maps a byte of lowercased text to what the scanner does
// with it: 0 ends a word, 1 is an ASCII word byte, 2 starts a non-ASCII
// character. Zero bytes end words, so the zero padding after the text
// stops a scan without a bounds check.
const sklearnClass = "" +
	"\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00" +
	"\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00" +
	"\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00" +
	"\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01\x00\x00\x00\x00\x00\x00" + // 0-9
	"\x00\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01" + // A-O
	"\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01\x00\x00\x00\x00\x01" + // P-Z, _
	"\x00\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01" + // a-o
	"\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01\x00\x00\x00\x00\x00" + // p-z
	"\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02" +
	"\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02" +
	"\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02" +
	"\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02" +
	"\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02" +
	"\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02" +
	"\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02" +
	"\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02\x02"

// sklearnEach is EachTagged for the sklearn chain. a.buf holds at least
// len(text)+pad bytes.
func (a *Analyzer) sklearnEach(text []byte, fn func(term []byte, tag *uint64)) {
	n := len(text)
	b := a.buf[:n+pad]
	// ASCII is lowercased; other bytes are copied as they are, only to
	// be classified: the rune path reads text itself.
	for i := 0; i < n; {
		i += copyLower(b[i:], text[i:])
		for ; i < n && text[i] >= 0x80; i++ {
			b[i] = text[i]
		}
	}
	clear(b[n:])
	for i := 0; i < n; {
		switch sklearnClass[b[i]] {
		case 0:
			i++
		case 1:
			j := i + 1
			for sklearnClass[b[j]] == 1 {
				j++
			}
			if sklearnClass[b[j]] == 2 {
				// The word may go on past the ASCII.
				i = a.sklearnRunes(text, i, fn)
				continue
			}
			if j-i >= 2 {
				a.emitWord(b, i, j-i, fn)
			}
			i = j
		default:
			i = a.sklearnRunes(text, i, fn)
		}
	}
}

// sklearnRunes analyses text from s, where a word may start, rune by
// rune: it passes on the word starting there, if any, and returns where
// the scan goes on.
func (a *Analyzer) sklearnRunes(text []byte, s int, fn func(term []byte, tag *uint64)) int {
	t := a.term[:0]
	runes, i := 0, s
	for i < len(text) {
		r, size := utf8.DecodeRune(text[i:])
		var lr rune
		switch {
		case r < utf8.RuneSelf:
			lr = rune(lower[r])
		case r == 'İ':
			lr = 'i'
		case r == 'Σ':
			lr = 'σ'
			if finalSigma(text, i, size) {
				lr = 'ς'
			}
		default:
			lr = unicode.ToLower(r)
		}
		if !sklearnWordRune(lr) {
			if runes == 0 {
				i += size // a character that is no word: skip it
			}
			break
		}
		t = utf8.AppendRune(t, lr)
		runes++
		i += size
		if r == 'İ' {
			// The U+0307 of its lowercase is a combining mark,
			// not a word character: the word ends.
			break
		}
	}
	a.term = t
	if runes >= 2 {
		if _, stop := a.stop[string(t)]; !stop {
			a.noTag = 0
			fn(t[:len(t):len(t)], &a.noTag)
		}
	}
	return i
}

// sklearnWordRune reports whether Python's re module counts r as \w in a
// str pattern: str.isalnum() (a letter, or a number of any numeric type)
// or '_'.
func sklearnWordRune(r rune) bool {
	if r < utf8.RuneSelf {
		return sklearnClass[r] == 1
	}
	return unicode.IsLetter(r) || unicode.IsNumber(r)
}

// finalSigma reports whether the Σ at text[i:i+size] is in Unicode's
// Final_Sigma context (Unicode 3.13, table 3-17), as Python's str.lower()
// tests it: the nearest character before it that is not case-ignorable is
// cased, and the nearest one after it that is not case-ignorable, if any,
// is not.
func finalSigma(text []byte, i, size int) bool {
	before := false
	for j := i; j > 0; {
		r, n := utf8.DecodeLastRune(text[:j])
		j -= n
		if !caseIgnorable(r) {
			before = cased(r)
			break
		}
	}
	if !before {
		return false
	}
	for j := i + size; j < len(text); {
		r, n := utf8.DecodeRune(text[j:])
		j += n
		if !caseIgnorable(r) {
			return !cased(r)
		}
	}
	return true
}

// cased is Unicode's derived property Cased: Lowercase, Uppercase or
// titlecase letter (DerivedCoreProperties.txt).
func cased(r rune) bool {
	return unicode.IsLower(r) || unicode.IsUpper(r) || unicode.IsTitle(r) ||
		unicode.Is(unicode.Other_Lowercase, r) || unicode.Is(unicode.Other_Uppercase, r)
}

// caseIgnorable is Unicode's derived property Case_Ignorable: general
// category Mn, Me, Cf, Lm or Sk, or Word_Break MidLetter, MidNumLet or
// Single_Quote (DerivedCoreProperties.txt). The Word_Break characters are
// listed from WordBreakProperty.txt (Unicode 14.0 and 15.0 agree);
// TestSklearnUnicode checks the whole property against Python.
func caseIgnorable(r rune) bool {
	switch r {
	case '\'', '.', ':', 0xB7, 0x387, 0x55F, 0x5F4, 0x2018, 0x2019, 0x2024, 0x2027,
		0xFE13, 0xFE52, 0xFE55, 0xFF07, 0xFF0E, 0xFF1A:
		return true
	}
	return unicode.In(r, unicode.Mn, unicode.Me, unicode.Cf, unicode.Lm, unicode.Sk)
}
