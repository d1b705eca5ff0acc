package dedup

// The Signer and Hasher as they were before they were made faster (dedup.Version 2), kept as
// references that the fast ones must match byte for byte (TestSignerMatchesReference,
// TestHasherMatchesReference): the keys and signatures stored in indexes depend on it.

import (
	"crypto/sha256"
	"fmt"
	"hash"
	"math"
	"math/bits"
	"unicode/utf8"
)

const refFlushAt = 4096 - 1 - utf8.UTFMax

// refSigner makes MinHash signatures. Words are maximal runs of letters, marks and decimal digits
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
// A refSigner is reused from row to row and allocates nothing per row; it must not be shared
// between goroutines: make one per goroutine.
type refSigner struct {
	k     int
	seeds []uint64 // one per round, 2K
	off   uint64   // seeds the offsets of the rounds from K on
	shift uint     // 32 − q: the round number's place in a value
	runes
	word   uint64 // FNV-1a state of the current word
	inWord bool
	ring   []uint64 // hashes of the last k words, oldest at ring[pos] once n ≥ k
	pos    int      // n mod k, kept apart since a division per word costs more than the rest
	n      int      // words so far in the row
	buf    []uint64 // the row's shingle hashes, at most maxBuffered
	filled int      // bins of sig holding a value
	sig    []uint32
	work   Work
}

// newRefSigner returns a refSigner for p.
func newRefSigner(p Params) (*refSigner, error) {
	p, err := p.resolve()
	if err != nil {
		return nil, fmt.Errorf("new signer: %w", err)
	}
	s := &refSigner{
		k:     p.Shingle,
		seeds: make([]uint64, 2*p.Hashes),
		ring:  make([]uint64, p.Shingle),
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
func (s *refSigner) Reset() {
	s.npend = 0
	s.word, s.inWord, s.n, s.pos = fnvOffset, false, 0, 0
	s.buf = s.buf[:0]
	s.filled = 0
	for i := range s.sig {
		s.sig[i] = math.MaxUint32
	}
}

// Write adds p to the text of the current row, as if concatenated with what was written before:
// write a space between parts whose words should not run together. It always returns len(p),
// nil; it satisfies io.Writer.
func (s *refSigner) Write(p []byte) (int, error) {
	n := len(p)
	s.work.Bytes += int64(n)
	p = s.feed(p, s.rune)
	for i := 0; i < len(p); {
		c := p[i]
		if c >= utf8.RuneSelf {
			if !utf8.FullRune(p[i:]) {
				s.keep(p[i:])
				break
			}
			r, raw, size := decode(p[i:])
			s.rune(r, raw)
			i += size
			continue
		}
		i++
		switch {
		case 'a' <= c && c <= 'z' || '0' <= c && c <= '9':
		case 'A' <= c && c <= 'Z':
			c += 'a' - 'A'
		default:
			if s.inWord {
				s.endWord()
			}
			continue
		}
		s.word = (s.word ^ uint64(c)) * fnvPrime
		s.inWord = true
	}
	return n, nil
}

// rune handles one rune that is not ASCII, or an invalid byte (raw != 0), which separates words.
func (s *refSigner) rune(r rune, raw byte) {
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

func (s *refSigner) endWord() {
	s.addWord(s.word)
	s.word, s.inWord = fnvOffset, false
}

// addWord takes the next word's hash and, once there are k words, the shingle that it ends.
func (s *refSigner) addWord(h uint64) {
	s.ring[s.pos] = h
	s.n++
	if s.pos++; s.pos == s.k {
		s.pos = 0
	}
	if s.n >= s.k {
		s.addShingle(s.pos, s.k)
	}
}

// addShingle hashes the m words that start at ring[start] into a shingle hash.
func (s *refSigner) addShingle(start, m int) {
	h := uint64(0x243F6A8885A308D3) // digits of π: any fixed value serves
	// The words from start to the end of the ring, then from its start: no division per word.
	for j, i := 0, start; j < m; j++ {
		h = (h ^ s.ring[i]) * 0x9E3779B97F4A7C15
		h ^= h >> 29
		if i++; i == s.k {
			i = 0
		}
	}
	s.addHash(mix64(h ^ uint64(m)))
	s.work.ShingleWords += int64(m)
}

// addHash takes the hash of one shingle of the row. Past maxBuffered it takes part in round 0 now
// and is not kept.
func (s *refSigner) addHash(x uint64) {
	if len(s.buf) < maxBuffered {
		s.buf = append(s.buf, x)
		return
	}
	s.put(0, x)
	s.work.MinHashes++
}

// put sketches shingle x in round i: it lowers its bin's value if it can.
func (s *refSigner) put(i int, x uint64) {
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

// round is put for every buffered shingle in round i < K, written out in one loop.
func (s *refSigner) round(i int) {
	sig := s.sig
	k := uint64(len(sig))
	seed, base, shift := s.seeds[i], uint32(i)<<s.shift, 32-s.shift
	filled := s.filled
	for _, x := range s.buf {
		z := mix64(x ^ seed)
		bin := uint64(uint32(z)) * k >> 32
		v := base | uint32(z>>32)>>shift
		if old := sig[bin]; v < old {
			if old == math.MaxUint32 {
				filled++
			}
			sig[bin] = v
		}
	}
	s.filled = filled
}

// sketch runs the rounds over the row's shingles until every bin holds a value. A row without
// shingles leaves every value 2³²−1.
func (s *refSigner) sketch() {
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
func (s *refSigner) Sum(dst Signature) Signature {
	s.drain(s.rune, true)
	if s.inWord {
		s.endWord()
	}
	if 0 < s.n && s.n < s.k {
		s.addShingle(0, s.n)
	}
	s.sketch()
	dst = append(dst[:0], s.sig...)
	s.Reset()
	return dst
}

// SignWords appends to dst[:0] the signature of a row given as words, which are taken as they
// are (not case folded), and returns it. It drops any text written since the last Sum.
func (s *refSigner) SignWords(dst Signature, words []string) Signature {
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

// Work returns what the refSigner has done since it was made.
func (s *refSigner) Work() Work { return s.work }

// refFlushAt is the size at which a refHasher passes its normalised bytes to SHA-256, leaving room for
// one more space and rune, so that its buffer never grows.

// refNormalizer writes the normalised form of the bytes it is given to out, passing out to d (when
// set) each time it reaches refFlushAt.
type refNormalizer struct {
	runes
	out     []byte
	d       hash.Hash
	hashed  int64
	started bool // a rune other than white space has been written
	space   bool // white space has been seen since the last rune written
}

func (n *refNormalizer) reset() {
	n.out = n.out[:0]
	n.npend = 0
	n.started, n.space = false, false
}

func (n *refNormalizer) write(p []byte) {
	p = n.feed(p, n.rune)
	limit := math.MaxInt
	if n.d != nil {
		limit = refFlushAt
	}
	// The state lives in locals in the ASCII loop, the common case, and in n elsewhere.
	out, space, started := n.out, n.space, n.started
	for i := 0; i < len(p); {
		c := p[i]
		if c >= utf8.RuneSelf {
			n.out, n.space, n.started = out, space, started
			if !utf8.FullRune(p[i:]) {
				n.keep(p[i:])
				return
			}
			r, raw, size := decode(p[i:])
			n.rune(r, raw)
			i += size
			out, space, started = n.out, n.space, n.started
			continue
		}
		i++
		if c == ' ' || '\t' <= c && c <= '\r' {
			space = started
			continue
		}
		if 'A' <= c && c <= 'Z' {
			c += 'a' - 'A'
		}
		if space {
			out = append(out, ' ')
			space = false
		}
		out = append(out, c)
		started = true
		if len(out) >= limit {
			n.out = out
			n.flush()
			out = n.out
		}
	}
	n.out, n.space, n.started = out, space, started
}

// rune writes one rune that is not ASCII, or an invalid byte (raw != 0).
func (n *refNormalizer) rune(r rune, raw byte) {
	if raw == 0 && isSpace(r) {
		n.space = n.started
		return
	}
	if n.space {
		n.out = append(n.out, ' ')
		n.space = false
	}
	if raw != 0 {
		n.out = append(n.out, raw)
	} else {
		n.out = utf8.AppendRune(n.out, fold(r))
	}
	n.started = true
	if n.d != nil && len(n.out) >= refFlushAt {
		n.flush()
	}
}

// end writes what a cut rune left; trailing white space is never written.
func (n *refNormalizer) end() { n.drain(n.rune, true) }

func (n *refNormalizer) flush() {
	n.d.Write(n.out)
	n.hashed += int64(len(n.out))
	n.out = n.out[:0]
}

// refHasher computes the Key of a row from its text written in one or more parts. Writing
// allocates nothing (past the first use), and memory stays at a fixed 4 KiB whatever the length
// of a row. The zero value is ready to use; a refHasher must not be shared between goroutines.
type refHasher struct {
	n    refNormalizer
	sum  [sha256.Size]byte
	work Work
}

func (h *refHasher) init() {
	if h.n.d == nil {
		h.n.d = sha256.New()
		h.n.out = make([]byte, 0, refFlushAt+1+utf8.UTFMax)
	}
}

// Write adds p to the text of the current row, as if concatenated with what was written before.
// It always returns len(p), nil; it satisfies io.Writer.
func (h *refHasher) Write(p []byte) (int, error) {
	h.init()
	h.n.write(p)
	h.work.Bytes += int64(len(p))
	return len(p), nil
}

// Sum returns the Key of the text written since the last Sum or Reset, and starts a new row.
func (h *refHasher) Sum() Key {
	h.init()
	h.n.end()
	h.n.flush()
	h.work.Hashed += h.n.hashed
	h.n.d.Sum(h.sum[:0])
	var k Key
	copy(k[:], h.sum[:])
	h.Reset()
	return k
}

// Reset drops the text written so far.
func (h *refHasher) Reset() {
	h.init()
	h.n.d.Reset()
	h.n.reset()
	h.n.hashed = 0
}

// Work returns what the refHasher has done since it was made.
func (h *refHasher) Work() Work { return h.work }
