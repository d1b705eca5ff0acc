package index

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"math"
	"sort"
)

// lexStride is how many terms of the lexicon lie between two that Open keeps in memory. The
// lexicon stays mapped, read through the page cache; what is kept costs (term bytes + 20) / 64 a
// term, where keeping every term cost 16 bytes and its bytes (1.3 GB for 20 million terms, more
// while the arrays grew), and a lookup walks at most 63 entries from the nearest kept one.
const lexStride = 64

// lexicon finds terms in the mapped lexicon file: terms in byte order, each "uvarint length,
// bytes, uvarint df, uvarint byte length of its postings".
type lexicon struct {
	b    []byte // the mapped file
	n    int    // terms
	keep []byte // every lexStride-th term, concatenated
	end  []uint32
	at   []uint64 // where kept term i's entry starts in b
	post []uint64 // where kept term i's postings start
}

// termEntry is one term's entry: its df and where its postings lie.
type termEntry struct {
	df            uint64
	post, postEnd uint64
}

// next decodes the entry at the start of b and returns its term, df and postings length, and
// what follows it; ok is false when the entry is cut short.
func nextEntry(b []byte) (term []byte, df, pl uint64, rest []byte, ok bool) {
	l, k := binary.Uvarint(b)
	if k <= 0 || uint64(len(b)-k) < l {
		return nil, 0, 0, nil, false
	}
	term, b = b[k:k+int(l)], b[k+int(l):]
	if df, k = binary.Uvarint(b); k <= 0 {
		return nil, 0, 0, nil, false
	}
	b = b[k:]
	if pl, k = binary.Uvarint(b); k <= 0 {
		return nil, 0, 0, nil, false
	}
	return term, df, pl, b[k:], true
}

// load checks the whole lexicon b against the counts meta.json gives (terms in order, each in 1
// to rows rows, postings that end where the postings file does) in one pass over the mapping,
// keeping every lexStride-th term.
func (lx *lexicon) load(b []byte, terms, rows int64, postings uint64) error {
	// meta.json says how many terms to expect, but only the lexicon's own size may size the arrays:
	// every entry takes at least three bytes.
	if terms < 0 || terms > int64(len(b)/3) {
		return fmt.Errorf("meta.json says %d terms: %w", terms, ErrDamaged)
	}
	*lx = lexicon{b: b}
	kept := terms/lexStride + 1
	lx.end, lx.at, lx.post = make([]uint32, 0, kept), make([]uint64, 0, kept), make([]uint64, 0, kept)
	var prev []byte
	var off uint64
	for rest := b; len(rest) > 0; lx.n++ {
		at := uint64(len(b) - len(rest))
		t, df, pl, r, ok := nextEntry(rest)
		switch {
		case !ok:
			return fmt.Errorf("truncated entry: %w", ErrDamaged)
		case lx.n > 0 && bytes.Compare(prev, t) >= 0:
			return fmt.Errorf("terms out of order: %w", ErrDamaged)
		case df == 0 || df > uint64(rows):
			return fmt.Errorf("term %q in %d rows of %d: %w", t, df, rows, ErrDamaged)
		case pl > postings-off: // compared by subtraction, since an offset plus a damaged length may overflow
			return fmt.Errorf("postings of %q end past the %d bytes of postings: %w", t, postings, ErrDamaged)
		}
		if lx.n%lexStride == 0 {
			if len(lx.keep)+len(t) > math.MaxUint32 {
				return fmt.Errorf("more than 4 GiB of kept terms")
			}
			lx.keep = append(lx.keep, t...)
			lx.end = append(lx.end, uint32(len(lx.keep)))
			lx.at, lx.post = append(lx.at, at), append(lx.post, off)
		}
		prev, rest, off = t, r, off+pl
	}
	if int64(lx.n) != terms || off != postings {
		return fmt.Errorf("counts disagree with meta.json: %w", ErrDamaged)
	}
	return nil
}

// kept returns kept term i.
func (lx *lexicon) kept(i int) []byte {
	start := uint32(0)
	if i > 0 {
		start = lx.end[i-1]
	}
	return lx.keep[start:lx.end[i]]
}

// find looks term up: a binary search of the kept terms, then a walk of the entries from the last
// kept term at or before it. load checked every entry, so the walk cannot run off the lexicon.
func (lx *lexicon) find(term string) (termEntry, bool) {
	i := sort.Search(len(lx.end), func(i int) bool { return string(lx.kept(i)) > term }) - 1
	if i < 0 {
		return termEntry{}, false
	}
	b, off := lx.b[lx.at[i]:], lx.post[i]
	for range lexStride {
		t, df, pl, rest, ok := nextEntry(b)
		if !ok {
			return termEntry{}, false
		}
		// Compared as strings, which the compiler does without copying either side.
		switch {
		case string(t) == term:
			return termEntry{df: df, post: off, postEnd: off + pl}, true
		case string(t) > term:
			return termEntry{}, false
		}
		b, off = rest, off+pl
	}
	return termEntry{}, false
}

// each calls fn with every term in order; the bytes are the mapping's.
func (lx *lexicon) each(fn func(term []byte)) {
	for b := lx.b; len(b) > 0; {
		t, _, _, rest, ok := nextEntry(b)
		if !ok {
			return
		}
		fn(t)
		b = rest
	}
}
