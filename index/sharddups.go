package index

import (
	"encoding/binary"
	"fmt"
	"os"
	"sort"

	"sluice/index/dedup"
)

// A set's duplicates may also be found with the work split across machines, as a sharded pick
// does: each segment's rows give their keys and band keys (ShardDups, EachSketch), which are
// shared out by key, and a step owning a range of keys looks the records it needs up by row
// (SetSketches). The ids of a few rows of other segments are read with RowIDs.

// replayable reports whether the index whose meta.json is m stored every row's key and the
// sketches of the rows first of their key, made by this sluice's dedup at d0's settings.
func replayable(m *Meta, d0 *Dups) bool {
	d := m.Dups
	_, keys := m.Files[dupsFile]
	_, sk := m.Files[sketchesFile]
	return d != nil && d0 != nil && d.Version == dedup.Version && keys && (sk || m.Rows == 0) &&
		d.KeyWork != nil && d.Params() == d0.Params()
}

// ShardDups returns, for an index from OpenShard, its segment's Meta.Dups when the set's
// duplicates can be found across its segments as Duplicates finds them for the whole set (every
// segment stored keys and sketches made by this sluice at the same settings), and nil otherwise.
func (ix *Index) ShardDups() *Dups {
	s := ix.set
	if s == nil || s.only < 0 {
		return nil
	}
	d0 := s.segs[0].meta.Dups
	for _, g := range s.segs {
		if !replayable(&g.meta, d0) {
			return nil
		}
	}
	return s.segs[s.only].meta.Dups
}

// EachSketch calls fn for every record of the stored sketches of an index from OpenShard (its
// segment's), in row order: the row among the index's rows, its marks (dedup.Detector.AppendMarks;
// empty for a row without words; valid during the call alone) and the work of signing it. It
// checks the file against its checksum the first time, so the steps that later look records up by
// row (SetSketches) read a file one step has read whole.
func (ix *Index) EachSketch(fn func(row int, marks []byte, w dedup.Work) error) error {
	if ix.ShardDups() == nil {
		return fmt.Errorf("index %s: no sketches to read: %w", ix.dir, ErrIncompatible)
	}
	g := ix.set.segs[ix.set.only]
	// The pages stay mapped, for a caller that walks the file again (once a band, say), until Close.
	if err := g.checkSketches(); err != nil {
		return err
	}
	rd := g.sketchReader(g.meta.Dups.marksLen())
	for {
		rec, more, err := rd.next()
		if err != nil || !more {
			return err
		}
		if err := fn(rec.row, rec.marks, rec.work); err != nil {
			return err
		}
	}
}

// SetSketches reads an index set's stored sketches by row and place, for a step that confirms
// candidate pairs of rows from anywhere in the set (EachSketch gives each record's place, as the
// count of records before it), so that a look-up reads one record's page rather than a binary
// search's dozen. Each segment's file is mapped and checked against meta.json's size, and each
// record found against its row, but not against the file's checksum: the score step of the
// segment's own shard checks that as it reads the file whole (EachSketch), and a step looking up a
// few rows of every segment then reads those rows' pages alone.
type SetSketches struct {
	segs []*Index
	base []int
	size int
}

// OpenSetSketches opens the sketches of the index set at path; every segment must have stored
// them at the same settings (ShardDups).
func OpenSetSketches(path string) (s *SetSketches, err error) {
	dirs, _, err := readSet(path)
	if err != nil {
		return nil, err
	}
	s = &SetSketches{base: []int{0}}
	defer func() {
		if err != nil {
			s.Close()
		}
	}()
	var d0 *Dups
	for _, dir := range dirs {
		g, err := openSketches(dir)
		if err != nil {
			return nil, fmt.Errorf("index set %s: %w", path, err)
		}
		s.segs = append(s.segs, g)
		if d0 == nil {
			d0 = g.meta.Dups
		}
		if !replayable(&g.meta, d0) {
			return nil, fmt.Errorf("index set %s: segment %s stored no keys and sketches at the first segment's settings: %w", path, dir, ErrIncompatible)
		}
		s.base = append(s.base, s.base[len(s.base)-1]+int(g.meta.Rows))
	}
	s.size = sketchHead + d0.marksLen()
	return s, nil
}

// openSketches reads an index folder's meta.json and maps its sketches file, checked against the
// size meta.json gives it.
func openSketches(dir string) (*Index, error) {
	return openPart(dir, func(d *os.File, ix *Index) error {
		m := &ix.meta
		want, listed := m.Files[sketchesFile]
		if m.Dups == nil || !listed {
			return nil // refused by replayable, with the set named
		}
		b, _, err := ix.mapFile(d, sketchesFile, nil, false, nil)
		if err == nil && (int64(len(b)) != want.Size || want.Size != (m.Rows-m.Dups.ExactDuplicates)*int64(sketchHead+m.Dups.marksLen())) {
			err = fmt.Errorf("open index %s: %s is %d bytes, meta.json says %d for %d rows first of their key: %w", dir, sketchesFile, len(b), want.Size, m.Rows-m.Dups.ExactDuplicates, ErrDamaged)
		}
		ix.sketches = b
		return err
	})
}

// NumRows is the number of rows of the set.
func (s *SetSketches) NumRows() int { return s.base[len(s.base)-1] }

// Record returns the stored record of row (among the set's rows), the record at place in its
// segment's sketches file: the row's marks (empty for a row without words; valid until Close) and
// the work of signing it. A place past the file, or holding another row's record, is an error.
func (s *SetSketches) Record(row, place int) (marks []byte, w dedup.Work, err error) {
	if row < 0 || row >= s.NumRows() {
		return nil, w, fmt.Errorf("sketches: row %d of a set of %d rows: %w", row, s.NumRows(), ErrDamaged)
	}
	i := sort.SearchInts(s.base[1:], row+1)
	g, r := s.segs[i], row-s.base[i]
	if place < 0 || place >= len(g.sketches)/s.size || int(binary.LittleEndian.Uint32(g.sketches[place*s.size:])) != r {
		return nil, w, fmt.Errorf("index %s: %s: no record of row %d at place %d: %w", g.dir, sketchesFile, r, place, ErrDamaged)
	}
	rec := g.sketches[place*s.size : (place+1)*s.size]
	w = dedup.Work{
		Bytes:        int64(binary.LittleEndian.Uint64(rec[8:])),
		ShingleWords: int64(binary.LittleEndian.Uint64(rec[16:])),
		MinHashes:    int64(binary.LittleEndian.Uint64(rec[24:])),
	}
	if binary.LittleEndian.Uint32(rec[4:])&noWordsFlag == 0 {
		marks = rec[sketchHead:]
	}
	return marks, w, nil
}

// Close releases the mappings.
func (s *SetSketches) Close() error {
	var err error
	for _, g := range s.segs {
		if e := g.Close(); e != nil && err == nil {
			err = e
		}
	}
	return err
}

// RowIDs returns the ids of rows (among the set's) of the index set at path, as RowID of the
// set gives them, reading of each segment that holds one of them only its meta.json, its rows file
// and its ids, each checked against its checksum.
func RowIDs(path string, rows []int) ([]string, error) {
	dirs, _, err := readSet(path)
	if err != nil {
		return nil, err
	}
	order := make([]int, len(rows))
	for i := range order {
		order[i] = i
	}
	sort.Slice(order, func(a, b int) bool { return rows[order[a]] < rows[order[b]] })
	ids := make([]string, len(rows))
	base := 0
	var g *Index
	defer func() {
		if g != nil {
			g.Close()
		}
	}()
	k := 0
	for _, dir := range dirs {
		if k == len(order) {
			break
		}
		if g != nil {
			g.Close()
		}
		if g, err = openRowIDs(dir); err != nil {
			return nil, fmt.Errorf("index set %s: %w", path, err)
		}
		n := int(g.meta.Rows)
		for ; k < len(order) && rows[order[k]] < base+n; k++ {
			if r := rows[order[k]]; r < base {
				return nil, fmt.Errorf("index set %s: no row %d: %w", path, r, ErrDamaged)
			}
			ids[order[k]] = g.RowID(rows[order[k]] - base)
		}
		base += n
	}
	if k < len(order) {
		return nil, fmt.Errorf("index set %s: no row %d: the set has %d rows: %w", path, rows[order[k]], base, ErrDamaged)
	}
	return ids, nil
}

// openRowIDs reads an index folder's meta.json, rows and ids (when it has an id field), checked
// against their sizes and checksums: enough for RowID, nothing else.
func openRowIDs(dir string) (*Index, error) {
	return openPart(dir, func(d *os.File, ix *Index) error {
		m := &ix.meta
		buf := make([]byte, checkBuf)
		rows, err := ix.mapChecked(d, rowsFile, buf)
		if err != nil {
			return err
		}
		if int64(len(rows)) != m.Rows*rowRecSize {
			return fmt.Errorf("open index %s: rows holds %d bytes for %d rows: %w", dir, len(rows), m.Rows, ErrDamaged)
		}
		for i := int64(0); i < m.Rows; i++ {
			if int(getRowRec(rows[i*rowRecSize:]).src) >= len(m.Sources) {
				return fmt.Errorf("open index %s: row %d names a source the index does not have: %w", dir, i, ErrDamaged)
			}
		}
		ix.rows = rows
		if m.IDField == "" {
			return nil
		}
		if ix.ids, err = ix.mapChecked(d, idsFile, buf); err != nil {
			return err
		}
		return ix.idOffsets()
	})
}
