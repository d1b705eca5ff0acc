package tokens

import "math"

// noMerge is the rank entry of a pair that no merge joins; it sorts after every real one.
const noMerge = math.MaxUint64

// heapFrom is the word length from which merging uses a heap: below it, rescanning an array of
// pair ranks after each merge is faster, but it costs the square of the length, which a long
// word without spaces (a base64 blob, a run of digits under GPT-2) must not pay.
const heapFrom = 128

// bpe is the merge table and the byte symbols of a byte-level BPE model.
type bpe struct {
	// merges maps a pair of ids, left<<32 | right, to rank<<32 | the id of the merged token.
	merges pairTable
	// bytes holds the id of each byte's symbol.
	bytes [256]uint32
	// whole maps a vocabulary entry, as the bytes it stands for, to its id; set only when the
	// file asks that a word found whole in the vocabulary not be merged ("ignore_merges").
	whole map[string]uint32
}

func (m *bpe) rank(left, right uint32) uint64 {
	return m.merges.get(uint64(left)<<32 | uint64(right))
}

// scratch is the memory one Tokenizer reuses between words.
type scratch struct {
	ids   []uint32
	ranks []uint64
	prev  []int32
	next  []int32
	heap  []uint64
}

// encode appends the ids of word (not empty) to ids[:0]. Merges apply lowest rank first, the
// leftmost on a tie, one at a time; this is the order of Hugging Face's BPE, and on files whose
// merges build each token before using it, the same result as GPT-2's merge-every-occurrence loop.
func (m *bpe) encode(word []byte, sc *scratch) []uint32 {
	ids := sc.ids[:0]
	if m.whole != nil {
		if id, ok := m.whole[string(word)]; ok {
			sc.ids = append(ids, id)
			return sc.ids
		}
	}
	for _, b := range word {
		ids = append(ids, m.bytes[b])
	}
	if len(ids) >= heapFrom {
		ids = m.mergeHeap(ids, sc)
	} else {
		ids = m.mergeScan(ids, sc)
	}
	sc.ids = ids
	return ids
}

// mergeScan keeps the rank of each adjacent pair in an array, applies the smallest, and looks up
// only the two pairs the merge changed.
func (m *bpe) mergeScan(ids []uint32, sc *scratch) []uint32 {
	if len(ids) < 2 {
		return ids
	}
	ranks := sc.ranks[:0]
	for i := 0; i+1 < len(ids); i++ {
		ranks = append(ranks, m.rank(ids[i], ids[i+1]))
	}
	sc.ranks = ranks
	for len(ids) > 1 {
		best, at := uint64(noMerge), -1
		for i, r := range ranks {
			if r < best {
				best, at = r, i
			}
		}
		if at < 0 {
			break
		}
		ids[at] = uint32(best)
		ids = append(ids[:at+1], ids[at+2:]...)
		ranks = append(ranks[:at], ranks[at+1:]...)
		if at > 0 {
			ranks[at-1] = m.rank(ids[at-1], ids[at])
		}
		if at < len(ranks) {
			ranks[at] = m.rank(ids[at], ids[at+1])
		}
	}
	return ids
}

// mergeHeap applies the same merges in the same order as mergeScan with a min-heap of
// rank<<32 | position entries over a linked list of symbols, in O(n log n). An entry goes stale
// when either symbol of its pair changes; it is checked, not removed, when it comes to the top.
func (m *bpe) mergeHeap(ids []uint32, sc *scratch) []uint32 {
	n := len(ids)
	prev, next := grow(sc.prev, n), grow(sc.next, n)
	h := sc.heap[:0]
	for i := range n {
		prev[i], next[i] = int32(i-1), int32(i+1)
		if i+1 < n {
			if r := m.rank(ids[i], ids[i+1]); r != noMerge {
				h = push(h, r>>32<<32|uint64(i))
			}
		}
	}
	next[n-1] = -1
	for len(h) > 0 {
		var top uint64
		top, h = pop(h)
		at := int32(uint32(top))
		right := next[at]
		if prev[at] == -2 || right < 0 {
			continue // at was merged into its left neighbour, or has no right one now
		}
		r := m.rank(ids[at], ids[right])
		if r == noMerge || r>>32 != top>>32 {
			continue // the pair changed since the entry was pushed
		}
		ids[at] = uint32(r)
		prev[right] = -2
		next[at] = next[right]
		if next[at] >= 0 {
			prev[next[at]] = at
			if r := m.rank(ids[at], ids[next[at]]); r != noMerge {
				h = push(h, r>>32<<32|uint64(at))
			}
		}
		if p := prev[at]; p >= 0 {
			if r := m.rank(ids[p], ids[at]); r != noMerge {
				h = push(h, r>>32<<32|uint64(p))
			}
		}
	}
	out := ids[:0]
	for i := int32(0); i >= 0; i = next[i] {
		out = append(out, ids[i])
	}
	sc.prev, sc.next, sc.heap = prev, next, h
	return out
}

func grow(s []int32, n int) []int32 {
	if cap(s) < n {
		return make([]int32, n)
	}
	return s[:n]
}

func push(h []uint64, v uint64) []uint64 {
	h = append(h, v)
	for i := len(h) - 1; i > 0; {
		p := (i - 1) / 2
		if h[p] <= h[i] {
			break
		}
		h[p], h[i] = h[i], h[p]
		i = p
	}
	return h
}

func pop(h []uint64) (uint64, []uint64) {
	top := h[0]
	last := len(h) - 1
	h[0] = h[last]
	h = h[:last]
	for i := 0; ; {
		l, small := 2*i+1, i
		if l < len(h) && h[l] < h[small] {
			small = l
		}
		if r := l + 1; r < len(h) && h[r] < h[small] {
			small = r
		}
		if small == i {
			break
		}
		h[i], h[small] = h[small], h[i]
		i = small
	}
	return top, h
}
