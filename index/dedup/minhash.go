package dedup

import (
	"fmt"
	"math"
	"math/bits"
	"unicode/utf8"
)

// Defaults for Params.
const (
	DefaultShingle   = 5   // words per shingle
	DefaultHashes    = 128 // hash functions, the signature length K
	DefaultThreshold = 0.8 // Jaccard similarity of near duplicates
)

// Bounds on Params, to keep a mistyped number from asking for gigabytes.
const (
	maxShingle = 1 << 10
	maxHashes  = 1 << 14
)

// Params configures near-duplicate detection. The zero value means the defaults. Signatures can
// be compared only when made with the same Shingle, Hashes and Seed.
type Params struct {
	// Shingle is the number of words in a shingle; 0 means DefaultShingle.
	Shingle int
	// Hashes is the number of hash functions K, the length of a signature; 0 means DefaultHashes.
	Hashes int
	// Threshold is the Jaccard similarity at or above which two rows are near duplicates, in
	// (0, 1]; 0 means DefaultThreshold.
	Threshold float64
	// Bands is the number b of LSH bands, which must divide Hashes; 0 means the number that
	// ChooseBands picks for Hashes and Threshold.
	Bands int
	// Seed seeds the hash functions.
	Seed uint64
}

// resolve fills in the defaults and checks p.
func (p Params) resolve() (Params, error) {
	if p.Shingle == 0 {
		p.Shingle = DefaultShingle
	}
	if p.Hashes == 0 {
		p.Hashes = DefaultHashes
	}
	if p.Threshold == 0 {
		p.Threshold = DefaultThreshold
	}
	if p.Shingle < 1 || p.Shingle > maxShingle {
		return p, fmt.Errorf("shingle of %d words: must be in [1, %d]: %w", p.Shingle, maxShingle, ErrParams)
	}
	if p.Hashes < 1 || p.Hashes > maxHashes {
		return p, fmt.Errorf("%d hash functions: must be in [1, %d]: %w", p.Hashes, maxHashes, ErrParams)
	}
	if !(p.Threshold > 0 && p.Threshold <= 1) {
		return p, fmt.Errorf("threshold %v: must be in (0, 1]: %w", p.Threshold, ErrParams)
	}
	if p.Bands == 0 {
		b, _, err := ChooseBands(p.Hashes, p.Threshold)
		if err != nil {
			return p, err
		}
		p.Bands = b
	}
	if p.Bands < 1 || p.Hashes%p.Bands != 0 {
		return p, fmt.Errorf("%d bands: must divide %d hash functions: %w", p.Bands, p.Hashes, ErrParams)
	}
	return p, nil
}

// ChooseBands picks the number of bands b and rows per band r, with b·r = k, for which LSH best
// separates pairs below Jaccard similarity t from pairs at or above it. A pair of similarity s
// becomes a candidate with probability P(s) = 1 − (1 − s^r)^b, the S-curve of Leskovec,
// Rajaraman and Ullman, Mining of Massive Datasets, ch. 3. ChooseBands minimises the false
// positive area ∫₀ᵗ P(s) ds plus the false negative area ∫ₜ¹ (1 − P(s)) ds, weighted equally,
// over the divisors b of k (the smaller b on a tie).
//
// For k = 128 and t = 0.8 that is b = 8, r = 16, whose S-curve is steepest near
// (1/b)^(1/r) ≈ 0.878: a pair at s = 0.8 becomes a candidate with probability 0.20, at s = 0.9
// with 0.81, at s = 0.95 with 0.99. Equal weights suit a caller who pays for false positives as
// much as for misses; a Detector confirms every candidate, so its false positives cost only a
// comparison, and a caller who would rather miss fewer pairs between t and 0.9 can set more bands
// (b = 16, r = 8 catches a pair at 0.8 with probability 0.95) in Params.Bands.
func ChooseBands(k int, t float64) (bands, rows int, err error) {
	if k < 1 || k > maxHashes {
		return 0, 0, fmt.Errorf("choose bands: %d hash functions: must be in [1, %d]: %w", k, maxHashes, ErrParams)
	}
	if !(t > 0 && t <= 1) {
		return 0, 0, fmt.Errorf("choose bands: threshold %v: must be in (0, 1]: %w", t, ErrParams)
	}
	best := math.Inf(1)
	for b := 1; b <= k; b++ {
		if k%b != 0 {
			continue
		}
		r := k / b
		fp, fn := bandAreas(b, r, t)
		if fp+fn < best {
			best, bands, rows = fp+fn, b, r
		}
	}
	return bands, rows, nil
}

// bandAreas returns the false positive and false negative areas of ChooseBands by composite
// Simpson's rule on 2,000 intervals each side of t; P is a polynomial and smooth, so that is
// accurate to far better than the differences between neighbouring choices.
func bandAreas(b, r int, t float64) (fp, fn float64) {
	p := func(s float64) float64 { return 1 - math.Pow(1-math.Pow(s, float64(r)), float64(b)) }
	fp = simpson(p, 0, t)
	fn = simpson(func(s float64) float64 { return 1 - p(s) }, t, 1)
	return fp, fn
}

func simpson(f func(float64) float64, lo, hi float64) float64 {
	const n = 2000
	if hi <= lo {
		return 0
	}
	h := (hi - lo) / n
	sum := f(lo) + f(hi)
	for i := 1; i < n; i++ {
		w := 2.0
		if i%2 == 1 {
			w = 4
		}
		sum += w * f(lo+float64(i)*h)
	}
	return sum * h / 3
}

// Signature is a MinHash signature (Broder, 1997): K values, each the smallest of the hashes that
// land in its position (see Signer for how). The share of positions where two signatures agree
// estimates the Jaccard similarity of the two rows' shingle sets, with standard deviation about
// √(J(1−J)/K). A row without words has no shingles and every value 2³²−1.
type Signature []uint32

// Similarity estimates the Jaccard similarity of the rows behind s and o: the share of positions
// where they agree. Signatures of different lengths, or empty ones, have similarity 0.
func (s Signature) Similarity(o Signature) float64 {
	if len(s) != len(o) || len(s) == 0 {
		return 0
	}
	eq := 0
	for i, v := range s {
		if v == o[i] {
			eq++
		}
	}
	return float64(eq) / float64(len(s))
}

// noWords reports whether s is the signature of a row without words.
func (s Signature) noWords() bool {
	for _, v := range s {
		if v != math.MaxUint32 {
			return false
		}
	}
	return true
}

// Word hashing is FNV-1a, 64 bits (the constants of hash/fnv), written out so that it allocates
// nothing and can be resumed across writes.
const (
	fnvOffset = 14695981039346656037
	fnvPrime  = 1099511628211
)

// maxBuffered is how many of a row's shingle hashes a Signer keeps for the rounds after the first.
// Past it, a shingle takes part in round 0 alone; a row of that many shingles leaves a bin empty
// after round 0 with probability below K·e^(−maxBuffered/K), 10⁻²¹⁵ for K = 128, so this changes
// no signature in practice and keeps a Signer's memory fixed whatever the length of a row.
const maxBuffered = 1 << 16

// Signer makes MinHash signatures. Words are maximal runs of letters, marks and decimal digits
// (other runes separate them), case folded as Normalize folds them. A shingle is k consecutive
// words (Params.Shingle); a row with at least one but fewer than k words is one shingle of all
// its words, so that short rows still have a signature (and are near duplicates only of rows of
// the same few words).
//
// The K values are made by fast similarity sketching (Dahlgaard, Knudsen and Thorup, "Fast
// Similarity Sketching", FOCS 2017), which costs about n + K·ln K hash evaluations for n shingles
// where K independent hash functions cost n·K. Value j is a bin; in round i < K each shingle x
// falls in a bin drawn from a hash of (x, i), in round K ≤ i < 2K in bin (o(x) + i) mod K for an
// offset o(x) drawn once (our variant of the paper's per-shingle permutation: it too fills every
// bin by round 2K), each time with the value i·2^(32−q) + r(x, i), q bits for the round and r
// random bits; a bin keeps its smallest value. Rounds stop once every bin is filled, as no later
// round can lower a value. Every shingle is treated alike, so the shingle behind bin j is equally
// likely to be any of the union of two rows, and two rows agree at j with probability their
// Jaccard similarity, as with K independent functions; the paper shows the share of agreeing bins
// concentrates as well. The hashes are drawn from Params.Seed, so equal Params give equal
// signatures in any process.
//
// A Signer is reused from row to row and allocates nothing per row; it must not be shared
// between goroutines: make one per goroutine.
type Signer struct {
	k     int
	seeds []uint64 // one per round, 2K
	off   uint64   // seeds the offsets of the rounds from K on
	shift uint     // 32 − q: the round number's place in a value
	runes
	word   uint64 // FNV-1a state of the current word
	inWord bool
	// words holds the hashes of the row's words not yet made into shingles, after the last k − 1
	// of those that were: shingles are hashed a chunk of words at a time, in one tight loop.
	words  []uint64
	n      int      // words so far in the row
	buf    []uint64 // the row's shingle hashes, at most maxBuffered
	filled int      // bins of sig holding a value
	sig    []uint32
	work   Work
}

// wordChunk is how many word hashes a Signer gathers before it hashes their shingles.
const wordChunk = 1 << 10

// NewSigner returns a Signer for p.
func NewSigner(p Params) (*Signer, error) {
	p, err := p.resolve()
	if err != nil {
		return nil, fmt.Errorf("new signer: %w", err)
	}
	s := &Signer{
		k:     p.Shingle,
		seeds: make([]uint64, 2*p.Hashes),
		words: make([]uint64, 0, max(wordChunk, p.Shingle)),
		sig:   make([]uint32, p.Hashes),
		shift: 32 - uint(bits.Len(uint(2*p.Hashes))),
	}
	g := splitmix{p.Seed}
	for i := range s.seeds {
		s.seeds[i] = g.next()
	}
	s.off = g.next()
	s.Reset()
	return s, nil
}

// Reset drops the text written since the last Sum.
func (s *Signer) Reset() {
	s.npend = 0
	s.word, s.inWord, s.n = fnvOffset, false, 0
	s.words = s.words[:0]
	s.buf = s.buf[:0]
	s.filled = 0
	for i := range s.sig {
		s.sig[i] = math.MaxUint32
	}
}

// wordByte maps a byte to itself case folded when it is ASCII and belongs in a word, and to 0
// otherwise: when it separates words, or starts a rune that is not ASCII.
var wordByte = func() (t [256]byte) {
	for c := range t {
		switch {
		case 'a' <= c && c <= 'z' || '0' <= c && c <= '9':
			t[c] = byte(c)
		case 'A' <= c && c <= 'Z':
			t[c] = byte(c + 'a' - 'A')
		}
	}
	return t
}()

// Write adds p to the text of the current row, as if concatenated with what was written before:
// write a space between parts whose words should not run together. It always returns len(p),
// nil; it satisfies io.Writer.
func (s *Signer) Write(p []byte) (int, error) {
	n := len(p)
	s.work.Bytes += int64(n)
	p = s.feed(p, s.rune)
	// The word's state lives in locals in the ASCII loops, the common case, and in s elsewhere.
	word, inWord := s.word, s.inWord
	for i := 0; i < len(p); {
		// The bytes of an ASCII word, in a loop of their own.
		if c := wordByte[p[i]]; c != 0 {
			word = (word ^ uint64(c)) * fnvPrime
			for i++; i < len(p); i++ {
				c := wordByte[p[i]]
				if c == 0 {
					break
				}
				word = (word ^ uint64(c)) * fnvPrime
			}
			inWord = true
			continue
		}
		if c := p[i]; c < utf8.RuneSelf {
			i++
			if inWord {
				s.addWord(word)
				word, inWord = fnvOffset, false
			}
			continue
		}
		s.word, s.inWord = word, inWord
		if !utf8.FullRune(p[i:]) {
			s.keep(p[i:])
			return n, nil
		}
		r, raw, size := decode(p[i:])
		s.rune(r, raw)
		i += size
		word, inWord = s.word, s.inWord
	}
	s.word, s.inWord = word, inWord
	return n, nil
}

// rune handles one rune that is not ASCII, or an invalid byte (raw != 0), which separates words.
func (s *Signer) rune(r rune, raw byte) {
	if raw != 0 || !isWordRune(r) {
		if s.inWord {
			s.endWord()
		}
		return
	}
	var b [utf8.UTFMax]byte
	for _, c := range b[:utf8.EncodeRune(b[:], fold(r))] {
		s.word = (s.word ^ uint64(c)) * fnvPrime
	}
	s.inWord = true
}

func (s *Signer) endWord() {
	s.addWord(s.word)
	s.word, s.inWord = fnvOffset, false
}

// addWord takes the next word's hash.
func (s *Signer) addWord(h uint64) {
	s.words = append(s.words, h)
	s.n++
	if len(s.words) == cap(s.words) {
		s.shingles()
	}
}

// shingles hashes every shingle of k words that ends within words and keeps the last k − 1 words
// for the shingles that end after them.
func (s *Signer) shingles() {
	w, k := s.words, s.k
	if len(w) < k {
		return
	}
	if k == DefaultShingle {
		for i := 0; i+DefaultShingle <= len(w); i++ {
			s.addHash(shingleHash5((*[DefaultShingle]uint64)(w[i : i+DefaultShingle])))
		}
	} else {
		for i := 0; i+k <= len(w); i++ {
			s.addHash(shingleHash(w[i : i+k]))
		}
	}
	s.work.ShingleWords += int64((len(w) - k + 1) * k)
	s.words = w[:copy(w, w[len(w)-k+1:])]
}

// shingleHash hashes the words of one shingle, in order, into a shingle hash.
func shingleHash(w []uint64) uint64 {
	h := uint64(0x243F6A8885A308D3) // digits of π: any fixed value serves
	for _, x := range w {
		h = (h ^ x) * 0x9E3779B97F4A7C15
		h ^= h >> 29
	}
	return mix64(h ^ uint64(len(w)))
}

// shingleHash5 is shingleHash for a shingle of DefaultShingle words, written out.
func shingleHash5(w *[DefaultShingle]uint64) uint64 {
	const m = 0x9E3779B97F4A7C15
	h := uint64(0x243F6A8885A308D3)
	h = (h ^ w[0]) * m
	h ^= h >> 29
	h = (h ^ w[1]) * m
	h ^= h >> 29
	h = (h ^ w[2]) * m
	h ^= h >> 29
	h = (h ^ w[3]) * m
	h ^= h >> 29
	h = (h ^ w[4]) * m
	h ^= h >> 29
	return mix64(h ^ DefaultShingle)
}

// addHash takes the hash of one shingle of the row. Past maxBuffered it takes part in round 0 now
// and is not kept.
func (s *Signer) addHash(x uint64) {
	if len(s.buf) < maxBuffered {
		s.buf = append(s.buf, x)
		return
	}
	s.put(0, x)
	s.work.MinHashes++
}

// put sketches shingle x in round i: it lowers its bin's value if it can.
func (s *Signer) put(i int, x uint64) {
	z := mix64(x ^ s.seeds[i])
	k := uint64(len(s.sig))
	var bin uint64
	if i < len(s.sig) {
		bin = uint64(uint32(z)) * k >> 32
	} else {
		bin = (uint64(uint32(mix64(x^s.off)))*k>>32 + uint64(i) - k) % k
	}
	v := uint32(i)<<s.shift | uint32(z>>32)>>(32-s.shift)
	if old := s.sig[bin]; v < old {
		if old == math.MaxUint32 {
			s.filled++
		}
		s.sig[bin] = v
	}
}

// round is put for every buffered shingle in round i < K, written out in one loop without a
// branch on the data: a value below 2³²−1 always replaces 2³²−1, so a bin is filled exactly when
// it held that.
func (s *Signer) round(i int) {
	if len(s.sig) == DefaultHashes {
		s.filled += roundDefault((*[DefaultHashes]uint32)(s.sig), s.buf, s.seeds[i], uint32(i)<<s.shift)
		return
	}
	sig := s.sig
	k := uint64(len(sig))
	seed, base, shift := s.seeds[i], uint32(i)<<s.shift, 32-s.shift
	filled := s.filled
	for _, x := range s.buf {
		z := mix64(x ^ seed)
		bin := uint64(uint32(z)) * k >> 32
		v := base | uint32(z>>32)>>shift
		old := sig[bin]
		filled += isMax(old)
		sig[bin] = min(old, v)
	}
	s.filled = filled
}

// roundDefault is round for K = DefaultHashes, 128, whose constants let the compiler keep every
// value in a register: the bin is the top 7 bits of the low word, and the value's random part the
// top 23 bits of the high word (32 − q with q = 9 bits for 2K = 256 rounds). It returns the bins
// filled.
func roundDefault(sig *[DefaultHashes]uint32, buf []uint64, seed uint64, base uint32) int {
	filled := 0
	for _, x := range buf {
		z := mix64(x ^ seed)
		old := sig[uint32(z)>>25]
		filled += isMax(old)
		sig[uint32(z)>>25] = min(old, base|uint32(z>>41))
	}
	return filled
}

// isMax is 1 for 2³²−1, the value of an empty bin, and 0 otherwise, without a branch.
func isMax(v uint32) int { return int((uint64(v) + 1) >> 32) }

// sketch runs the rounds over the row's shingles until every bin holds a value. A row without
// shingles leaves every value 2³²−1.
func (s *Signer) sketch() {
	if len(s.buf) == 0 && s.filled == 0 {
		return
	}
	// Round 0 takes every shingle, even if those past maxBuffered have filled every bin already.
	for i := 0; i < len(s.seeds) && (i == 0 || s.filled < len(s.sig)); i++ {
		if i >= len(s.sig) {
			for _, x := range s.buf {
				s.put(i, x)
			}
		} else {
			s.round(i)
		}
		s.work.MinHashes += int64(len(s.buf))
	}
}

// Sum appends to dst[:0] the signature of the text written since the last Sum or Reset, returns
// it, and starts a new row. Pass the previous signature as dst to reuse its memory.
func (s *Signer) Sum(dst Signature) Signature {
	s.drain(s.rune, true)
	if s.inWord {
		s.endWord()
	}
	if 0 < s.n && s.n < s.k {
		// A short row is one shingle of all its words, which are all in words.
		s.addHash(shingleHash(s.words[:s.n]))
		s.work.ShingleWords += int64(s.n)
	} else {
		s.shingles()
	}
	s.sketch()
	dst = append(dst[:0], s.sig...)
	s.Reset()
	return dst
}

// SignWords appends to dst[:0] the signature of a row given as words, which are taken as they
// are (not case folded), and returns it. It drops any text written since the last Sum.
func (s *Signer) SignWords(dst Signature, words []string) Signature {
	s.Reset()
	for _, w := range words {
		h := uint64(fnvOffset)
		for i := 0; i < len(w); i++ {
			h = (h ^ uint64(w[i])) * fnvPrime
		}
		s.work.Bytes += int64(len(w))
		s.addWord(h)
	}
	return s.Sum(dst)
}

// Work returns what the Signer has done since it was made.
func (s *Signer) Work() Work { return s.work }

// mix64 is the 64-bit finaliser of MurmurHash3 (Austin Appleby, public domain), which spreads
// every input bit over the output.
func mix64(x uint64) uint64 {
	x ^= x >> 33
	x *= 0xff51afd7ed558ccd
	x ^= x >> 33
	x *= 0xc4ceb9fe1a85ec53
	x ^= x >> 33
	return x
}

// splitmix is the SplitMix64 generator (Steele, Lea and Flood, "Fast splittable pseudorandom
// number generators", OOPSLA 2014), used to draw hash coefficients from a seed.
type splitmix struct{ s uint64 }

func (g *splitmix) next() uint64 {
	g.s += 0x9E3779B97F4A7C15
	z := g.s
	z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9
	z = (z ^ (z >> 27)) * 0x94D049BB133111EB
	return z ^ (z >> 31)
}

// RecallBands picks the number of bands for k hash functions and threshold t that keeps the most
// values per band (the fewest chance candidates) while a pair at exactly t still becomes a
// candidate with probability at least recall, by the S-curve 1 − (1 − t^r)^b (Leskovec,
// Rajaraman and Ullman, Mining of Massive Datasets, ch. 3). It suits a Detector, which confirms
// every candidate by its estimate, so a looser band costs only comparisons. For k = 128, t = 0.8
// and recall 0.9 it is 16 bands of 8 values (0.947 at 0.8). It returns k when no divisor reaches
// recall, and 0 when k < 1.
func RecallBands(k int, t, recall float64) int {
	if k < 1 {
		return 0
	}
	best := k
	for r := 1; r <= k; r++ {
		if k%r != 0 {
			continue
		}
		b := k / r
		if 1-math.Pow(1-math.Pow(t, float64(r)), float64(b)) >= recall {
			best = b
		}
	}
	return best
}

// Version numbers the way keys and signatures are made from Params: it changes whenever the same
// text and Params would give another Key or Signature, so that clusters stored by one version
// are not taken for another's.
const Version = 2

// ForThreshold returns the Params with which sluice finds near duplicates at threshold t, at index
// time and at pick time alike, so that the two find the same clusters: shingles of DefaultShingle
// words, DefaultHashes values, seed 0, and the bands RecallBands picks for a recall of 0.9. A t of
// 0 takes DefaultThreshold.
func ForThreshold(t float64) Params {
	if t == 0 {
		t = DefaultThreshold
	}
	return Params{Shingle: DefaultShingle, Hashes: DefaultHashes, Threshold: t, Bands: RecallBands(DefaultHashes, t, 0.9)}
}
