package tokens

import "hash/maphash"

const (
	// cacheFirst and cacheMax bound the slots of a Tokenizer's word cache: it starts at 256 slots
	// (8 KiB), so that a clone used for a few rows costs little, and grows fourfold each time half
	// its slots have been filled, up to 16,384 slots (512 KiB): enough for the common words of a
	// language and its code, small enough to stay in L2.
	cacheFirst = 1 << 8
	cacheMax   = 1 << 14
	// cacheKey is the longest word cached; longer ones are rare and cost more to compare.
	cacheKey = 30
)

// cacheSlot holds a word of at most cacheKey bytes and its token count. A word has at most one
// token a byte, so the count fits the byte; n is 0 in an empty slot, as no word is empty.
type cacheSlot struct {
	n     uint8
	count uint8
	key   [cacheKey]byte
}

// wordCache is direct-mapped: a word has one slot, and a new word evicts whatever was there.
// That bounds its memory and makes a look-up one hash and one compare, at the price of some
// misses a smarter policy would avoid.
type wordCache struct {
	seed   maphash.Seed
	slots  []cacheSlot
	filled int // slots put into since the last growth, counted until it decides one
}

func newWordCache() *wordCache {
	return &wordCache{seed: maphash.MakeSeed(), slots: make([]cacheSlot, cacheFirst)}
}

// slot is where word lives or would live; word is at most cacheKey bytes.
func (c *wordCache) slot(word []byte) *cacheSlot {
	return &c.slots[maphash.Bytes(c.seed, word)&uint64(len(c.slots)-1)]
}

func (s *cacheSlot) get(word []byte) (int, bool) {
	if int(s.n) != len(word) || string(s.key[:s.n]) != string(word) {
		return 0, false
	}
	return int(s.count), true
}

// put stores word's count in s, its slot, and grows the cache when it is due.
func (c *wordCache) put(s *cacheSlot, word []byte, count int) {
	if s.n == 0 {
		c.filled++
	}
	s.n = uint8(copy(s.key[:], word))
	s.count = uint8(count)
	if len(c.slots) < cacheMax && c.filled >= len(c.slots)/2 {
		old := c.slots
		c.slots, c.filled = make([]cacheSlot, 4*len(old)), 0
		for i := range old {
			if w := old[i].key[:old[i].n]; len(w) > 0 {
				c.put(c.slot(w), w, int(old[i].count))
			}
		}
	}
}
