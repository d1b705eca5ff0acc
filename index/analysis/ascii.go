package analysis

import "encoding/binary"

// Word-break classes of bytes, from Unicode 8.0 WordBreakProperty.txt as
// compiled into github.com/blevesearch/segment (ragel/uwb.rl), which bleve's
// unicode tokenizer uses. Classes up to cWord make up words.
const (
	cLetter  = 0 // ALetter: A-Z a-z
	cDigit   = 1 // Numeric: 0-9
	cExtend  = 2 // ExtendNumLet: _
	cMidLet  = 3 // MidLetter ':': joins letters
	cMidNum  = 4 // MidNum ',' ';': join digits
	cMidBoth = 5 // MidNumLet '.' and Single_Quote: join letters or digits
	cQuote   = 6 // Double_Quote: only joins Hebrew letters
	cCut     = 7 // starts a segment wherever it stands
	cLF      = 8 // starts a segment unless it follows CR
	cHigh    = 9 // non-ASCII

	cWord = cExtend
)

// classes maps a byte to its class; a string so that it is constant.
// TestClasses derives it again from the definitions above.
const classes = "\x07\x07\x07\x07\x07\x07\x07\x07\x07\x07\x08\x07\x07\x07\x07\x07" +
	"\x07\x07\x07\x07\x07\x07\x07\x07\x07\x07\x07\x07\x07\x07\x07\x07" +
	"\x07\x07\x06\x07\x07\x07\x07\x05\x07\x07\x07\x07\x04\x07\x05\x07" +
	"\x01\x01\x01\x01\x01\x01\x01\x01\x01\x01\x03\x04\x07\x07\x07\x07" +
	"\x07\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00" +
	"\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x07\x07\x07\x07\x02" +
	"\x07\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00" +
	"\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x00\x07\x07\x07\x07\x07" +
	"\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09" +
	"\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09" +
	"\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09" +
	"\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09" +
	"\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09" +
	"\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09" +
	"\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09" +
	"\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09\x09"

// wordEnd returns the end of the word that runs up to at least i-1, under
// UAX #29 rules WB5-WB13b restricted to ASCII: letters, digits and '_' join
// freely; ':' joins two letters, ',' and ';' two digits, '.' and '\” either.
// text must end where a segment starts, as bleve's tokenizer sees it at the
// end of its input.
func wordEnd(text []byte, i int) int {
	for i < len(text) {
		c := classes[text[i]]
		if c <= cWord {
			i++
			continue
		}
		if i+1 >= len(text) || c > cMidBoth {
			return i
		}
		prev, next := classes[text[i-1]], classes[text[i+1]]
		if prev != next || prev > cDigit {
			return i
		}
		if prev == cLetter && c == cMidNum || prev == cDigit && c == cMidLet {
			return i
		}
		i += 2
	}
	return i
}

// cutBefore reports whether bleve's tokenizer starts a segment at text[k]
// whatever precedes it: no segment rule lets such a byte continue a
// segment (CR LF is the one pair of ASCII bytes that forms a segment).
func cutBefore(text []byte, k int) bool {
	switch classes[text[k]] {
	case cCut:
		return true
	case cLF:
		return k == 0 || text[k-1] != '\r'
	}
	return false
}

// asciiPrefix returns the length of the longest prefix of b that is ASCII.
func asciiPrefix(b []byte) int {
	i := 0
	for ; i+8 <= len(b); i += 8 {
		if binary.LittleEndian.Uint64(b[i:])&0x8080808080808080 != 0 {
			break
		}
	}
	for ; i < len(b); i++ {
		if b[i] >= 0x80 {
			return i
		}
	}
	return i
}
