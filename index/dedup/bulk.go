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
	p     Params   // resolved
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
	return &Bulk{p: p, last: -1}, nil
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
	if want := 8*u.p.Bands + u.p.Hashes; len(marks) != 0 && len(marks) != want {
		return fmt.Errorf("near duplicates: row %d: %d bytes of marks, want %d: %w", row, len(marks), want, ErrLength)
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
	s, err := NewPasses(u.p, len(u.rows), 0)
	if err != nil {
		return Work{}, err
	}
	for k := range s.Len() {
		j := s.Start(k)
		for i, m := range u.marks {
			s.Put(uint32(i), binary.LittleEndian.Uint64(m[8*j:]))
		}
	}
	return s.Join(c, func(i uint32, _ []byte) (int, []byte, error) { return int(u.rows[i]), u.marks[i], nil })
}
