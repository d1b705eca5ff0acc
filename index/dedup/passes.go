package dedup

import (
	"fmt"
	"slices"
)

// Passes finds what a Bulk finds for rows it does not hold: the caller reads the rows' band keys
// again for each pass, in row order, and their marks when the candidate pairs are confirmed, from
// wherever they were stored (a file, say). A pass takes one band's keys, or a part of them, so that
// the table it fills stays within a bound however many rows there are; a bucket still keeps its
// first row, since each pass sees its keys' rows in order. Memory: the table (16 to 32 bytes a
// row of the pass's part) and 8 bytes a candidate pair, nothing per row beyond.
type Passes struct {
	k, b  int
	t     float64
	n     int // rows put in each pass
	parts int // passes per band
	pass  int // the pass being filled
	tb    table
	cands []uint64
}

// NewPasses returns Passes for n rows with words, marked with p, whose tables hold at most about
// mem bytes (0 for no bound: one pass a band).
func NewPasses(p Params, n int, mem int64) (*Passes, error) {
	p, err := p.resolve()
	if err != nil {
		return nil, fmt.Errorf("near duplicates: %w", err)
	}
	if n < 0 || n > MaxRow+1 {
		return nil, fmt.Errorf("near duplicates: %d rows: %w", n, ErrRow)
	}
	parts := 1
	if need := TableBytes(n); mem > 0 && need > mem {
		parts = int((need + mem - 1) / mem)
	}
	return &Passes{k: p.Hashes, b: p.Bands, t: p.Threshold, n: n, parts: parts, pass: -1}, nil
}

// TableBytes is what a table sized for n keys holds: 16 bytes a key (12-byte slots, at most 3/4
// full).
func TableBytes(n int) int64 { return int64((4*n+2)/3) * slotSize }

// Len returns the number of passes: each band's keys in one part or more.
func (s *Passes) Len() int { return s.b * s.parts }

// Start begins pass k (0 ≤ k < Len, in order) and returns the band whose keys it takes.
func (s *Passes) Start(k int) int {
	s.pass = k
	if s.tb.n > 0 {
		clear(s.tb.slots)
		s.tb.n = 0
	}
	// A part's keys are about n/parts; a part that draws more grows its table.
	s.tb.reserve(s.n/s.parts + s.n/(8*s.parts))
	return k / s.parts
}

// Put takes a row's key of the band of the pass begun; rows come in ascending order of i, the
// same for every pass, and every row of the n is put in each. A key outside the pass's part is
// passed over.
func (s *Passes) Put(i uint32, key uint64) {
	if s.parts > 1 && int(key%uint64(s.parts)) != s.pass%s.parts {
		return
	}
	if f, found := s.tb.getOrPut(key, i); found {
		// The later row's number, then the first's, in one word: sorted, the pairs are ordered by
		// later row, then first.
		s.cands = append(s.cands, uint64(i)<<32|uint64(f))
	}
}

// Bytes returns what the passes hold: the table and the candidate pairs found so far.
func (s *Passes) Bytes() int64 { return int64(len(s.tb.slots)) + 8*int64(cap(s.cands)) }

// Join confirms the candidate pairs found by every pass, each once, joining in c those whose
// estimated similarity reaches the threshold, and returns the work a Detector counts for the
// rows. marks gives a row's number and its marks (AppendMarks) for the i it was put with; it may
// fill buf and return it.
func (s *Passes) Join(c *Clusters, marks func(i uint32, buf []byte) (row int, m []byte, err error)) (Work, error) {
	s.tb = table{}
	slices.Sort(s.cands)
	s.cands = slices.Compact(s.cands)
	w := Work{BandValues: int64(s.n * s.k), Probes: int64(s.n * s.b), Compared: int64(len(s.cands) * s.k)}
	var bufL, bufF, ml []byte
	rowL, last := 0, uint32(0)
	for n, p := range s.cands {
		later, first := uint32(p>>32), uint32(p)
		var err error
		if n == 0 || later != last {
			if rowL, ml, err = marks(later, bufL); err != nil {
				return w, err
			}
			bufL, last = ml, later
		}
		rowF, mf, err := marks(first, bufF)
		if err != nil {
			return w, err
		}
		bufF = mf
		if len(ml) != 8*s.b+s.k || len(mf) != len(ml) {
			return w, fmt.Errorf("near duplicates: rows %d and %d: %d and %d bytes of marks, want %d: %w", rowF, rowL, len(mf), len(ml), 8*s.b+s.k, ErrLength)
		}
		if MarksSimilarity(mf, ml, s.b) >= s.t {
			if err := c.Union(rowF, rowL); err != nil {
				return w, err
			}
		}
	}
	s.cands = nil
	return w, nil
}
