package dedup

import (
	"encoding/binary"
	"fmt"
	"math/bits"
	"slices"
)

// Pair is a candidate pair of rows: two rows whose signatures agree on a whole band.
type Pair struct {
	Earlier, Later int
	// Similarity is the Jaccard similarity estimated from the rows' sketches (see Detector).
	Similarity float64
	// Confirmed reports Similarity ≥ the threshold: the rows are now in one cluster.
	Confirmed bool
}

// chance is the probability that the low 8 bits of two different signature values agree.
const chance = 1.0 / 256

// Detector finds near duplicates among rows fed in input order, by locality-sensitive hashing
// of their signatures (Leskovec, Rajaraman and Ullman, Mining of Massive Datasets, ch. 3): a
// signature is cut into b bands of r values, and rows whose values agree on a whole band share
// that band's bucket and become a candidate pair. A bucket keeps only its first row, so each row
// is compared with the first row of each bucket it falls in; a row similar to a later member of a
// bucket but not to its first is missed in that band (it may meet it in another). Each candidate is
// confirmed when its estimated similarity reaches the threshold, and confirmed pairs are joined in
// Clusters.
//
// Keeping every row's full signature for confirmation would cost 4·K bytes per row. A Detector
// keeps a sketch instead: the low 8 bits of each value (b-bit minwise hashing, Li and König,
// "b-Bit Minwise Hashing", WWW 2010). Two different values agree there by chance with probability
// 2⁻⁸, so from m agreeing bytes of K the similarity is estimated as (m/K − 2⁻⁸)/(1 − 2⁻⁸), whose
// standard deviation at J = 0.8 and K = 128 is 0.03544, as against 0.03536 for full values.
//
// Memory per row added: K bytes of sketch and 4 bytes of row number (in slices that grow by
// about a quarter at a time once large), and up to b bucket entries of 12 bytes (a 64-bit band
// key and a 32-bit row) in an open-addressing table kept between 3/8 and 3/4 full, so 16 to 32
// bytes each (48 while the table doubles); and 4 bytes of Clusters per row number, added or not.
// For K = 128 and b = 8 that is 264 to 392 bytes per row, more during growth
// (BenchmarkDetector measured 305 on 20,000 T0 rows).
//
// A Detector must not be shared between goroutines.
type Detector struct {
	k, b, r  int
	t        float64
	buckets  table
	sketch   []byte   // K bytes per row added
	rows     []uint32 // the row number of each row added
	last     int      // the last row added, -1 before the first
	clusters Clusters
	seen     []uint32 // the current row's candidates, as indexes into rows
	scratch  []byte   // Add's marks, kept for the next row
	touched  byte     // what table.touch read, kept so that the reads are not optimised away
	work     Work
}

// NewDetector returns a Detector for signatures made with p.
func NewDetector(p Params) (*Detector, error) {
	p, err := p.resolve()
	if err != nil {
		return nil, fmt.Errorf("new detector: %w", err)
	}
	return &Detector{k: p.Hashes, b: p.Bands, r: p.Hashes / p.Bands, t: p.Threshold, last: -1}, nil
}

// Bands returns the number of bands b and the values per band r.
func (d *Detector) Bands() (bands, rows int) { return d.b, d.r }

// Clusters returns the clusters found so far. The caller may join more rows in them, such as the
// exact duplicates of rows it did not sign.
func (d *Detector) Clusters() *Clusters { return &d.clusters }

// Work returns what the Detector has done since it was made.
func (d *Detector) Work() Work { return d.work }

// Add takes the signature of row, which must come after every row added before (rows skipped,
// such as exact duplicates not signed, are fine), appends its candidate pairs with earlier rows to
// dst, and returns the result. A row without words (see Signature) is never a candidate.
func (d *Detector) Add(dst []Pair, row int, sig Signature) ([]Pair, error) {
	if len(sig) != d.k {
		return dst, fmt.Errorf("near duplicates: row %d: signature of %d values, want %d: %w", row, len(sig), d.k, ErrLength)
	}
	d.scratch = d.AppendMarks(d.scratch[:0], sig)
	return d.AddMarks(dst, row, d.scratch)
}

// MarksLen is the length of a signature's marks (see AppendMarks): 8 bytes a band and a byte a
// value.
func (d *Detector) MarksLen() int { return 8*d.b + d.k }

// AppendMarks appends to dst all that a Detector keeps of sig, a signature of K values, and
// returns the result: each band's bucket key (8 bytes, little-endian), then the low byte of each
// value. A row without words has no marks: nothing is appended. Marks stored when rows are first
// signed let a later Detector take the rows again, by AddMarks, without their text or signatures.
func (d *Detector) AppendMarks(dst []byte, sig Signature) []byte {
	if len(sig) != d.k || sig.noWords() {
		return dst
	}
	for j := 0; j < d.b; j++ {
		dst = binary.LittleEndian.AppendUint64(dst, bandKey(j, sig[j*d.r:(j+1)*d.r]))
	}
	for _, v := range sig {
		dst = append(dst, byte(v))
	}
	return dst
}

// AddMarks is Add for a row given by its marks (AppendMarks of its signature): the same pairs,
// clusters and work. Empty marks are a row without words.
func (d *Detector) AddMarks(dst []Pair, row int, marks []byte) ([]Pair, error) {
	if row <= d.last || row > MaxRow {
		return dst, fmt.Errorf("near duplicates: row %d after row %d: %w", row, d.last, ErrRow)
	}
	if len(marks) != 0 && len(marks) != d.MarksLen() {
		return dst, fmt.Errorf("near duplicates: row %d: %d bytes of marks, want %d: %w", row, len(marks), d.MarksLen(), ErrLength)
	}
	d.last = row
	d.clusters.grow(row)
	if len(marks) == 0 {
		return dst, nil
	}
	self := uint32(len(d.rows))
	d.rows = append(d.rows, uint32(row))
	d.sketch = append(d.sketch, marks[8*d.b:]...)
	d.seen = d.seen[:0]
	d.touched ^= d.buckets.touch(marks[:8*d.b])
	for j := 0; j < d.b; j++ {
		f, found := d.buckets.getOrPut(binary.LittleEndian.Uint64(marks[8*j:]), self)
		if !found || slices.Contains(d.seen, f) {
			continue
		}
		d.seen = append(d.seen, f)
		p := Pair{Earlier: int(d.rows[f]), Later: row, Similarity: d.estimate(f, self)}
		if p.Confirmed = p.Similarity >= d.t; p.Confirmed {
			// Both rows are in range, so Union cannot fail.
			_ = d.clusters.Union(p.Earlier, p.Later)
		}
		dst = append(dst, p)
	}
	d.work.BandValues += int64(d.k)
	d.work.Probes += int64(d.b)
	d.work.Compared += int64(len(d.seen) * d.k)
	return dst, nil
}

// MarksSimilarity is the similarity a Detector estimates for two rows from their marks
// (AppendMarks at settings of the given number of bands; both of one length), so that a
// candidate pair found elsewhere is confirmed as a Detector confirms it: when the estimate
// reaches the threshold.
func MarksSimilarity(x, y []byte, bands int) float64 {
	x, y = x[8*bands:], y[8*bands:]
	return sketchSimilarity(matching(x, y), len(x))
}

// estimate is the b-bit estimate of the similarity of the rows added as x and y.
func (d *Detector) estimate(x, y uint32) float64 {
	sx := d.sketch[int(x)*d.k : int(x+1)*d.k]
	sy := d.sketch[int(y)*d.k : int(y+1)*d.k]
	return sketchSimilarity(matching(sx, sy), d.k)
}

// matching counts the equal bytes of sx and sy, which have the same length, eight at a time: a byte
// of a ^ b is 0 exactly where they agree, and its high bit is set in ((a ^ b) & 0x7f…) + 0x7f… |
// (a ^ b) exactly where it is not 0, with no carry between bytes.
func matching(sx, sy []byte) int {
	sy = sy[:len(sx)]
	m := len(sx)
	i := 0
	for ; i+8 <= len(sx); i += 8 {
		z := binary.LittleEndian.Uint64(sx[i:]) ^ binary.LittleEndian.Uint64(sy[i:])
		m -= bits.OnesCount64(((z & lowBits) + lowBits | z) & highBits)
	}
	for ; i < len(sx); i++ {
		if sx[i] != sy[i] {
			m--
		}
	}
	return m
}

// sketchSimilarity corrects the share of m agreeing sketch bytes out of k for chance agreement.
func sketchSimilarity(m, k int) float64 {
	e := (float64(m)/float64(k) - chance) / (1 - chance)
	return min(max(e, 0), 1)
}

// Bytes returns the memory the Detector holds for its rows (slices by capacity, the table by its
// slots, the clusters), so that a caller holding many rows can count it against a bound.
func (d *Detector) Bytes() int {
	return cap(d.sketch) + 4*cap(d.rows) + 4*cap(d.clusters.parent) + len(d.buckets.slots)
}

// bandKey hashes band j of a signature, the band's number included so that equal values in
// different bands fall in different buckets. 0 marks an empty slot, so it is never returned.
func bandKey(j int, v []uint32) uint64 {
	h := uint64(j+1) * 0x9E3779B97F4A7C15
	for len(v) >= 2 {
		h = mix64(h ^ (uint64(v[0])<<32 | uint64(v[1])))
		v = v[2:]
	}
	if len(v) == 1 {
		h = mix64(h ^ uint64(v[0]))
	}
	if h == 0 {
		h = 1
	}
	return h
}

// table is an open-addressing hash table (linear probing) from nonzero 64-bit keys, which are
// already well mixed, to 32-bit values: 12 bytes a slot, the key and then the value
// (little-endian), side by side so that a probe reads one line of the cache, not two; kept at most
// 3/4 full. A key's home slot is the high word of key × slots (Lemire's multiply-shift range
// reduction, "A fast alternative to the modulo reduction", 2016, cited from memory), so the table
// may have any number of slots: reserve makes it just large enough.
type table struct {
	slots []byte
	n     int
}

const slotSize = 12

// len returns the number of slots.
func (t *table) len() int { return len(t.slots) / slotSize }

// home returns the slot where k's probe starts, of size slots.
func home(k uint64, size int) int {
	hi, _ := bits.Mul64(k, uint64(size))
	return int(hi)
}

// getOrPut returns the value of k and true, or stores v for k and returns v and false.
func (t *table) getOrPut(k uint64, v uint32) (uint32, bool) {
	if 4*(t.n+1) > 3*t.len() {
		t.grow()
	}
	size := t.len()
	for i := home(k, size); ; {
		e := t.slots[i*slotSize : (i+1)*slotSize]
		switch binary.LittleEndian.Uint64(e) {
		case k:
			return binary.LittleEndian.Uint32(e[8:]), true
		case 0:
			binary.LittleEndian.PutUint64(e, k)
			binary.LittleEndian.PutUint32(e[8:], v)
			t.n++
			return v, false
		}
		if i++; i == size {
			i = 0
		}
	}
}

// touch reads the home slot of each key of keys (8 bytes each, little-endian) before any is looked
// up, growing the table first if they could not all be put: the misses of the cache, independent of
// one another, then overlap, where getOrPut would meet them one after another.
func (t *table) touch(keys []byte) byte {
	if 4*(t.n+len(keys)/8) > 3*t.len() {
		t.grow()
	}
	size := t.len()
	var x byte
	for j := 0; j+8 <= len(keys); j += 8 {
		x ^= t.slots[home(binary.LittleEndian.Uint64(keys[j:]), size)*slotSize]
	}
	return x
}

// reserve grows the table, if it must, to hold n keys at most 3/4 full.
func (t *table) reserve(n int) {
	if size := (4*n + 2) / 3; size > t.len() {
		t.resize(max(size, 1024))
	}
}

func (t *table) grow() { t.resize(max(2*t.len(), 1024)) }

// resize moves the keys into a table of size slots.
func (t *table) resize(size int) {
	old := t.slots
	t.slots = make([]byte, size*slotSize)
	for o := 0; o < len(old); o += slotSize {
		k := binary.LittleEndian.Uint64(old[o:])
		if k == 0 {
			continue
		}
		j := home(k, size)
		for binary.LittleEndian.Uint64(t.slots[j*slotSize:]) != 0 {
			if j++; j == size {
				j = 0
			}
		}
		copy(t.slots[j*slotSize:(j+1)*slotSize], old[o:o+slotSize])
	}
}
