package decontam

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"math/bits"
	"slices"
)

// DefaultN is the n-gram length in words. Thirteen-word overlaps are common practice for
// decontaminating training data against benchmarks: long enough that shared stock phrases rarely
// match, short enough to catch a copied question inside a longer row.
const DefaultN = 13

var (
	// ErrParams reports an n-gram length below 1.
	ErrParams = errors.New("bad parameters")
	// ErrRow reports an evaluation row that cannot be recorded: a negative file or line, or more
	// rows than a 32-bit number counts.
	ErrRow = errors.New("bad evaluation row")
)

// Builder gathers the n-grams of evaluation rows. While building it holds 16 bytes per n-gram
// added (repeats included) and 16 bytes per evaluation row, and Set needs about 13 more per
// distinct n-gram while it sorts them into the Set. It must not be shared between goroutines.
type Builder struct {
	n       int
	entries []entry
	origins []origin
}

type entry struct {
	key uint64
	row uint32 // index into origins
}

type origin struct {
	file int32
	line int64
}

// NewBuilder returns a Builder of n-grams of n words, n ≥ 1.
func NewBuilder(n int) (*Builder, error) {
	if n < 1 {
		return nil, fmt.Errorf("decontamination: n-grams of %d words: must be at least 1: %w", n, ErrParams)
	}
	return &Builder{n: n}, nil
}

// Add records the n-grams of an evaluation row, words, found at line of evaluation file number
// file. A row of at least n words gives each of its n-grams; a row of fewer than n words (but
// one or more) gives itself, whole, which only a pool row of exactly the same words matches (see
// Set.Check); a row without words gives nothing.
func (b *Builder) Add(file int, line int64, words []string) error {
	if file < 0 || file > math.MaxInt32 || line < 0 {
		return fmt.Errorf("decontamination: evaluation file %d, line %d: %w", file, line, ErrRow)
	}
	if len(words) == 0 {
		return nil
	}
	if len(b.origins) == math.MaxUint32 {
		return fmt.Errorf("decontamination: evaluation file %d, line %d: more than %d rows: %w", file, line, uint32(math.MaxUint32), ErrRow)
	}
	row := uint32(len(b.origins))
	b.origins = append(b.origins, origin{int32(file), line})
	g := newGrams(words, b.n)
	for g.next() {
		b.entries = append(b.entries, entry{g.key, row})
	}
	return nil
}

// Set sorts what was added into a Set and empties the Builder.
func (b *Builder) Set() *Set {
	e := b.entries
	slices.SortFunc(e, func(x, y entry) int {
		if c := cmp.Compare(x.key, y.key); c != 0 {
			return c
		}
		return cmp.Compare(x.row, y.row)
	})
	s := &Set{n: b.n, origins: b.origins}
	for i, x := range e {
		if i > 0 && x.key == e[i-1].key {
			continue // a repeat: the first row that gave the n-gram is the one kept
		}
		s.keys = append(s.keys, x.key)
		s.rows = append(s.rows, x.row)
	}
	s.keys = slices.Clip(s.keys)
	s.rows = slices.Clip(s.rows)
	// About 4 to 8 keys (one or two cache lines) per bucket of the directory.
	p := max(bits.Len(uint(len(s.keys)))-3, 0)
	s.shift = uint(64 - p)
	s.dir = make([]uint32, 1<<p+1)
	k := 0
	for d := range s.dir {
		for k < len(s.keys) && s.keys[k]>>s.shift < uint64(d) {
			k++
		}
		s.dir[d] = uint32(k)
	}
	s.dir[len(s.dir)-1] = uint32(len(s.keys))
	*b = Builder{n: b.n}
	return s
}

// Set is the n-grams of an evaluation set, as 64-bit hashes, each with the first evaluation row
// that gave it. It holds about 13 bytes per distinct n-gram (an 8-byte hash, a 4-byte row and at
// most a byte of directory) and 16 bytes per evaluation row. A hit is found by hash alone: two
// different n-grams share a hash with probability 2⁻⁶⁴, so over L look-ups in a Set of M n-grams
// a false hit has probability about L·M/2⁶⁴ (10⁻² for L = 10¹⁰ and M = 2·10⁷).
//
// A Set is safe for use by several goroutines at once.
type Set struct {
	n       int
	keys    []uint64 // ascending
	rows    []uint32 // rows[i] is the first row of keys[i], an index into origins
	dir     []uint32 // keys[dir[d]:dir[d+1]] are those whose top bits are d
	shift   uint
	origins []origin
}

// N returns the n-gram length in words.
func (s *Set) N() int { return s.n }

// Len returns the number of distinct n-grams (and whole short rows) held.
func (s *Set) Len() int { return len(s.keys) }

// Bytes returns the memory the Set holds.
func (s *Set) Bytes() int {
	return 8*cap(s.keys) + 4*cap(s.rows) + 4*cap(s.dir) + 16*cap(s.origins)
}

// Hit says where a pool row meets the evaluation set.
type Hit struct {
	File int   // the evaluation file, as numbered in Builder.Add
	Line int64 // the line in it
	// At is the index in the checked words where the shared n-gram starts, and Words the shared
	// n-gram itself: the checked row's words[At : At+N], or all of them for a short row.
	At    int
	Words []string
}

// Check reports whether a pool row, given as words split the same way as the evaluation rows,
// shares an n-gram with the evaluation set, and where: the first shared n-gram in the row and
// the first evaluation row that had it. A row of fewer than N words (but one or more) is checked
// whole, and matches only an evaluation row of exactly the same words; a row without words never
// matches. Check hashes each word twice and looks up one key per n-gram; it allocates nothing.
func (s *Set) Check(words []string) (Hit, bool) {
	g := newGrams(words, s.n)
	for g.next() {
		if row, ok := s.find(g.key); ok {
			o := s.origins[row]
			m := min(len(words), s.n)
			return Hit{File: int(o.file), Line: o.line, At: g.at, Words: words[g.at : g.at+m]}, true
		}
	}
	return Hit{}, false
}

func (s *Set) find(key uint64) (uint32, bool) {
	if len(s.keys) == 0 {
		return 0, false
	}
	d := key >> s.shift // a shift of 64, for a one-bucket directory, gives 0
	for i := s.dir[d]; i < s.dir[d+1]; i++ {
		switch k := s.keys[i]; {
		case k == key:
			return s.rows[i], true
		case k > key:
			return 0, false
		}
	}
	return 0, false
}
