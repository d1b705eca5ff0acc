package index

import (
	"encoding/binary"
	"encoding/hex"
	"fmt"
	"hash/crc32"
	"math"
	"sync/atomic"

	"sluice/index/jsonl"
)

// blocks checks one mapped file of an index a block at a time, the first time a command reads
// into the block, against the CRC-32C meta.json gives each block (File.Blocks): a command that
// reads a few rows or lists of a large index reads those and not the whole index, and a pick,
// which reads nearly all of it, reads each part once rather than once to check and once to use.
//
// A block of a file of fixed-size records holds whole records, and is checked whole before any of
// them is trusted: their sum and then, for the rows and the clusters, what Open used to check of
// every record (records, below). Checks may run on several goroutines at once; a block checked
// twice is checked alike.
type blocks struct {
	ix     *Index
	name   string
	b      []byte // the mapping
	block  int
	sums   []uint32
	ok     []atomic.Uint64 // a bit per block: summed and its records checked
	summed []atomic.Uint64 // a bit per block: summed (the clusters' check reads other blocks' sums)
	// records checks the records of the block's bytes [from, to), once their sum matched.
	records func(from, to int) error
}

// newBlocks reads meta.json's block sums for the file name mapped as b; nil when it has none, the
// file having been checked whole at open.
func (ix *Index) newBlocks(name string, b []byte) (*blocks, error) {
	f := ix.meta.Files[name]
	if f.Block <= 0 {
		return nil, nil
	}
	n := (int64(len(b)) + f.Block - 1) / f.Block
	if f.Block != blockSize(name) || int64(len(f.Blocks)) != 8*n {
		return nil, fmt.Errorf("open index %s: meta.json gives %s %d block sums of %d bytes for %d bytes: %w", ix.dir, name, len(f.Blocks)/8, f.Block, len(b), ErrDamaged)
	}
	raw, err := hex.DecodeString(f.Blocks)
	if err != nil {
		return nil, fmt.Errorf("open index %s: meta.json's block sums of %s: %w", ix.dir, name, ErrDamaged)
	}
	c := &blocks{ix: ix, name: name, b: b, block: int(f.Block), sums: make([]uint32, n),
		ok: make([]atomic.Uint64, (n+63)/64), summed: make([]atomic.Uint64, (n+63)/64)}
	for i := range c.sums {
		c.sums[i] = binary.BigEndian.Uint32(raw[4*i:])
	}
	return c, nil
}

// check checks every block holding part of the bytes [from, to) not checked before.
func (c *blocks) check(from, to int) error {
	if c == nil || from >= to {
		return nil
	}
	for k := from / c.block; k <= (to-1)/c.block; k++ {
		if c.ok[k/64].Load()&(1<<(k%64)) != 0 {
			continue
		}
		if err := c.sum(k); err != nil {
			return err
		}
		lo, hi := k*c.block, min((k+1)*c.block, len(c.b))
		if c.records != nil {
			if err := c.records(lo, hi); err != nil {
				return err
			}
		}
		c.ok[k/64].Or(1 << (k % 64))
	}
	return nil
}

// sum checks block k's CRC-32C, once.
func (c *blocks) sum(k int) error {
	if c.summed[k/64].Load()&(1<<(k%64)) != 0 {
		return nil
	}
	lo, hi := k*c.block, min((k+1)*c.block, len(c.b))
	if got := crc32.Checksum(c.b[lo:hi], castagnoli); got != c.sums[k] {
		return fmt.Errorf("index %s: %s bytes %d to %d: checksum %08x, meta.json says %08x: %w", c.ix.dir, c.name, lo, hi, got, c.sums[k], ErrDamaged)
	}
	// The pages go back unless the index stays resident: the command reads what it needs of them
	// again, from the page cache, and a check never holds a file resident.
	c.ix.releaseIn(c.b, lo, hi)
	c.summed[k/64].Or(1 << (k % 64))
	return nil
}

// all checks the whole file.
func (c *blocks) all() error {
	if c == nil {
		return nil
	}
	return c.check(0, len(c.b))
}

// checks holds the block checks of an index's files read in parts; a field is nil for a file
// checked whole at open (an index built before block sums, or a file without them).
type checks struct {
	rows, norms, dups, ids, post, lex *blocks
	stored                            map[string]*blocks // sources read from a stream, by file name
}

// add makes the block check of the file name, mapped as b.
func (cs *checks) add(ix *Index, name string, b []byte) error {
	c, err := ix.newBlocks(name, b)
	if err != nil {
		return err
	}
	switch name {
	case rowsFile:
		cs.rows = c
	case normsFile:
		cs.norms = c
	case dupsFile:
		cs.dups = c
	case idsFile:
		cs.ids = c
	case postingsFile:
		cs.post = c
	case lexiconFile:
		cs.lex = c
	default:
		if cs.stored == nil {
			cs.stored = map[string]*blocks{}
		}
		cs.stored[name] = c
	}
	return nil
}

// fail keeps the first error of a check made by a read that returns none (RowLen, RowNorm,
// DupFirst and the like answer zero values after it); Err reports it.
func (ix *Index) fail(err error) {
	ix.fault.CompareAndSwap(nil, &err)
}

// Err reports the first damage found by a read that returns no error of its own (RowLen, RowNorm,
// RowTokens, RowLocation, RowID, DupFirst, DupKey, DF): those answer zero values once their part
// of a file fails its check, so a command checks Err before it trusts what it made from them.
func (ix *Index) Err() error {
	if ix.set != nil {
		for _, g := range ix.set.segs {
			if err := g.Err(); err != nil {
				return err
			}
		}
		return nil
	}
	if p := ix.fault.Load(); p != nil {
		return *p
	}
	return nil
}

// need checks the bytes [from, to) of the file c checks, and reports whether they may be read;
// when not, the damage is kept for Err.
func (ix *Index) need(c *blocks, from, to int) bool {
	if c == nil {
		return true
	}
	if err := c.check(from, to); err != nil {
		ix.fail(err)
		return false
	}
	return true
}

// rowRecs checks the rows' records in the bytes [from, to) of the rows file: each must name a
// source the index has, and lie where that source can hold it.
func (ix *Index) rowRecs(from, to int) error {
	m := &ix.meta
	for at := from; at+rowRecSize <= to; at += rowRecSize {
		i, r := at/rowRecSize, getRowRec(ix.rows[at:])
		if int(r.src) >= len(m.Sources) {
			return fmt.Errorf("index %s: row %d names source %d of %d: %w", ix.dir, i, r.src, len(m.Sources), ErrDamaged)
		}
		s := &m.Sources[r.src]
		end := r.off + uint64(r.n)
		if r.off > math.MaxInt64-uint64(r.n) || s.Compression == jsonl.None.String() && (s.Size < 0 || end > uint64(s.Size)) {
			return fmt.Errorf("index %s: row %d lies at bytes %d to %d of a source of %d: %w", ix.dir, i, r.off, end, s.Size, ErrDamaged)
		}
	}
	return nil
}

// dupRecs checks the clusters' records in the bytes [from, to) of the dups file: each row's first
// must be itself or an earlier row that is its own first. The earlier row's block is summed first
// when the dups file is checked in blocks.
func (ix *Index) dupRecs(from, to int) error {
	db := ix.dups
	for at := from; at+dupRecSize <= to; at += dupRecSize {
		r := at / dupRecSize
		f := int(binary.LittleEndian.Uint32(db[at:]))
		if f > r {
			return fmt.Errorf("index %s: dups: row %d names %d as its cluster's first: %w", ix.dir, r, f, ErrDamaged)
		}
		if c := ix.chk.dups; c != nil && f*dupRecSize < from {
			if err := c.sum(f * dupRecSize / c.block); err != nil {
				return err
			}
		}
		if int(binary.LittleEndian.Uint32(db[f*dupRecSize:])) != f {
			return fmt.Errorf("index %s: dups: row %d names %d as its cluster's first: %w", ix.dir, r, f, ErrDamaged)
		}
	}
	return nil
}

// idOffsets finds where every idStride-th row's id starts, walking the whole ids file once, the
// first time an id is asked (or at open, for an index without block sums), and checks every
// length on the way, so that a row's id is then found by a walk of at most idStride-1 others.
func (ix *Index) idOffsets() error {
	ix.idsOnce.Do(func() {
		if ix.idsErr = ix.loadIDs(ix.ids); ix.idsErr == nil {
			ix.idsDone.Store(true)
		}
	})
	return ix.idsErr
}

// loadLexicon keeps every lexStride-th term of the lexicon: from its keys file, when the build
// wrote one and the lexicon has block sums, so that only the entries a command looks up are read;
// else from a walk of the whole lexicon, checked first.
func (ix *Index) loadLexicon(data map[string][]byte) error {
	m, b := &ix.meta, data[lexiconFile]
	var err error
	if _, keyed := m.Files[lexKeysFile]; keyed && ix.chk.lex != nil {
		err = ix.lex.loadKeys(data[lexKeysFile], b, m.Terms, m.Rows, uint64(len(ix.postings)), ix.chk.lex.check)
	} else if err = ix.chk.lex.all(); err == nil {
		err = ix.lex.load(b, m.Terms, m.Rows, uint64(len(ix.postings)))
	}
	if err != nil {
		return fmt.Errorf("open index %s: lexicon: %w", ix.dir, err)
	}
	return nil
}

// lexWalked checks the whole lexicon, once, when it was read from its keys: for the walks over
// every entry that an index set makes of its segments' lexicons (segSet.terms).
func (ix *Index) lexWalked() error {
	ix.lexOnce.Do(func() {
		if !ix.lex.keyed {
			return
		}
		var whole lexicon
		if ix.lexErr = ix.chk.lex.all(); ix.lexErr == nil {
			ix.lexErr = whole.load(ix.lex.b, ix.meta.Terms, ix.meta.Rows, ix.lex.postings)
		}
		if ix.lexErr != nil {
			ix.lexErr = fmt.Errorf("index %s: lexicon: %w", ix.dir, ix.lexErr)
		}
	})
	return ix.lexErr
}

// Check checks every byte of the index (of every segment, for a set) against its checksums, with
// the records, lexicon and ids as the reads of them check them: what the reads of a command check
// of the parts they read, done for the whole, as sluice verify asks. It gives back the pages it
// read.
func (ix *Index) Check() error {
	if ix.set != nil {
		for _, g := range ix.set.segs {
			if err := g.Check(); err != nil {
				return err
			}
		}
		return nil
	}
	cs := []*blocks{ix.chk.lex, ix.chk.post, ix.chk.rows, ix.chk.norms, ix.chk.dups, ix.chk.ids}
	for _, c := range ix.chk.stored {
		cs = append(cs, c)
	}
	for _, c := range cs {
		if err := c.all(); err != nil {
			return err
		}
	}
	if err := ix.lexWalked(); err != nil {
		return err
	}
	if ix.meta.IDField != "" {
		if err := ix.idOffsets(); err != nil {
			return err
		}
	}
	if ix.sketches != nil {
		if err := ix.checkSketches(); err != nil {
			return err
		}
	}
	ix.ReleasePages()
	return ix.Err()
}
