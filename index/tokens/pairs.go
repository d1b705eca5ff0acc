package tokens

import "math/bits"

// pairTable maps a pair of ids, left<<32 | right, to rank<<32 | merged id. It replaces a Go map on
// the merge loop's hot path: most look-ups are of pairs that no merge joins, and open addressing
// with a multiplicative hash answers those in a few compares without hashing bytes.
type pairTable struct {
	keys  []uint64
	vals  []uint64 // value | full; 0 marks an empty slot
	shift uint     // 64 − log2(len(keys))
}

// full marks a used slot; ranks stay below 2³¹, so the top bit of a value is free.
const full = 1 << 63

func newPairTable(n int) pairTable {
	// At most three quarters full, a power of two long.
	size := 1 << bits.Len(uint(n+n/3+1))
	return pairTable{keys: make([]uint64, size), vals: make([]uint64, size), shift: uint(64 - bits.Len(uint(size-1)))}
}

func (p *pairTable) slot(key uint64) int {
	return int((key * 0x9E3779B97F4A7C15) >> p.shift)
}

// put sets key's value, replacing an earlier one.
func (p *pairTable) put(key, val uint64) {
	mask := len(p.keys) - 1
	for i := p.slot(key); ; i = (i + 1) & mask {
		if p.vals[i] == 0 || p.keys[i] == key {
			p.keys[i], p.vals[i] = key, val|full
			return
		}
	}
}

// get returns key's value, or noMerge.
func (p *pairTable) get(key uint64) uint64 {
	mask := len(p.keys) - 1
	for i := p.slot(key); ; i = (i + 1) & mask {
		v := p.vals[i]
		if v == 0 {
			return noMerge
		}
		if p.keys[i] == key {
			return v &^ full
		}
	}
}
