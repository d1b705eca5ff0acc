package index

import (
	"fmt"
	"os"
)

// OpenShard opens segment shard (from 0) of the index-set file path as an Index whose rows are
// that segment's alone, numbered from 0, while its statistics are the whole set's: Meta (rows,
// lengths, sources) summed over every segment, DF summed over every segment's lexicon, AvgLen, and
// the TF-IDF norms under the set's document frequencies. Scores made through it are to the bit
// those of the same rows scored through Open(path). Of the other segments only meta.json and the
// lexicon are read (and their checksums checked), so a machine opening one shard reads a small
// part of the set. RowLocation's sources are numbered among the set's.
func OpenShard(path string, shard int) (*Index, error) {
	if !isSetFile(path) {
		return nil, fmt.Errorf("open index set %s: not an index-set file (see sluice segments): %w", path, ErrNotIndex)
	}
	dirs, overlap, err := readSet(path)
	if err != nil {
		return nil, err
	}
	if shard < 0 || shard >= len(dirs) {
		return nil, fmt.Errorf("index set %s: shard %d: the set has %d segments, numbered 0 to %d: %w", path, shard, len(dirs), len(dirs)-1, ErrNoSegment)
	}
	s := &segSet{base: []int{0}, only: shard}
	defer func() {
		if err != nil {
			for _, g := range s.segs {
				g.Close()
			}
		}
	}()
	sources := 0
	for i, d := range dirs {
		if isSetFile(d) {
			return nil, fmt.Errorf("index set %s: segment %s is itself a set; name its folders instead: %w", path, d, ErrIncompatible)
		}
		var g *Index
		if i == shard {
			g, err = Open(d)
		} else {
			g, err = openLexicon(d)
		}
		if err != nil {
			return nil, fmt.Errorf("index set %s: %w", path, err)
		}
		s.segs = append(s.segs, g)
		s.srcBase = append(s.srcBase, sources)
		sources += len(g.meta.Sources)
		s.base = append(s.base, s.base[len(s.base)-1]+int(g.meta.Rows))
	}
	m, err := s.meta(path, overlap)
	if err != nil {
		return nil, err
	}
	return &Index{dir: path, real: path, meta: m, set: s}, nil
}

// openLexicon reads an index folder's meta.json and its lexicon alone, checked against meta.json's
// size and checksum: enough for a segment's statistics, not for its rows.
func openLexicon(dir string) (*Index, error) {
	return openPart(dir, func(d *os.File, ix *Index) error {
		m := &ix.meta
		post, listed := m.Files[postingsFile]
		if !listed || post.Size < 0 {
			return fmt.Errorf("open index %s: meta.json lists no %s, or a size below 0: %w", dir, postingsFile, ErrDamaged)
		}
		b, err := ix.mapChecked(d, lexiconFile, make([]byte, checkBuf))
		if err != nil {
			return err
		}
		if err := ix.lex.load(b, m.Terms, m.Rows, uint64(post.Size)); err != nil {
			return fmt.Errorf("open index %s: lexicon: %w", dir, err)
		}
		return nil
	})
}

// openPart opens the index folder dir and reads its meta.json, then lets load map the files it
// needs through the same handle (so they are of one version of the folder); the Index is closed
// when load fails.
func openPart(dir string, load func(d *os.File, ix *Index) error) (*Index, error) {
	d, err := os.Open(dir)
	if err != nil {
		return nil, pathErr("open index", err)
	}
	defer d.Close()
	m, err := readMetaAt(d, dir)
	if err != nil {
		return nil, err
	}
	ix := &Index{dir: dir, real: dir, meta: *m}
	if err := load(d, ix); err != nil {
		ix.Close()
		return nil, err
	}
	return ix, nil
}

// mapChecked maps the file name of the folder open as d, which meta.json must list, and checks it
// against the size and checksum meta.json gives it.
func (ix *Index) mapChecked(d *os.File, name string, buf []byte) ([]byte, error) {
	want, listed := ix.meta.Files[name]
	if !listed {
		return nil, fmt.Errorf("open index %s: meta.json lists no %s: %w", ix.dir, name, ErrDamaged)
	}
	b, sum, err := ix.mapFile(d, name, buf, true, nil)
	if err != nil {
		return nil, err
	}
	if int64(len(b)) != want.Size || fmt.Sprintf("%08x", sum) != want.CRC32C {
		return nil, fmt.Errorf("open index %s: %s is %d bytes with checksum %08x, meta.json says %d and %s: %w", ix.dir, name, len(b), sum, want.Size, want.CRC32C, ErrDamaged)
	}
	return b, nil
}

// Shard returns the segment an Index from OpenShard holds the rows of and the set's number of
// segments, or -1 and 0 for any other index.
func (ix *Index) Shard() (shard, of int) {
	if ix.set == nil || ix.set.only < 0 {
		return -1, 0
	}
	return ix.set.only, len(ix.set.segs)
}

// FirstRow is the number, among the set's rows, of an OpenShard index's row 0 (0 for any other
// index).
func (ix *Index) FirstRow() int {
	if ix.set == nil || ix.set.only < 0 {
		return 0
	}
	return ix.set.base[ix.set.only]
}

// WholeRows is the number of rows the statistics are taken over: the set's for an index from
// OpenShard, else NumRows.
func (ix *Index) WholeRows() int { return int(ix.meta.Rows) }

// PartDF is the number of the index's own rows (NumRows) holding term: for an index from OpenShard
// its segment's, where DF is the set's; else DF.
func (ix *Index) PartDF(term string) int {
	if ix.set != nil && ix.set.only >= 0 {
		return ix.set.segs[ix.set.only].DF(term)
	}
	return ix.DF(term)
}
