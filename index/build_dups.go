package index

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"io"
	"math/bits"
	"os"
	"slices"

	"sluice/index/dedup"
)

// Dups is what meta.json says of the duplicates found while the index was built: the parameters
// (dedup.ForThreshold of Threshold), what was found, and the hashing work, which a pick that uses
// the clusters then does not do again.
type Dups struct {
	Threshold float64 `json:"threshold"` // Jaccard similarity of word shingles at or above which rows are near duplicates
	Shingle   int     `json:"shingle"`   // words per shingle
	Hashes    int     `json:"hashes"`    // MinHash values per row, K
	Bands     int     `json:"bands"`     // LSH bands of Hashes/Bands values
	Seed      uint64  `json:"seed"`
	Version   int     `json:"dedup_version"` // dedup.Version
	// ExactDuplicates counts the rows whose normalised text an earlier row has; Clusters the
	// clusters of two rows or more, exact or near; Duplicates the rows that are not their cluster's
	// first.
	ExactDuplicates int64      `json:"exact_duplicates"`
	Clusters        int64      `json:"clusters"`
	Duplicates      int64      `json:"duplicates"`
	Work            dedup.Work `json:"work"`
	FLOPs           float64    `json:"flops"` // Work.FLOPs()
}

// Params returns the parameters the clusters were found with. They are those of this sluice's
// dedup only when Version is dedup.Version.
func (d *Dups) Params() dedup.Params {
	return dedup.Params{Shingle: d.Shingle, Hashes: d.Hashes, Threshold: d.Threshold, Bands: d.Bands, Seed: d.Seed}
}

// dupRecSize is the size of one row's record in the dups file: the cluster's first row (uint32,
// little-endian; the row itself when it is alone or first) and the row's dedup.Key.
// (16 bytes)
const dupRecSize = 4 + 16

// dupFinder finds duplicates in the collector, which feeds it rows in input order, as a pick's
// duplicate guard would: exact keys grouped by dedup.Exact, signatures by a dedup.Detector, an exact
// duplicate joined to its first row and not given to the Detector (its signature is its first's,
// so it would find nothing the first did not).
type dupFinder struct {
	prm    dedup.Params
	det    *dedup.Detector
	exact  dedup.Exact
	pairs  []dedup.Pair
	keys   *fileWriter // dedup.Key per row, in the runs folder until the dups file is written
	nexact int64
	// signWork is the signing of the rows given to the Detector. Which other rows a worker signs
	// depends on how batches fall to workers, so their work is not counted: meta.json must not
	// depend on the number of workers.
	signWork dedup.Work
}

// newDupFinder makes a finder at threshold t whose rows' keys wait in the file keys; abort removes
// it when the build stops before the dups file is written.
func newDupFinder(t float64, wd workDir, keys string) (*dupFinder, error) {
	prm := dedup.ForThreshold(t)
	det, err := dedup.NewDetector(prm)
	if err != nil {
		return nil, fmt.Errorf("build index: --near-dup: %w", err)
	}
	kw, err := wd.create(keys)
	if err != nil {
		return nil, err
	}
	return &dupFinder{prm: prm, det: det, keys: kw}, nil
}

func (f *dupFinder) abort() { f.keys.abort() }

// add takes the rows of one batch, numbered from base: a key each and, for each row signed, K
// signature values.
func (f *dupFinder) add(base int64, keys []dedup.Key, signed []bool, sigs []uint32, work []dedup.Work) error {
	k := f.prm.Hashes
	for i, key := range keys {
		var sig []uint32
		var w dedup.Work
		if signed[i] {
			sig, sigs = sigs[:k], sigs[k:]
			w, work = work[0], work[1:]
		}
		row := int(base) + i
		if err := f.keys.write(key[:]); err != nil {
			return err
		}
		first, err := f.exact.Add(row, key)
		if err != nil {
			return fmt.Errorf("build index: duplicates: %w", err)
		}
		if first != row {
			f.nexact++
			if err := f.det.Clusters().Union(first, row); err != nil {
				return fmt.Errorf("build index: duplicates: %w", err)
			}
			continue
		}
		if sig == nil {
			return fmt.Errorf("build index: internal error: row %d, the first of its key, was not signed", row)
		}
		if f.pairs, err = f.det.Add(f.pairs[:0], row, sig); err != nil {
			return fmt.Errorf("build index: duplicates: %w", err)
		}
		f.signWork = f.signWork.Plus(w)
	}
	return nil
}

// bytes is what the finder holds, counted against Options.Mem: the Detector and the exact groups.
func (f *dupFinder) bytes() int64 {
	return int64(f.det.Bytes()) + int64(f.exact.Bytes())
}

// write writes the dups file for rows rows and fills in meta's Dups.
func (f *dupFinder) write(b *builder, rows int64, work dedup.Work) error {
	if err := f.keys.closeNoSync(); err != nil {
		return err
	}
	kf, err := os.Open(f.keys.path)
	if err != nil {
		return b.wd.err("build index: read back", err)
	}
	defer os.Remove(f.keys.path)
	defer kf.Close()
	keys := bufio.NewReaderSize(kf, 1<<20)
	w, err := b.wd.create(b.wd.path(dupsFile))
	if err != nil {
		return err
	}
	defer w.abort()
	cl := f.det.Clusters()
	d := &Dups{Threshold: f.prm.Threshold, Shingle: f.prm.Shingle, Hashes: f.prm.Hashes, Bands: f.prm.Bands, Seed: f.prm.Seed, Version: dedup.Version, ExactDuplicates: f.nexact}
	work = work.Plus(f.signWork).Plus(f.det.Work())
	d.Work, d.FLOPs = work, work.FLOPs()
	var rec [dupRecSize]byte
	// A cluster of two rows or more is counted at its first row, marked by the others.
	firsts := make([]uint64, (rows+63)/64)
	for r := int64(0); r < rows; r++ {
		first := cl.Find(int(r))
		if first != int(r) {
			d.Duplicates++
			firsts[first/64] |= 1 << (first % 64)
		}
		binary.LittleEndian.PutUint32(rec[:4], uint32(first))
		if _, err := io.ReadFull(keys, rec[4:]); err != nil {
			return fmt.Errorf("build index: read back %s: %w", f.keys.shown, bareErr(err))
		}
		if _, err := w.w.Write(rec[:]); err != nil {
			return w.fail(err)
		}
	}
	for _, m := range firsts {
		d.Clusters += int64(bits.OnesCount64(m))
	}
	b.meta.Dups = d
	return w.close()
}

// signRow is a worker's hashing of one row: the row's text parts, a newline between parts as a
// pick joins them, are gathered, keyed, and signed unless the worker has met the key before.
type signRow struct {
	hasher dedup.Hasher
	signer *dedup.Signer
	k      int    // values per signature
	text   []byte // the row's text
	parts  int
	// seen holds keys of the worker's earlier rows, a slot each by the key's first bits (have
	// marks the slots filled). A worker's batches come in input order, so a row whose key is
	// there is not the first of its exact duplicates, and the collector will not need its
	// signature: the cache saves signing it, and a key evicted costs only a signature made.
	seen []dedup.Key
	have []bool
}

// seenSlots is the size of a worker's cache of keys: 512 KiB of keys, made when the worker keys
// its first row.
const seenSlots = 1 << 15

func newSignRow(prm dedup.Params) (*signRow, error) {
	sg, err := dedup.NewSigner(prm)
	if err != nil {
		return nil, err
	}
	return &signRow{signer: sg, k: prm.Hashes}, nil
}

func (s *signRow) reset() {
	s.text = s.text[:0]
	s.parts = 0
}

func (s *signRow) write(part []byte) {
	if s.parts > 0 {
		s.text = append(s.text, '\n')
	}
	s.text = append(s.text, part...)
	s.parts++
}

// sum appends the row's key, and its signature unless the worker met the key before, to the
// batch's.
func (s *signRow) sum(o *batchOut) {
	s.hasher.Write(s.text)
	key := s.hasher.Sum()
	o.keys = append(o.keys, key)
	if s.seen == nil {
		s.seen, s.have = make([]dedup.Key, seenSlots), make([]bool, seenSlots)
	}
	slot := binary.LittleEndian.Uint32(key[:4]) % seenSlots
	if s.have[slot] && s.seen[slot] == key {
		o.signed = append(o.signed, false)
		s.reset()
		return
	}
	s.seen[slot], s.have[slot] = key, true
	o.signed = append(o.signed, true)
	before := s.signer.Work()
	s.signer.Write(s.text)
	n := len(o.sigs)
	o.sigs = slices.Grow(o.sigs, s.k)
	s.signer.Sum(o.sigs[n:n])
	o.sigs = o.sigs[:n+s.k]
	o.signWork = append(o.signWork, s.signer.Work().Minus(before))
	s.reset()
}

// work is the keying the worker did, every row's; its signing is counted by the collector.
func (s *signRow) work() dedup.Work { return s.hasher.Work() }

var newline = []byte{'\n'}

// addDups hands the rows of batch o, the next in input order, to the duplicate finder, and gives
// the workers' dictionaries what it now holds less of Options.Mem. The finder's rows cannot be
// spilled: once it alone holds more than the bound, the workers spill at every batch and the build
// goes on, past the bound, and says so (Stats.DupMem).
func (b *builder) addDups(o *batchOut) error {
	if err := b.dups.add(b.meta.Rows, o.keys, o.signed, o.sigs, o.signWork); err != nil {
		return err
	}
	n := b.dups.bytes()
	b.dupMem.Store(n)
	b.dupPeak = max(b.dupPeak, n)
	return nil
}
