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

// MaxTermBytes is the longest term an index holds. A longer term (a URL, a hash, an encoded blob)
// is dropped, not cut: it is left out of the index and of its row's analysed length, in pool rows
// and target rows alike, so a target row can never match on a cut part of one. No word of any
// language comes near it, and it bounds what one term can cost a build.
const MaxTermBytes = 256

// longRun is the longest run of ASCII letters, digits and underscores that analysis sees whole;
// cutLongRuns keeps keepRun bytes at each end of a longer one.
const (
	longRun = 4 * MaxTermBytes
	keepRun = MaxTermBytes
)

// cutLongRuns returns text with the middle of every run of more than longRun ASCII letters, digits
// and underscores taken out, so that the analyzer is not handed a word of megabytes to lowercase and
// stem. The terms are the same but for those longer than MaxTermBytes, which are dropped anyway:
// such a run has no word break inside (Unicode's word rules join letters, digits and underscores),
// so it lies in one token whose term, cut or not, keeps more than MaxTermBytes (stemming takes a few
// bytes at most); and since both ends stay, the breaks around it stay where they were. The cut text
// is made in buf, which is returned for reuse; text without such a run, nearly all, is returned as
// it is, after a look at one byte in every longRun/2.
func cutLongRuns(text, buf []byte) (out, newBuf []byte) {
	if len(text) <= longRun {
		return text, buf
	}
	// A run of more than longRun bytes holds at least two of the positions probed.
	const step = longRun / 2
	buf = buf[:0]
	copied := 0 // text[:copied] is in buf, cut, once a run has been cut
	next := 0   // where the last run found ended; probes before it are inside it
	for p := 0; p < len(text); p += step {
		if p < next || !isWordByte(text[p]) {
			continue
		}
		start, end := p, p+1
		for start > next && isWordByte(text[start-1]) {
			start--
		}
		for end < len(text) && isWordByte(text[end]) {
			end++
		}
		next = end
		if end-start > longRun {
			buf = append(buf, text[copied:start+keepRun]...)
			buf = append(buf, text[end-keepRun:end]...)
			copied = end
		}
	}
	if copied == 0 {
		return text, buf
	}
	buf = append(buf, text[copied:]...)
	return buf, buf
}

// isWordByte reports whether c is an ASCII letter, digit or underscore.
func isWordByte(c byte) bool {
	return c|0x20 >= 'a' && c|0x20 <= 'z' || c >= '0' && c <= '9' || c == '_'
}
