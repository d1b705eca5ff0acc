package dedup

import (
	"encoding/binary"
	"fmt"
	"slices"
)

// Bulk finds near duplicates among rows given all at once by their marks (Detector.AppendMarks),
// such as rows whose marks were stored when they were first signed. It finds the pairs, clusters
// and work a Detector given the same rows in order would (TestBulkMatchesDetector), but takes the
// bands one at a time: a Detector's table holds every band's buckets and outgrows the cache, where
// one band's fits in it, so each look-up is a hit rather than a miss.
//
// A Bulk keeps the marks it is given, not a copy: the caller's (a mapped file, say) must stay
// unchanged until Find returns. Memory per row added: 4 bytes of row number and a slice header
// (28 bytes), and, while Find runs, one band's table (16 to 32 bytes a row) and 8 bytes a
// candidate pair.
type Bulk struct {
	k, b  int
	t     float64
	rows  []uint32 // the rows added that have words, ascending
	marks [][]byte // each row's marks
	last  int
}

// NewBulk returns a Bulk for marks made with p.
func NewBulk(p Params) (*Bulk, error) {
	p, err := p.resolve()
	if err != nil {
		return nil, fmt.Errorf("new bulk: %w", err)
	}
	return &Bulk{k: p.Hashes, b: p.Bands, t: p.Threshold, last: -1}, nil
}

// Reserve makes room for rows more rows with words.
func (u *Bulk) Reserve(rows int) {
	u.rows = slices.Grow(u.rows, rows)
	u.marks = slices.Grow(u.marks, rows)
}

// Add takes row's marks; rows come in ascending order, as to Detector.AddMarks. Empty marks are a
// row without words, which is never a candidate.
func (u *Bulk) Add(row int, marks []byte) error {
	if row <= u.last || row > MaxRow {
		return fmt.Errorf("near duplicates: row %d after row %d: %w", row, u.last, ErrRow)
	}
	if len(marks) != 0 && len(marks) != 8*u.b+u.k {
		return fmt.Errorf("near duplicates: row %d: %d bytes of marks, want %d: %w", row, len(marks), 8*u.b+u.k, ErrLength)
	}
	u.last = row
	if len(marks) == 0 {
		return nil
	}
	u.rows = append(u.rows, uint32(row))
	u.marks = append(u.marks, marks)
	return nil
}

// Find joins in c every pair of rows added whose estimated similarity reaches the threshold, of the
// pairs a Detector would have compared: each row with the first row added before it of each bucket
// it falls in, once per such first row. It returns the work a Detector counts for the rows.
func (u *Bulk) Find(c *Clusters) (Work, error) {
	n := len(u.rows)
	var tb table
	tb.reserve(n)
	// A candidate is the later row's index and the first's in one word, so that sorting the words
	// orders them by later row, then first.
	var cands []uint64
	for j := 0; j < u.b; j++ {
		if j > 0 {
			clear(tb.slots)
			tb.n = 0
		}
		for i := range n {
			// Rows go in in order, so a bucket keeps its first row, as a Detector's does.
			if f, found := tb.getOrPut(binary.LittleEndian.Uint64(u.marks[i][8*j:]), uint32(i)); found {
				cands = append(cands, uint64(i)<<32|uint64(f))
			}
		}
	}
	slices.Sort(cands)
	cands = slices.Compact(cands)
	w := Work{BandValues: int64(n * u.k), Probes: int64(n * u.b), Compared: int64(len(cands) * u.k)}
	for _, p := range cands {
		later, first := uint32(p>>32), uint32(p)
		if u.estimate(first, later) >= u.t {
			if err := c.Union(int(u.rows[first]), int(u.rows[later])); err != nil {
				return w, err
			}
		}
	}
	return w, nil
}

func (u *Bulk) estimate(x, y uint32) float64 {
	return sketchSimilarity(matching(u.marks[x][8*u.b:], u.marks[y][8*u.b:]), u.k)
}
