package index

import (
	"context"
	"encoding/binary"
	"fmt"
	"hash/crc32"
	"syscall"

	"sluice/index/dedup"
)

// sketchesFile holds, for every row a build gave its near-duplicate detector (the first row of
// each exact key), what the detector kept of the row's signature and what signing it cost, in row
// order, so that a set of segments finds its duplicates across segments as one build of all their
// files would, without reading a row's text again. Each record is sketchHead bytes (the row,
// uint32; flags, uint32, 1 for a row without words; the signing's dedup.Work Bytes, ShingleWords
// and MinHashes, uint64 each; all little-endian) and then the row's marks (dedup.Detector's
// AppendMarks), zeros for a row without words.
const sketchesFile = "sketches"

const sketchHead = 4 + 4 + 3*8

const noWordsFlag = 1

// marksLen is the length of a row's marks under d's settings (dedup.Detector.MarksLen).
func (d *Dups) marksLen() int { return 8*d.Bands + d.Hashes }

// sketchWriter writes the sketches file of a build.
type sketchWriter struct {
	w     *fileWriter
	det   *dedup.Detector
	rec   []byte
	marks []byte
}

func newSketchWriter(wd workDir, det *dedup.Detector) (*sketchWriter, error) {
	w, err := wd.create(wd.path(sketchesFile))
	if err != nil {
		return nil, err
	}
	return &sketchWriter{w: w, det: det, rec: make([]byte, sketchHead+det.MarksLen())}, nil
}

// write writes the record of row, signed as sig at the cost w, and returns the row's marks.
func (s *sketchWriter) write(row int, sig dedup.Signature, w dedup.Work) ([]byte, error) {
	s.marks = s.det.AppendMarks(s.marks[:0], sig)
	rec := s.rec
	clear(rec)
	binary.LittleEndian.PutUint32(rec, uint32(row))
	if len(s.marks) == 0 {
		binary.LittleEndian.PutUint32(rec[4:], noWordsFlag)
	}
	binary.LittleEndian.PutUint64(rec[8:], uint64(w.Bytes))
	binary.LittleEndian.PutUint64(rec[16:], uint64(w.ShingleWords))
	binary.LittleEndian.PutUint64(rec[24:], uint64(w.MinHashes))
	copy(rec[sketchHead:], s.marks)
	return s.marks, s.w.write(rec)
}

func (s *sketchWriter) close() error { return s.w.close() }
func (s *sketchWriter) abort()       { s.w.abort() }

// sketchRec is one record of a sketches file.
type sketchRec struct {
	row   int
	work  dedup.Work
	marks []byte // empty for a row without words
}

// sketchReader walks one index's sketches file.
type sketchReader struct {
	ix   *Index
	b    []byte
	size int
	last int
}

func (ix *Index) sketchReader(marksLen int) sketchReader {
	return sketchReader{ix: ix, b: ix.sketches, size: sketchHead + marksLen, last: -1}
}

// checkSketches checks the mapped sketches file against the CRC-32C meta.json gives it, which Open
// leaves to the readers of the file; the first to read it checks it for all.
func (ix *Index) checkSketches() error {
	ix.sketchOnce.Do(func() {
		want := ix.meta.Files[sketchesFile].CRC32C
		if got := fmt.Sprintf("%08x", crc32.Checksum(ix.sketches, castagnoli)); got != want {
			ix.sketchErr = fmt.Errorf("open index %s: %s checksum %s, meta.json says %s: %w", ix.dir, sketchesFile, got, want, ErrDamaged)
		}
	})
	return ix.sketchErr
}

// dropSketchPages gives the pages of the mapped sketches file back (they stay in the page cache):
// a set reads every segment's once, and they would otherwise stay resident to the end.
func (ix *Index) dropSketchPages() {
	if len(ix.sketches) > 0 {
		// Advice only: a failure leaves the pages where they are.
		_ = syscall.Madvise(ix.sketches, syscall.MADV_DONTNEED)
	}
}

// next returns the next record, or ok false after the last; a record out of order or of a row the
// index does not have is an error.
func (r *sketchReader) next() (rec sketchRec, ok bool, err error) {
	if len(r.b) == 0 {
		return rec, false, nil
	}
	if len(r.b) < r.size {
		return rec, false, fmt.Errorf("index %s: %s ends within a record: %w", r.ix.dir, sketchesFile, ErrDamaged)
	}
	b := r.b[:r.size]
	r.b = r.b[r.size:]
	rec.row = int(binary.LittleEndian.Uint32(b))
	if rec.row <= r.last || rec.row >= r.ix.NumRows() {
		return rec, false, fmt.Errorf("index %s: %s: row %d after row %d of %d: %w", r.ix.dir, sketchesFile, rec.row, r.last, r.ix.NumRows(), ErrDamaged)
	}
	r.last = rec.row
	rec.work = dedup.Work{
		Bytes:        int64(binary.LittleEndian.Uint64(b[8:])),
		ShingleWords: int64(binary.LittleEndian.Uint64(b[16:])),
		MinHashes:    int64(binary.LittleEndian.Uint64(b[24:])),
	}
	if binary.LittleEndian.Uint32(b[4:])&noWordsFlag == 0 {
		rec.marks = b[sketchHead:]
	}
	return rec, true, nil
}

// canReplay reports whether every segment of s stored its keys and sketches, made by this sluice's
// dedup at the same settings, so that their duplicates can be found across the set without text.
func (s *segSet) canReplay() bool {
	d0 := s.segs[0].meta.Dups
	for _, g := range s.segs {
		d := g.meta.Dups
		if !g.HasKeys() || g.sketches == nil && g.meta.Rows > 0 || d.KeyWork == nil || d.Params() != d0.Params() {
			return false
		}
	}
	return true
}

// findDups finds the set's exact and near duplicates from its segments' stored keys and sketches,
// as one build of all the segments' files would: a row whose key an earlier row has is joined to
// that row, and every other row is given by its marks to a dedup.Bulk, which finds what a build's
// detector finds with its look-ups in the cache. The clusters, the counts and the work counted are
// those of that build (TestSetDupsMatchBuild); the joins come first, in a pass of their own, since
// a cluster's first row does not depend on the order of joins, so the Bulk is sized once for the
// rows that reach it.
func (s *segSet) findDups(ctx context.Context) (*Dups, []uint32, error) {
	d0 := s.segs[0].meta.Dups
	bulk, err := dedup.NewBulk(d0.Params())
	if err != nil {
		return nil, nil, err
	}
	var cl dedup.Clusters
	n := s.base[len(s.base)-1]
	repeat := make([]uint64, (n+63)/64)
	var nexact int64
	var keyWork, signWork dedup.Work
	{
		var exact dedup.Exact
		for i, g := range s.segs {
			keyWork = keyWork.Plus(*g.meta.Dups.KeyWork)
			for r := range g.NumRows() {
				if r%(1<<16) == 0 && ctx.Err() != nil {
					return nil, nil, fmt.Errorf("index set: duplicates: %w", ctx.Err())
				}
				row := s.base[i] + r
				key, _ := g.DupKey(r)
				first, err := exact.Add(row, key)
				if err == nil && first != row {
					nexact++
					repeat[row/64] |= 1 << (row % 64)
					err = cl.Union(first, row)
				}
				if err != nil {
					return nil, nil, fmt.Errorf("index set: duplicates: %w", err)
				}
			}
			if err := g.Err(); err != nil { // a key whose block failed its check read as zeros
				return nil, nil, err
			}
		}
	}
	bulk.Reserve(n - int(nexact))
	marksLen := d0.marksLen()
	for i, g := range s.segs {
		if err := g.checkSketches(); err != nil {
			return nil, nil, err
		}
		rd := g.sketchReader(marksLen)
		for {
			rec, more, err := rd.next()
			if err != nil {
				return nil, nil, err
			}
			if !more {
				break
			}
			if row := s.base[i] + rec.row; repeat[row/64]&(1<<(row%64)) == 0 {
				signWork = signWork.Plus(rec.work)
				if err := bulk.Add(row, rec.marks); err != nil {
					return nil, nil, fmt.Errorf("index %s: %s: %w: %w", g.dir, sketchesFile, err, ErrDamaged)
				}
			}
		}
	}
	d := &Dups{Threshold: d0.Threshold, Shingle: d0.Shingle, Hashes: d0.Hashes, Bands: d0.Bands, Seed: d0.Seed, Version: d0.Version, ExactDuplicates: nexact}
	kw := keyWork
	d.KeyWork = &kw
	// The Bulk reads the marks where they are mapped: fewer faults than a copy, since the kernel maps
	// a file's pages several at a time; the pages go once it is done.
	if err := ctx.Err(); err != nil {
		return nil, nil, fmt.Errorf("index set: duplicates: %w", err)
	}
	found, err := bulk.Find(&cl)
	for _, g := range s.segs {
		g.dropSketchPages()
	}
	if err != nil {
		return nil, nil, fmt.Errorf("index set: duplicates: %w", err)
	}
	d.Work = keyWork.Plus(signWork).Plus(found)
	d.FLOPs = d.Work.FLOPs()
	firsts := make([]uint32, n)
	for r := range n {
		firsts[r] = uint32(cl.Find(r))
	}
	dups, clusters := dedup.Tally(n, func(r int) int { return int(firsts[r]) })
	d.Duplicates, d.Clusters = int64(dups), int64(clusters)
	return d, firsts, nil
}
