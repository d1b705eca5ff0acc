package analysis

import (
	"bytes"
	"encoding/binary"
	"math/bits"
)

// The english chain caches what it makes of a lowercased ASCII word at two
// levels, because the lookup is most of the cost of a term. Words are held
// zero-padded to a multiple of 8 bytes (they never contain a zero byte),
// so they hash and compare as whole uint64s.
//
// The hot level is direct-mapped and small enough to stay in the CPU
// cache; an entry holds a word and its stem of up to 16 bytes each, so a
// hit touches one cache line. The frequent words of a text are few, so it
// catches most terms.
//
// The second level is an open-addressing table over a byte arena for the
// rest of the vocabulary. The vocabulary of a pool is unbounded (numbers,
// identifiers, typos), so the table starts again empty when it is full:
// term frequencies are Zipfian, and the words that matter come back at
// once.

const (
	hotBits = 13
	hotMax  = 16 // longest word and stem the hot level holds

	cacheBits       = 16
	cacheSlots      = 1 << cacheBits
	cacheMaxEntries = cacheSlots / 2 // keeps probe runs short
	cacheMaxArena   = 4 << 20
	cacheMaxKey     = 64 // longer words are rare and stemmed each time
	stopLen         = 0xFF

	// pad is the room needed after a word in the scratch buffer.
	pad = 16
)

// hotEntry holds a zero-padded word and its zero-padded stem; an all-zero
// stem marks a stop word, an all-zero word an empty entry.
type hotEntry struct{ k0, k1, s0, s1 uint64 }

// hashPadded hashes the zero-padded word w[:n].
func hashPadded(w []byte, n int) uint64 {
	h := uint64(n) * 0x9E3779B97F4A7C15
	for i := 0; i < n; i += 8 {
		h = (h ^ binary.LittleEndian.Uint64(w[i:])) * 0xC2B2AE3D27D4EB4F
	}
	return h ^ h>>29
}

// paddedLen returns the length of a word of at most 16 bytes held
// zero-padded in w0, w1.
func paddedLen(w0, w1 uint64) int {
	if w1 != 0 {
		return 16 - bits.LeadingZeros64(w1)/8
	}
	return 8 - bits.LeadingZeros64(w0)/8
}

type stemCache struct {
	// slots hold hash<<32 | arena offset+1, 0 when empty.
	slots []uint64
	// arena holds records: key length, stem length (stopLen for a stop
	// word), key bytes, stem bytes.
	arena []byte
	n     int
	// tags are the callers' tags (see Analyzer.EachTagged), one per slot.
	tags []uint64
}

func newStemCache() *stemCache {
	return &stemCache{slots: make([]uint64, cacheSlots), tags: make([]uint64, cacheSlots), arena: make([]byte, 0, 64<<10)}
}

// lookup returns the record for key with hash h, or the slot where it
// belongs when it is absent.
func (c *stemCache) lookup(key []byte, h uint32) (stem []byte, stop, ok bool, slot int) {
	mask := uint32(len(c.slots) - 1)
	i := h & mask
	for {
		s := c.slots[i]
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
		clear(c.tags)
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
	c.slots[slot] = uint64(h)<<32 | uint64(off+1)
	c.tags[slot] = 0
	c.n++
	return slot
}
