package tokens

import (
	"fmt"
	"slices"
	"strconv"
	"strings"
	"unicode/utf8"
)

// nfc composes text to Unicode's Normalization Form C (UAX #15): full canonical decomposition,
// canonical ordering of combining marks, then canonical composition. Its tables come from
// nfcData, parsed when a tokenizer file asks for NFC.
type nfc struct {
	class     map[rune]uint8
	decompose map[rune][]rune // full canonical decomposition, Hangul syllables aside
	compose   map[uint64]rune // first<<32 | second → primary composite
	// maybe holds the runes whose NFC_Quick_Check is No or Maybe: a text without them whose
	// marks are in canonical order is in NFC already.
	maybe map[rune]bool
	// busy has a bit for each block of 64 code points holding a rune with a non-zero class or in
	// maybe; a rune of another block (most of CJK, Hangul syllables) needs no look-up.
	busy []uint64
}

// Hangul syllables decompose and compose by arithmetic (Unicode's chapter 3.12).
const (
	hangulS = 0xAC00
	hangulL = 0x1100
	hangulV = 0x1161
	hangulT = 0x11A7
	countL  = 19
	countV  = 21
	countT  = 28
	countN  = countV * countT
	countS  = countL * countN
)

func newNFC() (*nfc, error) {
	n := &nfc{class: map[rune]uint8{}, decompose: map[rune][]rune{}, compose: map[uint64]rune{},
		maybe: map[rune]bool{}, busy: make([]uint64, (utf8.MaxRune+1)/64/64)}
	one := map[rune][]rune{}
	excluded := map[rune]bool{}
	for i, line := range strings.Split(strings.TrimSpace(nfcData), "\n") {
		f := strings.Fields(line)
		codes := make([]rune, 0, len(f))
		for _, h := range f[1:] {
			v, err := strconv.ParseUint(h, 16, 32)
			if err != nil && f[0] != "c" && f[0] != "q" {
				return nil, fmt.Errorf("tokens: NFC data line %d: %w", i+1, err)
			}
			codes = append(codes, rune(v))
		}
		switch f[0] {
		case "c":
			class, err := strconv.ParseUint(f[3], 10, 8)
			if err != nil {
				return nil, fmt.Errorf("tokens: NFC data line %d: %w", i+1, err)
			}
			for r := codes[0]; r <= codes[1]; r++ {
				n.class[r] = uint8(class)
			}
		case "d":
			one[codes[0]] = codes[1:]
		case "x":
			for r := codes[0]; r <= codes[1]; r++ {
				excluded[r] = true
			}
		case "q":
			for r := codes[0]; r <= codes[1]; r++ {
				n.maybe[r] = true
			}
		}
	}
	var full func(r rune, dst []rune) []rune
	full = func(r rune, dst []rune) []rune {
		parts, ok := one[r]
		if !ok {
			return append(dst, r)
		}
		for _, p := range parts {
			dst = full(p, dst)
		}
		return dst
	}
	for r := range n.class {
		n.busy[r/64/64] |= 1 << (r / 64 % 64)
	}
	for r := range n.maybe {
		n.busy[r/64/64] |= 1 << (r / 64 % 64)
	}
	for r, parts := range one {
		n.decompose[r] = full(r, nil)
		if len(parts) == 2 && !excluded[r] {
			n.compose[uint64(parts[0])<<32|uint64(parts[1])] = r
		}
	}
	return n, nil
}

// unchanged reports whether NFC leaves s as it is because no rune is U+0300 or above: below it
// nothing decomposes, combines or is combined with. Lead bytes of those runes are 0xCC and up.
func unchanged(s []byte) bool {
	for _, b := range s {
		if b >= 0xCC {
			return false
		}
	}
	return true
}

// isNFC is Unicode's quick check (UAX #15): true when s is in NFC for sure, false when it may not
// be. Bytes that are not UTF-8 count as starters that are in NFC.
func (n *nfc) isNFC(s []byte) bool {
	var last uint8
	for _, r := range string(s) {
		if r < 0x300 || n.busy[r/64/64]&(1<<(r/64%64)) == 0 {
			last = 0
			continue
		}
		class := n.class[r]
		if class != 0 && last > class || n.maybe[r] {
			return false
		}
		last = class
	}
	return true
}

// appendNFC appends the NFC form of s to dst. Bytes that are not UTF-8 pass through unchanged
// and, like starters, block composition across them.
func (n *nfc) appendNFC(dst, s []byte, runes []rune) ([]byte, []rune) {
	for len(s) > 0 {
		// Work a stretch of valid UTF-8 at a time.
		end := 0
		for end < len(s) {
			r, size := utf8.DecodeRune(s[end:])
			if r == utf8.RuneError && size == 1 {
				break
			}
			end += size
		}
		runes = n.compose1(n.decompose1(runes[:0], s[:end]))
		for _, r := range runes {
			dst = utf8.AppendRune(dst, r)
		}
		s = s[end:]
		if len(s) > 0 { // an invalid byte
			dst = append(dst, s[0])
			s = s[1:]
		}
	}
	return dst, runes
}

// decompose1 appends the full canonical decomposition of s, marks in canonical order.
func (n *nfc) decompose1(dst []rune, s []byte) []rune {
	for _, r := range string(s) {
		switch {
		case hangulS <= r && r < hangulS+countS:
			i := r - hangulS
			dst = append(dst, hangulL+i/countN, hangulV+i%countN/countT)
			if t := i % countT; t != 0 {
				dst = append(dst, hangulT+t)
			}
		default:
			if parts, ok := n.decompose[r]; ok {
				dst = append(dst, parts...)
			} else {
				dst = append(dst, r)
			}
		}
	}
	// Canonical ordering: a stable sort by class of each run of non-zero classes.
	for i := 0; i < len(dst); {
		if n.class[dst[i]] == 0 {
			i++
			continue
		}
		j := i
		for j < len(dst) && n.class[dst[j]] != 0 {
			j++
		}
		slices.SortStableFunc(dst[i:j], func(a, b rune) int { return int(n.class[a]) - int(n.class[b]) })
		i = j
	}
	return dst
}

// compose1 composes a decomposed, ordered sequence in place, as UAX #15's sample code does: a
// character joins the last starter when a primary composite exists and nothing between them
// blocks it (a mark of the same or a higher class, or a starter).
func (n *nfc) compose1(rs []rune) []rune {
	if len(rs) == 0 {
		return rs
	}
	starter, last := 0, int(n.class[rs[0]])
	if last != 0 {
		starter, last = -1, 256 // a leading mark has no starter to join
	}
	out := 1
	for _, r := range rs[1:] {
		class := int(n.class[r])
		if starter >= 0 && (last < class || last == 0) {
			if c, ok := n.pair(rs[starter], r); ok {
				rs[starter] = c
				continue
			}
		}
		if class == 0 {
			starter = out
		}
		last = class
		rs[out] = r
		out++
	}
	return rs[:out]
}

// pair is the primary composite of a and b, Hangul's by arithmetic.
func (n *nfc) pair(a, b rune) (rune, bool) {
	if hangulL <= a && a < hangulL+countL && hangulV <= b && b < hangulV+countV {
		return hangulS + ((a-hangulL)*countV+b-hangulV)*countT, true
	}
	if hangulS <= a && a < hangulS+countS && (a-hangulS)%countT == 0 && hangulT < b && b < hangulT+countT {
		return a + b - hangulT, true
	}
	c, ok := n.compose[uint64(a)<<32|uint64(b)]
	return c, ok
}
