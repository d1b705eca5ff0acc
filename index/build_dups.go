package index

import (
	"bufio"
	"cmp"
	"context"
	"encoding/binary"
	"fmt"
	"hash/maphash"
	"io"
	"os"
	"path/filepath"
	"slices"
	"sync"

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
	// KeyWork is the part of Work spent keying every row (bytes read, bytes hashed), so that a set
	// of segments can count the work of one build of them all; nil in an index built before the
	// sketches file, which a set then cannot replay.
	KeyWork *dedup.Work `json:"key_work,omitempty"`
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
// duplicate guard would: exact keys grouped by dedup.Exact as they come, an exact duplicate joined to
// its first row; each first row's marks written to the sketches file and its band keys to a file of
// each band's, and the near duplicates found among them at the end by dedup.Passes reading the
// band files again and the sketches of the pairs (what a dedup.Detector fed the same rows finds,
// holding a band's table rather than every row's sketch and buckets).
type dupFinder struct {
	prm   dedup.Params
	det   *dedup.Detector // makes the marks; given no rows
	exact dedup.Exact
	cl    dedup.Clusters
	keys  *fileWriter // dedup.Key per row, in the runs folder until the dups file is written
	sk    *sketchWriter
	// bands holds a file for each band, in the runs folder: the band's key of each record of the
	// sketches file, 0 for a row without words (no key is 0), so that a pass reads 8 bytes a row
	// rather than every record.
	bands  []*fileWriter
	nexact int64
	marked int // records of the sketches file with marks (rows with words)
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
	f := &dupFinder{prm: prm, det: det, keys: kw}
	if f.sk, err = newSketchWriter(wd, det); err != nil {
		f.abort()
		return nil, err
	}
	nb, _ := det.Bands()
	for j := range nb {
		bw, err := wd.createSized(filepath.Join(filepath.Dir(keys), fmt.Sprintf("band-%d", j)), 64<<10)
		if err != nil {
			f.abort()
			return nil, err
		}
		f.bands = append(f.bands, bw)
	}
	return f, nil
}

// abort removes the finder's files; those already closed were removed by write.
func (f *dupFinder) abort() {
	f.keys.abort()
	if f.sk != nil {
		f.sk.abort()
	}
	for _, bw := range f.bands {
		bw.abort()
	}
}

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
			if err := f.cl.Union(first, row); err != nil {
				return fmt.Errorf("build index: duplicates: %w", err)
			}
			continue
		}
		if sig == nil {
			return fmt.Errorf("build index: internal error: row %d, the first of its key, was not signed", row)
		}
		marks, err := f.sk.write(row, sig, w)
		if err != nil {
			return err
		}
		if len(marks) > 0 {
			f.marked++
		}
		var key [8]byte
		for j, bw := range f.bands {
			if len(marks) > 0 {
				copy(key[:], marks[8*j:])
			}
			if err := bw.write(key[:]); err != nil {
				return err
			}
		}
		f.signWork = f.signWork.Plus(w)
	}
	return nil
}

// bytes is what the finder holds as rows come, counted against Options.Mem: the exact groups and
// the clusters.
func (f *dupFinder) bytes() int64 {
	return int64(f.exact.Bytes()) + 4*int64(f.cl.Len())
}

// write finds the near duplicates, then writes the dups file for rows rows and fills in meta's Dups.
func (f *dupFinder) write(ctx context.Context, b *builder, rows int64, work dedup.Work) error {
	if err := f.keys.closeNoSync(); err != nil {
		return err
	}
	if err := f.sk.close(); err != nil {
		return err
	}
	// Every row is in: the exact groups (48 bytes a distinct row) are done with, and the passes and
	// the merge may have their memory.
	f.exact = dedup.Exact{}
	near, err := f.findNear(ctx, b)
	if err != nil {
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
	cl := &f.cl
	d := &Dups{Threshold: f.prm.Threshold, Shingle: f.prm.Shingle, Hashes: f.prm.Hashes, Bands: f.prm.Bands, Seed: f.prm.Seed, Version: dedup.Version, ExactDuplicates: f.nexact}
	keyWork := work
	d.KeyWork = &keyWork
	work = work.Plus(f.signWork).Plus(near)
	d.Work, d.FLOPs = work, work.FLOPs()
	var rec [dupRecSize]byte
	dups, clusters := dedup.Tally(int(rows), cl.Find)
	d.Duplicates, d.Clusters = int64(dups), int64(clusters)
	for r := int64(0); r < rows; r++ {
		binary.LittleEndian.PutUint32(rec[:4], uint32(cl.Find(int(r))))
		if _, err := io.ReadFull(keys, rec[4:]); err != nil {
			return fmt.Errorf("build index: read back %s: %w", f.keys.shown, bareErr(err))
		}
		if _, err := w.w.Write(rec[:]); err != nil {
			return w.fail(err)
		}
	}
	b.meta.Dups = d
	return w.close()
}

// findNear joins the near duplicates among the rows of the sketches file in f.cl, reading a band's
// file for each pass of a dedup.Passes whose tables hold at most a quarter of Options.Mem (the
// workers' last dictionaries hold up to half), and each candidate pair's records, and returns the
// work done. What it held at most is counted in the builder's peak; the band files are removed.
func (f *dupFinder) findNear(ctx context.Context, b *builder) (dedup.Work, error) {
	for _, bw := range f.bands {
		if err := bw.closeNoSync(); err != nil {
			return dedup.Work{}, err
		}
		defer os.Remove(bw.path)
	}
	ps, err := dedup.NewPasses(f.prm, f.marked, max(b.opt.Mem/4, 4<<10))
	if err != nil {
		return dedup.Work{}, fmt.Errorf("build index: duplicates: %w", err)
	}
	buf := make([]byte, min(1<<20, 8*(f.bands[0].n+1)))
	for k := range ps.Len() {
		bw := f.bands[ps.Start(k)]
		if err := readKeys(ctx, bw, buf, ps.Put); err != nil {
			return dedup.Work{}, err
		}
		b.dupPeak = max(b.dupPeak, f.bytes()+ps.Bytes())
	}
	file, err := os.Open(f.sk.w.path)
	if err != nil {
		return dedup.Work{}, b.wd.err("build index: read back", err)
	}
	defer file.Close()
	size := int64(len(f.sk.rec))
	fail := func(err error) error { return fmt.Errorf("build index: read back %s: %w", f.sk.w.shown, bareErr(err)) }
	// The pairs come by later row, ascending, and a pair's first row is before its later: a row at
	// or after the last later asked is the next later, read through large blocks in order; the
	// first rows go through many small blocks, an eighth of Options.Mem (a pool of 1M short rows:
	// 440k pairs, 330k rows in them, two thirds of the first rows' reads missed 16k records held).
	slots := cmp.Or(b.opt.dupSlots, int(max(1024, b.opt.Mem/8/(recordBlock*size))))
	laters, firsts := newRecordCache(file, size, 4096, 1), newRecordCache(file, size, recordBlock, slots)
	later, asked := int64(-1), 0
	return ps.Join(&f.cl, func(i uint32, buf []byte) (int, []byte, error) {
		if asked++; asked%(1<<16) == 0 && ctx.Err() != nil {
			return 0, nil, fmt.Errorf("build index: duplicates: %w", ctx.Err())
		}
		rc := firsts
		if int64(i) >= later {
			rc, later = laters, int64(i)
		}
		rec, err := rc.get(int64(i))
		if err != nil {
			return 0, nil, fail(err)
		}
		// A copy: the next get may read another block into the slot.
		return int(binary.LittleEndian.Uint32(rec)), append(buf[:0], rec[sketchHead:]...), nil
	})
}

// readKeys reads a band's file through buf and puts each nonzero key with its record's number.
func readKeys(ctx context.Context, bw *fileWriter, buf []byte, put func(i uint32, key uint64)) error {
	file, err := os.Open(bw.path)
	if err != nil {
		return fmt.Errorf("build index: read back %s: %w", bw.shown, bareErr(err))
	}
	defer file.Close()
	buf = buf[:len(buf)/8*8]
	var i uint32
	for {
		if err := ctx.Err(); err != nil {
			return fmt.Errorf("build index: duplicates: %w", err)
		}
		n, err := io.ReadFull(file, buf)
		if n%8 != 0 || err != nil && err != io.EOF && err != io.ErrUnexpectedEOF {
			return fmt.Errorf("build index: read back %s: %w", bw.shown, cmp.Or(bareErr(err), io.ErrUnexpectedEOF))
		}
		for o := 0; o < n; o, i = o+8, i+1 {
			if key := binary.LittleEndian.Uint64(buf[o:]); key != 0 {
				put(i, key)
			}
		}
		if n < len(buf) {
			return nil
		}
	}
}

// recordCache reads fixed-size records of a file through blocks of block records kept in slots,
// each block in the slot its number falls to. The pairs Passes.Join confirms come in ascending
// order of their later row, so those reads go block after block, and their first rows are met
// again and again where rows repeat a template or a sentence: one read a record would be a system
// call a pair (a fifth of a T0 build's time).
type recordCache struct {
	f     *os.File
	size  int64
	block int64
	tags  []int64 // the block each slot holds, -1 for none
	slots [][]byte
	ends  []int64 // the bytes of each slot read (less than a block at the end of the file)
}

// recordBlock is the records in a block of the first rows' cache: about a page.
const recordBlock = 16

func newRecordCache(f *os.File, size int64, block, slots int) *recordCache {
	c := &recordCache{f: f, size: size, block: int64(block), tags: make([]int64, slots), slots: make([][]byte, slots), ends: make([]int64, slots)}
	for s := range c.tags {
		c.tags[s] = -1
	}
	return c
}

// get returns record i, valid until the next get.
func (c *recordCache) get(i int64) ([]byte, error) {
	blk := i / c.block
	s := blk % int64(len(c.tags))
	if c.tags[s] != blk {
		if c.slots[s] == nil {
			c.slots[s] = make([]byte, c.block*c.size)
		}
		n, err := c.f.ReadAt(c.slots[s], blk*c.block*c.size)
		if err != nil && err != io.EOF {
			c.tags[s] = -1
			return nil, err
		}
		c.tags[s], c.ends[s] = blk, int64(n)
	}
	off := i % c.block * c.size
	if off+c.size > c.ends[s] {
		return nil, fmt.Errorf("record %d: %w", i, io.ErrUnexpectedEOF)
	}
	return c.slots[s][off : off+c.size], nil
}

// signRow is a worker's hashing of one row: the row's text parts, a newline between parts as a
// pick joins them, are gathered, keyed, and signed unless an earlier row is known to have the key.
type signRow struct {
	hasher dedup.Hasher
	signer *dedup.Signer
	seen   *seenKeys // shared by the workers
	k      int       // values per signature
	// work is the keying of every row, as if each were normalised and hashed: a row whose text the
	// cache knows is counted as its first was, so meta.json does not depend on which worker met
	// which row first.
	work dedup.Work
}

func newSignRow(prm dedup.Params, seen *seenKeys) (*signRow, error) {
	sg, err := dedup.NewSigner(prm)
	if err != nil {
		return nil, err
	}
	return &signRow{signer: sg, seen: seen, k: prm.Hashes}, nil
}

// sum appends the row's key, and its signature unless an earlier row has the key, to the
// batch's.
func (s *signRow) sum(o *batchOut, text []byte) {
	raw := s.seen.rawKey(text)
	key, hashed, sign, ok := s.seen.claimText(raw, o.seq)
	if !ok {
		before := s.hasher.Work()
		s.hasher.Write(text)
		key = s.hasher.Sum()
		hashed = s.hasher.Work().Hashed - before.Hashed
		sign = s.seen.claimKey(raw, key, hashed, o.seq)
	}
	s.work.Bytes += int64(len(text))
	s.work.Hashed += hashed
	o.keys = append(o.keys, key)
	if !sign {
		o.signed = append(o.signed, false)
		return
	}
	o.signed = append(o.signed, true)
	before := s.signer.Work()
	s.signer.Write(text)
	n := len(o.sigs)
	o.sigs = slices.Grow(o.sigs, s.k)
	s.signer.Sum(o.sigs[n:n])
	o.sigs = o.sigs[:n+s.k]
	o.signWork = append(o.signWork, s.signer.Work().Minus(before))
}

// seenKeys is the workers' shared memory of the rows they have met. It saves work on the repeats
// of a pool, however far apart and whichever workers their batches fall to, in two caches:
//
//   - keys: each key met, with its batch. A row whose key it holds from an earlier batch, or from
//     its own batch (an earlier row: a batch is one worker's, in order), is not the first of its
//     exact duplicates, and the collector will not need its signature. The first row of a key is
//     always signed: nothing before it put the key there.
//   - texts: the key and normalised length of each text met, by a 128-bit hash of the text as read
//     (two 64-bit hash/maphash sums under seeds drawn for the build). Equal text has equal
//     normalised text, so a row whose text is there is neither normalised nor hashed with SHA-256
//     again. Two different texts share a hash with probability about n²/2¹²⁹ for n texts, the
//     bound Key itself gives; the seeds are secret to the process, so no row can be made to
//     collide on purpose, and nothing written depends on them.
//
// Each cache forgets: a key forgotten costs only a signature made, a text forgotten a key hashed.
type seenKeys struct {
	mu    sync.Mutex
	keys  setCache[dedup.Key, int] // the batch's number plus one
	texts setCache[rawKey, textKey]
	seeds [2]maphash.Seed
}

// rawKey is the hash of a row's text as read.
type rawKey [2]uint64

// textKey is what the texts cache holds of a text: its Key, the length of its normalised form, for
// the work counted, and the earliest batch met with the text, plus one.
type textKey struct {
	key    dedup.Key
	hashed int64
	seq    int
}

func newSeenKeys() *seenKeys {
	return &seenKeys{
		keys:  newSetCache[dedup.Key, int](func(k dedup.Key) uint32 { return binary.LittleEndian.Uint32(k[:4]) }),
		texts: newSetCache[rawKey, textKey](func(r rawKey) uint32 { return uint32(r[0]) }),
		seeds: [2]maphash.Seed{maphash.MakeSeed(), maphash.MakeSeed()},
	}
}

func (c *seenKeys) rawKey(text []byte) rawKey {
	return rawKey{maphash.Bytes(c.seeds[0], text), maphash.Bytes(c.seeds[1], text)}
}

// claimText looks the text up: when it is known, it returns its key and normalised length and
// claims the key for a row of batch seq (as claim); ok is false when the text is not known.
func (c *seenKeys) claimText(raw rawKey, seq int) (key dedup.Key, hashed int64, sign, ok bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	t := c.texts.find(raw)
	if t == nil {
		return dedup.Key{}, 0, false, false
	}
	if t.val.seq-1 <= seq {
		// A row with the same text, so the same key, came before: one look-up, not two.
		return t.val.key, t.val.hashed, false, true
	}
	t.val.seq = seq + 1
	return t.val.key, t.val.hashed, c.claimLocked(t.val.key, seq), true
}

// claimKey records that the text raw has key and normalised length hashed and claims the key for
// a row of batch seq (as claim).
func (c *seenKeys) claimKey(raw rawKey, key dedup.Key, hashed int64, seq int) bool {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.texts.put(raw, textKey{key, hashed, seq + 1})
	return c.claimLocked(key, seq)
}

// claimLocked records that a row of batch seq has key k and reports whether the row must be signed:
// it need not when an earlier batch, or an earlier row of its own, had the key. c.mu is held.
func (c *seenKeys) claimLocked(k dedup.Key, seq int) bool {
	if s := c.keys.find(k); s != nil {
		if s.val-1 <= seq {
			return false
		}
		s.val = seq + 1
		return true
	}
	c.keys.put(k, seq+1)
	return true
}

// setCache is a hash table in sets of seenWays slots that doubles each time it is 3/8 full, up to
// seenMaxSlots, so that a small build holds little; then a key that finds its set full takes the
// place of one in it. index spreads keys over sets; the keys here are hash bits, which any of
// their bits do.
type setCache[K comparable, V any] struct {
	slots []setSlot[K, V]
	n     int // keys held
	index func(K) uint32
}

type setSlot[K comparable, V any] struct {
	key  K
	val  V
	used bool
}

const (
	seenWays     = 8
	seenMinSlots = 1 << 12
	seenMaxSlots = 1 << 17
)

func newSetCache[K comparable, V any](index func(K) uint32) setCache[K, V] {
	return setCache[K, V]{slots: make([]setSlot[K, V], seenMinSlots), index: index}
}

// find returns k's slot, or nil when k is not held.
func (c *setCache[K, V]) find(k K) *setSlot[K, V] {
	ways := c.set(k)
	for i := range ways {
		switch {
		case !ways[i].used:
			// Slots fill in order and are never emptied: the key is not in the set.
			return nil
		case ways[i].key == k:
			return &ways[i]
		}
	}
	return nil
}

// put holds v for k, which must not be held already.
func (c *setCache[K, V]) put(k K, v V) {
	if 8*c.n >= 3*len(c.slots) && len(c.slots) < seenMaxSlots {
		c.grow()
	}
	ways := c.set(k)
	for i := range ways {
		if !ways[i].used {
			ways[i] = setSlot[K, V]{k, v, true}
			c.n++
			return
		}
	}
	ways[c.index(k)>>24%seenWays] = setSlot[K, V]{k, v, true}
}

func (c *setCache[K, V]) set(k K) []setSlot[K, V] {
	set := int(c.index(k) % uint32(len(c.slots)/seenWays))
	return c.slots[set*seenWays : (set+1)*seenWays]
}

// grow doubles the cache, keeping its keys (but for the rare one whose new set is already full).
func (c *setCache[K, V]) grow() {
	old := c.slots
	c.slots = make([]setSlot[K, V], 2*len(old))
	for _, w := range old {
		if !w.used {
			continue
		}
		ways := c.set(w.key)
		for i := range ways {
			if !ways[i].used {
				ways[i] = w
				break
			}
		}
	}
}

// keyWork is the keying the worker did, every row's; its signing is counted by the collector.
func (s *signRow) keyWork() dedup.Work { return s.work }

var newline = []byte{'\n'}

// addDups hands the rows of batch o, the next in input order, to the duplicate finder, and gives
// the workers' dictionaries what it now holds less of Options.Mem. The finder's exact groups (about
// 52 bytes a distinct row with its clusters) cannot be spilled: once they alone hold more than the
// bound, the workers spill at every batch and the build goes on, past the bound, and says so
// (Stats.DupMem).
func (b *builder) addDups(o *batchOut) error {
	if err := b.dups.add(b.meta.Rows, o.keys, o.signed, o.sigs, o.signWork); err != nil {
		return err
	}
	n := b.dups.bytes()
	b.dupMem.Store(n)
	b.dupPeak = max(b.dupPeak, n)
	return nil
}
