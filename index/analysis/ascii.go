package analysis

import (
	"encoding/binary"
	"math/bits"
)

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

	// joiners is the set of classes that can join two runs of word
	// bytes.
	joiners = 1<<cMidLet | 1<<cMidNum | 1<<cMidBoth
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

// Bytes are classified and lowercased 8 at a time, as the bytes of a
// uint64 (SWAR). The tricks below hold for ASCII bytes only, which is all
// they are given.
const (
	ones  = 0x0101010101010101
	highs = 0x8080808080808080
)

// inRange sets the high bit of each byte of x, all ASCII, that lies in
// [lo, hi], and clears every other bit. Adding 0x80-lo sets a byte's high
// bit exactly when it is >= lo, adding 0x7F-hi when it is > hi; no sum
// carries into the next byte.
func inRange(x uint64, lo, hi byte) uint64 {
	return (x + ones*uint64(0x80-lo)) &^ (x + ones*uint64(0x7F-hi)) & highs
}

// copyLower copies the ASCII prefix of src to dst lowercased, and returns
// its length. dst must be at least as long as src.
func copyLower(dst, src []byte) int {
	i := 0
	for ; i+8 <= len(src); i += 8 {
		x := binary.LittleEndian.Uint64(src[i:])
		if x&highs != 0 {
			break
		}
		// The high bit of an upper-case letter, moved to 0x20, lowercases it.
		binary.LittleEndian.PutUint64(dst[i:], x|inRange(x, 'A', 'Z')>>2)
	}
	for ; i < len(src); i++ {
		c := src[i]
		if c >= 0x80 {
			break
		}
		dst[i] = lower[c]
	}
	return i
}

// wordBytes sets the high bit of each byte of x, lowercased ASCII, that is
// a letter, a digit or '_': the bytes that join freely into words.
func wordBytes(x uint64) uint64 {
	return inRange(x, 'a', 'z') | inRange(x, '0', '9') | inRange(x, '_', '_')
}

// wordBits returns the bitmap of the word bytes among b[:64]: bit j is set
// when b[j] is one.
func wordBits(b []byte) uint64 {
	b = b[:64]
	var m uint64
	for j := 0; j < 64; j += 8 {
		// The multiply gathers the flag bits at 0, 8, ..., 56 into
		// the top byte, as bits 56, 57, ..., 63; the partial
		// products land on distinct bits, so nothing carries.
		f := wordBytes(binary.LittleEndian.Uint64(b[j:])) >> 7
		m |= f * 0x0102040810204080 >> 56 << j
	}
	return m
}

// A wordScanner yields the words of lowercased ASCII text, under UAX #29
// rules WB5-WB13b restricted to ASCII: letters, digits and '_' join
// freely; ':' joins two letters, ',' and ';' two digits, '.' and the
// apostrophe either. It holds the bitmap of the word bytes of one 64-byte
// block, so that finding where a word starts and ends is a count of
// zero bits; the joining bytes are rare and checked one by one.
type wordScanner struct {
	// b is the text followed by at least pad zero bytes, which end a
	// word the way the end of its input does for bleve's tokenizer and
	// let the scanner read whole blocks.
	b   []byte
	n   int    // the length of the text
	blk int    // the start of the block m describes, a multiple of 64
	m   uint64 // bit j is set when b[blk+j] is a word byte
	i   int    // where the next word is looked for, in the block
}

func newWordScanner(b []byte, n int) wordScanner {
	return wordScanner{b: b, n: n, m: wordBits(b)}
}

// next returns the bounds of the next word, or ok false at the end of the
// text. It handles the common word, which lies within the block and does
// not end at a joining byte; more handles the rest.
func (s *wordScanner) next() (start, end int, ok bool) {
	// s.i-s.blk < 64, so masks can shift by s.i&63, which compiles to
	// one instruction.
	w := s.m & (^uint64(0) << (s.i & 63))
	if w == 0 {
		return s.more()
	}
	start = s.blk + bits.TrailingZeros64(w)
	e := ^s.m & (^uint64(0) << (start & 63))
	if e == 0 {
		return s.more()
	}
	end = s.blk + bits.TrailingZeros64(e)
	// Only a joining byte followed by a letter or a digit can join; a
	// joining byte is often followed by a space, so both are tested with
	// one branch. Classes are below 16, and &15 lets the compiler know.
	k, next := classes[s.b[end]]&15, classes[s.b[end+1]]&15
	if (joiners>>k)&((1<<cLetter|1<<cDigit)>>next)&1 != 0 {
		return s.more()
	}
	s.i = end
	return start, end, true
}

// more is next for a word that may reach into the next block or contain
// a joining byte.
func (s *wordScanner) more() (start, end int, ok bool) {
	w := s.m & (^uint64(0) << (s.i & 63))
	for w == 0 {
		s.blk += 64
		if s.blk >= s.n {
			s.i = s.blk
			return 0, 0, false
		}
		s.m = wordBits(s.b[s.blk:])
		w = s.m
	}
	start = s.blk + bits.TrailingZeros64(w)
	for i := start; ; i = end + 2 {
		// The bytes from i up to end are word bytes; the joining ones
		// between start and i are not.
		if i-s.blk >= 64 {
			// A join at the end of the block: the bytes before i in
			// the next one are word bytes.
			s.blk += 64
			s.m = wordBits(s.b[s.blk:])
		}
		e := ^s.m & (^uint64(0) << (i & 63))
		for e == 0 {
			s.blk += 64
			s.m = wordBits(s.b[s.blk:])
			e = ^s.m
		}
		end = s.blk + bits.TrailingZeros64(e)
		if !joins(s.b, end) {
			s.i = end
			return start, end, true
		}
	}
}

// joins reports whether b[i], which ends a run of word bytes, joins it to
// the run after it (WB6, WB7, WB11, WB12). b[i+1] is there because b
// ends in zero bytes, which are not word bytes.
func joins(b []byte, i int) bool {
	k := classes[b[i]]
	if k < cMidLet || k > cMidBoth {
		return false
	}
	prev, next := classes[b[i-1]], classes[b[i+1]]
	return prev == next && (prev == cLetter && k != cMidNum || prev == cDigit && k != cMidLet)
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

// lower maps a byte to its ASCII lowercase, for the bytes copyLower does
// not take 8 at a time.
const lower = "\x00\x01\x02\x03\x04\x05\x06\x07\x08\x09\x0a\x0b\x0c\x0d\x0e\x0f" +
	"\x10\x11\x12\x13\x14\x15\x16\x17\x18\x19\x1a\x1b\x1c\x1d\x1e\x1f" +
	"\x20\x21\x22\x23\x24\x25\x26\x27\x28\x29\x2a\x2b\x2c\x2d\x2e\x2f" +
	"\x30\x31\x32\x33\x34\x35\x36\x37\x38\x39\x3a\x3b\x3c\x3d\x3e\x3f" +
	"\x40\x61\x62\x63\x64\x65\x66\x67\x68\x69\x6a\x6b\x6c\x6d\x6e\x6f" +
	"\x70\x71\x72\x73\x74\x75\x76\x77\x78\x79\x7a\x5b\x5c\x5d\x5e\x5f" +
	"\x60\x61\x62\x63\x64\x65\x66\x67\x68\x69\x6a\x6b\x6c\x6d\x6e\x6f" +
	"\x70\x71\x72\x73\x74\x75\x76\x77\x78\x79\x7a\x7b\x7c\x7d\x7e\x7f" +
	"\x80\x81\x82\x83\x84\x85\x86\x87\x88\x89\x8a\x8b\x8c\x8d\x8e\x8f" +
	"\x90\x91\x92\x93\x94\x95\x96\x97\x98\x99\x9a\x9b\x9c\x9d\x9e\x9f" +
	"\xa0\xa1\xa2\xa3\xa4\xa5\xa6\xa7\xa8\xa9\xaa\xab\xac\xad\xae\xaf" +
	"\xb0\xb1\xb2\xb3\xb4\xb5\xb6\xb7\xb8\xb9\xba\xbb\xbc\xbd\xbe\xbf" +
	"\xc0\xc1\xc2\xc3\xc4\xc5\xc6\xc7\xc8\xc9\xca\xcb\xcc\xcd\xce\xcf" +
	"\xd0\xd1\xd2\xd3\xd4\xd5\xd6\xd7\xd8\xd9\xda\xdb\xdc\xdd\xde\xdf" +
	"\xe0\xe1\xe2\xe3\xe4\xe5\xe6\xe7\xe8\xe9\xea\xeb\xec\xed\xee\xef" +
	"\xf0\xf1\xf2\xf3\xf4\xf5\xf6\xf7\xf8\xf9\xfa\xfb\xfc\xfd\xfe\xff"
