package index

import (
	"bufio"
	"bytes"
	"context"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"sort"

	"sluice/index/jsonl"
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

	// A lexicon whose kept terms were read from its keys file (loadKeys) has not been walked: find
	// checks the entries it reads, their bytes (check) and what load checks of each.
	keyed    bool
	check    func(from, to int) error
	rows     int64
	postings uint64
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

// loadKeys keeps the terms of the keys file kb (lexKeysFile) for the lexicon b, checking them
// against each other and the counts meta.json gives, without reading b; check checks a stretch of b.
func (lx *lexicon) loadKeys(kb, b []byte, terms, rows int64, postings uint64, check func(from, to int) error) error {
	kept := (terms + lexStride - 1) / lexStride
	if terms < 0 || terms > int64(len(b)/3) || kept > int64(len(kb)/3) || terms == 0 && len(b) > 0 {
		return fmt.Errorf("meta.json says %d terms for %d bytes, with %d bytes of keys: %w", terms, len(b), len(kb), ErrDamaged)
	}
	*lx = lexicon{b: b, n: int(terms), keyed: true, check: check, rows: rows, postings: postings,
		end: make([]uint32, 0, kept), at: make([]uint64, 0, kept), post: make([]uint64, 0, kept)}
	var prev []byte
	for rest := kb; len(rest) > 0; {
		i := len(lx.end)
		l, k := binary.Uvarint(rest)
		if k <= 0 || l > MaxTermBytes || uint64(len(rest)-k) < l {
			return fmt.Errorf("keys: truncated key %d: %w", i, ErrDamaged)
		}
		t := rest[k : k+int(l)]
		rest = rest[k+int(l):]
		at, k1 := binary.Uvarint(rest)
		if k1 <= 0 {
			return fmt.Errorf("keys: truncated key %d: %w", i, ErrDamaged)
		}
		post, k2 := binary.Uvarint(rest[k1:])
		if k2 <= 0 {
			return fmt.Errorf("keys: truncated key %d: %w", i, ErrDamaged)
		}
		rest = rest[k1+k2:]
		switch {
		case int64(i) == kept:
			return fmt.Errorf("keys: more than the %d for %d terms: %w", kept, terms, ErrDamaged)
		case i == 0 && (at != 0 || post != 0):
			return fmt.Errorf("keys: the first term's entry at %d, its postings at %d: %w", at, post, ErrDamaged)
		case i > 0 && (bytes.Compare(prev, t) >= 0 || at <= lx.at[i-1] || post < lx.post[i-1]):
			return fmt.Errorf("keys: key %d out of order: %w", i, ErrDamaged)
		case at >= uint64(len(b)) || post > postings:
			return fmt.Errorf("keys: key %d past the lexicon or the postings: %w", i, ErrDamaged)
		case len(lx.keep)+len(t) > math.MaxUint32:
			return fmt.Errorf("more than 4 GiB of kept terms")
		}
		lx.keep = append(lx.keep, t...)
		lx.end = append(lx.end, uint32(len(lx.keep)))
		lx.at, lx.post = append(lx.at, at), append(lx.post, post)
		prev = t
	}
	if int64(len(lx.end)) != kept {
		return fmt.Errorf("keys: %d for %d terms: %w", len(lx.end), terms, ErrDamaged)
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
// kept term at or before it. load checked every entry, so the walk cannot run off the lexicon; a
// lexicon from its keys is checked as it is walked (findKeyed).
func (lx *lexicon) find(term string) (termEntry, bool, error) {
	i := sort.Search(len(lx.end), func(i int) bool { return string(lx.kept(i)) > term }) - 1
	if i < 0 {
		return termEntry{}, false, nil
	}
	if lx.keyed {
		return lx.findKeyed(term, i)
	}
	e, ok := lx.walk(term, i)
	return e, ok, nil
}

func (lx *lexicon) walk(term string, i int) (termEntry, bool) {
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

// findKeyed is find's walk from kept term i of a lexicon read from its keys: the entries up to the
// next kept term are checked (their blocks' sums) and each as load checks it, and the first must
// be kept term i.
func (lx *lexicon) findKeyed(term string, i int) (termEntry, bool, error) {
	end, postEnd := len(lx.b), lx.postings
	if i+1 < len(lx.at) {
		end, postEnd = int(lx.at[i+1]), lx.post[i+1]
	}
	if err := lx.check(int(lx.at[i]), end); err != nil {
		return termEntry{}, false, err
	}
	b, off := lx.b[lx.at[i]:end], lx.post[i]
	var prev []byte
	for j := 0; j < lexStride && len(b) > 0; j++ {
		t, df, pl, rest, ok := nextEntry(b)
		switch {
		case !ok:
			return termEntry{}, false, fmt.Errorf("truncated entry: %w", ErrDamaged)
		case j == 0 && !bytes.Equal(t, lx.kept(i)), j > 0 && bytes.Compare(prev, t) >= 0:
			return termEntry{}, false, fmt.Errorf("terms out of order: %w", ErrDamaged)
		case df == 0 || df > uint64(lx.rows):
			return termEntry{}, false, fmt.Errorf("term %q in %d rows of %d: %w", t, df, lx.rows, ErrDamaged)
		case pl > postEnd-off: // off never passes postEnd: each step is checked
			return termEntry{}, false, fmt.Errorf("postings of %q end past where the next key's start: %w", t, ErrDamaged)
		}
		switch {
		case string(t) == term:
			return termEntry{df: df, post: off, postEnd: off + pl}, true, nil
		case string(t) > term:
			return termEntry{}, false, nil
		}
		prev, b, off = t, rest, off+pl
	}
	return termEntry{}, false, nil
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

// lexKeysFile holds every lexStride-th term of the lexicon, "uvarint length, bytes, uvarint offset
// of its entry in the lexicon, uvarint offset of its postings", so that Open keeps what lexicon.load
// keeps without walking the lexicon, and a command reads only the entries of the terms it looks up.
const lexKeysFile = "lexicon.keys"

// writeLexKeys writes the lexicon's keys file from the lexicon the merge wrote.
func (b *builder) writeLexKeys(ctx context.Context) error {
	f, err := os.Open(b.wd.path(lexiconFile))
	if err != nil {
		return b.wd.err("build index: read", err)
	}
	defer f.Close()
	w, err := b.wd.create(b.wd.path(lexKeysFile))
	if err != nil {
		return err
	}
	defer w.abort()
	r := &countReader{r: bufio.NewReaderSize(jsonl.WithContext(ctx, f), 1<<20)}
	bad := func(err error) error {
		return fmt.Errorf("build index: read back %s: %w", b.wd.shown(f.Name()), err)
	}
	var term []byte
	var post uint64
	var vb [2 * binary.MaxVarintLen64]byte
	for i := 0; ; i++ {
		at := r.n
		l, err := binary.ReadUvarint(r)
		if err == io.EOF {
			break
		}
		if err == nil && l > MaxTermBytes {
			err = fmt.Errorf("a term of %d bytes", l)
		}
		if err != nil {
			return bad(err)
		}
		term = slices.Grow(term[:0], int(l))[:l]
		_, err = io.ReadFull(r, term)
		var pl uint64
		if err == nil {
			_, err = binary.ReadUvarint(r) // df
		}
		if err == nil {
			pl, err = binary.ReadUvarint(r)
		}
		if err != nil {
			return bad(err)
		}
		if i%lexStride == 0 {
			n := binary.PutUvarint(vb[:], l)
			w.w.Write(vb[:n])
			w.w.Write(term)
			n = binary.PutUvarint(vb[:], at)
			n += binary.PutUvarint(vb[n:], post)
			if err := w.write(vb[:n]); err != nil {
				return err
			}
		}
		post += pl
	}
	return w.close()
}

// countReader counts the bytes read through it.
type countReader struct {
	r *bufio.Reader
	n uint64
}

func (c *countReader) Read(p []byte) (int, error) {
	k, err := c.r.Read(p)
	c.n += uint64(k)
	return k, err
}

func (c *countReader) ReadByte() (byte, error) {
	b, err := c.r.ReadByte()
	if err == nil {
		c.n++
	}
	return b, err
}
