package analysis

import (
	"bytes"
	"encoding/binary"
	"math/bits"
)

// The english chain caches what it makes of a lowercased ASCII word at two
// levels, because the lookup is most of the cost of a term. Words of up to
// 16 bytes are held zero-padded in two uint64s (they never contain a zero
// byte), so they hash and compare without a loop.
//
// The hot level is a table of two-way sets, about the size of a core's
// second-level cache; an entry holds a word, its stem and the caller's
// tag, and a set fills one 64-byte line, so a hit touches one cache line.
// The frequent words of a text are few, so it catches most terms; the
// second way keeps two frequent words whose hashes collide from pushing
// each other out.
//
// The second level is an open-addressing table over a byte arena for the
// rest of the vocabulary. The vocabulary of a pool is unbounded (numbers,
// identifiers, typos), so the table starts again empty when it is full:
// term frequencies are Zipfian, and the words that matter come back at
// once.

const (
	hotBits = 13 // 1<<hotBits sets of two entries
	hotMax  = 16 // longest word the hot level holds

	cacheBits       = 16
	cacheSlots      = 1 << cacheBits
	cacheMaxEntries = cacheSlots / 2 // keeps probe runs short
	cacheMaxArena   = 4 << 20
	cacheMaxKey     = 64 // longer words are rare and stemmed each time
	stopLen         = 0xFF

	// pad is the room needed after the text in the scratch buffer: a
	// block of the word scanner.
	pad = 64
)

// hotEntry holds a zero-padded word, its stem and the caller's tag (see
// Analyzer.EachTagged); an all-zero stem marks a stop word, an all-zero
// word an empty entry. stem holds a stem of up to 8 bytes zero-padded; a
// stem of 9 to 16 bytes that starts with the first 8 bytes of the word,
// as stems of long words do, is held as its last bytes, zero-padded, with
// the top bit set: stems are ASCII, so the bit is free.
type hotEntry struct{ k0, k1, stem, tag uint64 }

// longStem marks the stem of a hotEntry that continues k0.
const longStem = 1 << 63

// hotStem returns the stem to keep in a hotEntry for word w and its stem,
// and whether it fits.
func hotStem(w, stem []byte) (uint64, bool) {
	var b [8]byte
	switch {
	case len(stem) <= 8:
		copy(b[:], stem)
		return binary.LittleEndian.Uint64(b[:]), true
	case len(stem) <= 16 && len(w) >= 8 && string(stem[:8]) == string(w[:8]):
		copy(b[:], stem[8:])
		return binary.LittleEndian.Uint64(b[:]) | longStem, true
	}
	return 0, false
}

// hotSet is 64 bytes, and Go's allocator starts a large allocation on a
// page, so a set does not straddle two cache lines.
type hotSet [2]hotEntry

// hash16 hashes a word of at most 16 bytes held zero-padded in w0, w1.
// One full multiply mixes every bit of both words into its 128-bit
// product (the mixing step of wyhash); it is short, and it is on the path
// of every term.
func hash16(w0, w1 uint64) uint64 {
	hi, lo := bits.Mul64(w0^0x9E3779B97F4A7C15, w1^0xC2B2AE3D27D4EB4F)
	return hi ^ lo
}

// hashLong hashes the word w[:n], n > 16; w has at least 8 bytes after
// the word.
func hashLong(w []byte, n int) uint64 {
	h := uint64(n)
	for i := 0; i < n; i += 8 {
		x := binary.LittleEndian.Uint64(w[i:]) & lowBytes(min(n-i, 8))
		h = hash16(h, x)
	}
	return h
}

// lowBytes returns a mask of the k low bytes of a uint64, 0 <= k <= 8. A
// shift by 64 gives 0 in Go.
func lowBytes(k int) uint64 { return ^uint64(0) >> uint(64-8*k) }

// paddedLen returns the length of a word of at most 8 bytes held
// zero-padded in w.
func paddedLen(w uint64) int { return 8 - bits.LeadingZeros64(w)/8 }

// A cacheSlot keeps the caller's tag beside the reference, so that a hit
// reads one line of the table.
type cacheSlot struct {
	ref uint64 // hash<<32 | arena offset+1, 0 when empty
	tag uint64 // the caller's tag (see Analyzer.EachTagged)
}

type stemCache struct {
	slots []cacheSlot
	// arena holds records: key length, stem length (stopLen for a stop
	// word), key bytes, stem bytes.
	arena []byte
	n     int
}

func newStemCache() *stemCache {
	return &stemCache{slots: make([]cacheSlot, cacheSlots), arena: make([]byte, 0, 64<<10)}
}

// lookup returns the record for key with hash h, or the slot where it
// belongs when it is absent.
func (c *stemCache) lookup(key []byte, h uint32) (stem []byte, stop, ok bool, slot int) {
	mask := uint32(len(c.slots) - 1)
	i := h & mask
	for {
		s := c.slots[i].ref
		if s == 0 {
			return nil, false, false, int(i)
		}
		if uint32(s>>32) == h {
			off := int(uint32(s)) - 1
			kl, sl := int(c.arena[off]), int(c.arena[off+1])
			k := c.arena[off+2 : off+2+kl]
			if bytes.Equal(k, key) {
				if sl == stopLen {
					return nil, true, true, int(i)
				}
				return c.arena[off+2+kl : off+2+kl+sl], false, true, int(i)
			}
		}
		i = (i + 1) & mask
	}
}

// insert stores key at slot, as returned by a lookup since which nothing
// was inserted, and returns the slot it is in: another one if the cache had
// to start again.
func (c *stemCache) insert(slot int, key []byte, h uint32, stem []byte, stop bool) int {
	if c.n >= cacheMaxEntries || len(c.arena)+2+len(key)+len(stem) > cacheMaxArena {
		clear(c.slots)
		c.arena = c.arena[:0]
		c.n = 0
		_, _, _, slot = c.lookup(key, h)
	}
	off := len(c.arena)
	sl := byte(len(stem))
	if stop {
		sl = stopLen
	}
	c.arena = append(c.arena, byte(len(key)), sl)
	c.arena = append(c.arena, key...)
	c.arena = append(c.arena, stem...)
	c.slots[slot] = cacheSlot{ref: uint64(h)<<32 | uint64(off+1)}
	c.n++
	return slot
}
