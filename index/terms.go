package index

import "hash/maphash"

// termTable maps a worker's terms to dense ids. It is an open-addressing table over the worker's own
// term list, so a lookup hashes the bytes once and allocates nothing; a Go map keyed by string(b)
// also allocates nothing but spent a fifth of a build's time here, most of it in its general probing.
type termTable struct {
	seed   maphash.Seed
	slots  []int32 // id+1 of the term in the slot; 0 is empty
	hashes []uint64
	n      int
}

func newTermTable() *termTable {
	return &termTable{seed: maphash.MakeSeed(), slots: make([]int32, 1<<14)}
}

// lookup returns the id of term among terms, or adds it with the next id via add.
func (t *termTable) lookup(term []byte, terms []string, add func() int32) int32 {
	h := maphash.Bytes(t.seed, term)
	mask := uint64(len(t.slots) - 1)
	for i := h & mask; ; i = (i + 1) & mask {
		s := t.slots[i]
		if s == 0 {
			id := add()
			t.slots[i] = id + 1
			t.hashes = append(t.hashes, h)
			t.n++
			if t.n*4 > len(t.slots)*3 {
				t.grow()
			}
			return id
		}
		if id := s - 1; t.hashes[id] == h && terms[id] == string(term) {
			return id
		}
	}
}

func (t *termTable) grow() {
	slots := make([]int32, 2*len(t.slots))
	mask := uint64(len(slots) - 1)
	for id, h := range t.hashes {
		i := h & mask
		for slots[i] != 0 {
			i = (i + 1) & mask
		}
		slots[i] = int32(id) + 1
	}
	t.slots = slots
}

// bytes is the table's own memory, for the spill accounting.
func (t *termTable) bytes() int64 { return int64(len(t.slots))*4 + int64(cap(t.hashes))*8 }
