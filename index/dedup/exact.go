package dedup

import (
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"hash"
	"math"
	"slices"
	"unicode/utf8"
)

// Key identifies a normalised text: the first 16 bytes of the SHA-256 of Normalize's output.
// 128 bits make an accidental collision negligible at any pool size (about n²/2¹²⁹ for n rows),
// which matters because an exact duplicate is dropped without a second look.
type Key [16]byte

// Normalize appends the normalised form of text to dst and returns the result. Two rows are exact
// duplicates when their normalised forms are equal. The form is:
//
//   - every rune folded by Unicode simple case folding (CaseFolding.txt, statuses C and S), so
//     that "Straße" and "STRASSE" stay different (full folding would join them) while "ΣΊΣΥΦΟΣ"
//     and "σίσυφος" become equal, final sigma included;
//   - every run of white space (unicode.IsSpace) replaced by one space, and none at either end;
//   - punctuation, symbols and everything else kept, since in code and arithmetic "a+b" and "a-b"
//     are different rows (near-duplicate detection, which looks at words only, may still join them);
//   - no Unicode normalisation (NFC/NFKC): a precomposed "é" and "e" with a combining accent stay
//     different;
//   - bytes that are not valid UTF-8 kept as they are.
//
// Writing a row in several parts to a Hasher concatenates them; write a space between parts that
// should not run together.
func Normalize(dst, text []byte) []byte {
	n := normalizer{out: dst}
	n.write(text)
	n.end()
	return n.out
}

// flushAt is the size at which a Hasher passes its normalised bytes to SHA-256, leaving room for
// one more space and rune, so that its buffer never grows.
const flushAt = 4096 - 1 - utf8.UTFMax

// normalizer writes the normalised form of the bytes it is given to out, passing out to d (when
// set) each time it reaches flushAt.
type normalizer struct {
	runes
	out     []byte
	d       hash.Hash
	hashed  int64
	started bool // a rune other than white space has been written
	space   bool // white space has been seen since the last rune written
}

func (n *normalizer) reset() {
	n.out = n.out[:0]
	n.npend = 0
	n.started, n.space = false, false
}

func (n *normalizer) write(p []byte) {
	p = n.feed(p, n.rune)
	limit := math.MaxInt
	if n.d != nil {
		limit = flushAt
	}
	// The state lives in locals in the ASCII loop, the common case, and in n elsewhere.
	out, space, started := n.out, n.space, n.started
	for i := 0; i < len(p); {
		// Eight bytes at a time while they are plain ASCII text (see ascii8), the common case.
		for started && len(p)-i >= 8 {
			if cap(out)-len(out) < 9 {
				if n.d != nil {
					break
				}
				out = slices.Grow(out, 64)
			}
			x := binary.LittleEndian.Uint64(p[i:])
			lower, sp, ok := ascii8(x)
			if !ok || space && sp&0x80 != 0 {
				break
			}
			if space {
				out = append(out, ' ')
			}
			binary.LittleEndian.PutUint64(out[len(out):cap(out)], lower)
			// A space last is kept pending, as the next bytes may carry on its run.
			last := int(sp >> 63)
			space = last != 0
			out = out[:len(out)+8-last]
			i += 8
			if len(out) >= limit {
				n.out = out
				n.flush()
				out = n.out
			}
		}
		// Then up to eight bytes one at a time, past what stopped the loop above.
		for end := min(len(p), i+8); i < end; {
			c := p[i]
			if c >= utf8.RuneSelf {
				n.out, n.space, n.started = out, space, started
				if !utf8.FullRune(p[i:]) {
					n.keep(p[i:])
					return
				}
				r, raw, size := decode(p[i:])
				n.rune(r, raw)
				i += size
				out, space, started = n.out, n.space, n.started
				continue
			}
			i++
			if c == ' ' || '\t' <= c && c <= '\r' {
				space = started
				continue
			}
			if 'A' <= c && c <= 'Z' {
				c += 'a' - 'A'
			}
			if space {
				out = append(out, ' ')
				space = false
			}
			out = append(out, c)
			started = true
			if len(out) >= limit {
				n.out = out
				n.flush()
				out = n.out
			}
		}
	}
	n.out, n.space, n.started = out, space, started
}

// SWAR constants: the high bit of every byte, the other bits, and 1 in every byte.
const (
	highBits = 0x8080808080808080
	lowBits  = 0x7f7f7f7f7f7f7f7f
	oneBytes = 0x0101010101010101
)

// ascii8 looks at eight bytes of text, the first in the low byte of x, and reports ok when they
// are ASCII without control characters and without two spaces side by side: text whose normalised
// form is the bytes themselves with capitals made small (lower), but for the spaces, which sp
// marks with the high bit of their byte. Each test is a subtraction per byte that never borrows
// across bytes, since every byte is below 0x80 once the high bits are known to be clear.
func ascii8(x uint64) (lower, sp uint64, ok bool) {
	if x&highBits != 0 {
		return 0, 0, false
	}
	hx := x | highBits
	// The high bit of a byte stays set in hx − c·oneBytes when the byte is at least c.
	if (hx-' '*oneBytes)&highBits != highBits {
		return 0, 0, false // a control character: tabs, newlines and the like are white space
	}
	sp = ^(hx - (' '+1)*oneBytes) & highBits // at least ' ' and not above it
	if sp&(sp<<8) != 0 {
		return 0, 0, false
	}
	upper := (hx - 'A'*oneBytes) &^ (hx - ('Z'+1)*oneBytes) & highBits
	return x | upper>>2, sp, true
}

// rune writes one rune that is not ASCII, or an invalid byte (raw != 0).
func (n *normalizer) rune(r rune, raw byte) {
	if raw == 0 && isSpace(r) {
		n.space = n.started
		return
	}
	if n.space {
		n.out = append(n.out, ' ')
		n.space = false
	}
	if raw != 0 {
		n.out = append(n.out, raw)
	} else {
		n.out = utf8.AppendRune(n.out, fold(r))
	}
	n.started = true
	if n.d != nil && len(n.out) >= flushAt {
		n.flush()
	}
}

// end writes what a cut rune left; trailing white space is never written.
func (n *normalizer) end() { n.drain(n.rune, true) }

func (n *normalizer) flush() {
	n.d.Write(n.out)
	n.hashed += int64(len(n.out))
	n.out = n.out[:0]
}

// Hasher computes the Key of a row from its text written in one or more parts. Writing
// allocates nothing (past the first use), and memory stays at a fixed 4 KiB whatever the length
// of a row. The zero value is ready to use; a Hasher must not be shared between goroutines.
type Hasher struct {
	n    normalizer
	sum  [sha256.Size]byte
	work Work
}

func (h *Hasher) init() {
	if h.n.d == nil {
		h.n.d = sha256.New()
		h.n.out = make([]byte, 0, flushAt+1+utf8.UTFMax)
	}
}

// Write adds p to the text of the current row, as if concatenated with what was written before.
// It always returns len(p), nil; it satisfies io.Writer.
func (h *Hasher) Write(p []byte) (int, error) {
	h.init()
	h.n.write(p)
	h.work.Bytes += int64(len(p))
	return len(p), nil
}

// Sum returns the Key of the text written since the last Sum or Reset, and starts a new row.
func (h *Hasher) Sum() Key {
	h.init()
	h.n.end()
	h.n.flush()
	h.work.Hashed += h.n.hashed
	h.n.d.Sum(h.sum[:0])
	var k Key
	copy(k[:], h.sum[:])
	h.Reset()
	return k
}

// Reset drops the text written so far.
func (h *Hasher) Reset() {
	h.init()
	h.n.d.Reset()
	h.n.reset()
	h.n.hashed = 0
}

// Work returns what the Hasher has done since it was made.
func (h *Hasher) Work() Work { return h.work }

// Exact groups rows by Key in the order they are added. It holds one map entry per distinct key,
// a 16-byte key and a 4-byte row: 24 to 48 bytes with Go's map overhead, depending on how full
// the map is between doublings (BenchmarkExactAdd measured 43 bytes at 2²⁰ keys and 28 at
// 1.5·2²⁰). The zero value is ready to use.
type Exact struct {
	first map[Key]uint32
}

// Add records that row has key k and returns the first row added with the same key: row itself
// when the key is new. Row numbers must be in [0, MaxRow].
func (e *Exact) Add(row int, k Key) (first int, err error) {
	if row < 0 || row > MaxRow {
		return 0, fmt.Errorf("exact duplicates: row %d: %w", row, ErrRow)
	}
	if e.first == nil {
		e.first = make(map[Key]uint32)
	}
	if f, ok := e.first[k]; ok {
		return int(f), nil
	}
	e.first[k] = uint32(row)
	return row, nil
}

// Bytes returns an upper bound on the memory Exact holds: 48 bytes per distinct key, the most
// measured between the map's doublings (see Exact).
func (e *Exact) Bytes() int { return 48 * len(e.first) }

// Len returns the number of distinct keys added.
func (e *Exact) Len() int { return len(e.first) }

// MaxRow is the largest row number this package takes: rows are held as 32-bit numbers to halve
// the memory per row.
const MaxRow = math.MaxUint32 - 1
