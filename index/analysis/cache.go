package analysis

import "bytes"

// stemCache maps a lowercased ASCII word to what the english chain makes
// of it. It is an open-addressing table over one byte arena rather than a
// Go map: the lookup is most of the cost of a term, and hashing while
// lowercasing plus one probe into a flat table is markedly faster than a
// string-keyed map at this size.
type stemCache struct {
	// slots hold hash<<32 | arena offset+1, 0 when empty.
	slots []uint64
	// arena holds records: key length, stem length (stopLen for a stop
	// word), key bytes, stem bytes.
	arena []byte
	n     int
}

const (
	cacheBits       = 17
	cacheSlots      = 1 << cacheBits
	cacheMaxEntries = cacheSlots / 2 // keeps probe runs short
	cacheMaxArena   = 4 << 20
	cacheMaxKey     = 64 // longer words are rare and stemmed each time
	stopLen         = 0xFF
)

func newStemCache() *stemCache {
	return &stemCache{slots: make([]uint64, cacheSlots), arena: make([]byte, 0, 64<<10)}
}

// hashStep folds one byte into an FNV-1a hash.
func hashStep(h uint32, c byte) uint32 { return (h ^ uint32(c)) * 16777619 }

const hashSeed = 2166136261

// lookup returns the record for key with hash h, or the slot where it
// belongs when it is absent.
func (c *stemCache) lookup(key []byte, h uint32) (stem []byte, stop, ok bool, slot int) {
	mask := uint32(len(c.slots) - 1)
	i := (h * 0x9E3779B1) >> (32 - cacheBits) & mask
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
// was inserted. When the cache is full it starts again empty, so memory
// stays bounded whatever the vocabulary.
func (c *stemCache) insert(slot int, key []byte, h uint32, stem []byte, stop bool) {
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
	c.slots[slot] = uint64(h)<<32 | uint64(off+1)
	c.n++
}
