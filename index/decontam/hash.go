package decontam

// grams walks the keys of a row's n-grams: those of n words, or one for the whole row when it
// has fewer than n words but some. A key is a polynomial rolling hash over the words' hashes,
// H = Σ w_j·P^(m−1−j) mod 2⁶⁴, so that sliding the window costs one word in and one out, then
// mixed with the number of words m, which keeps a short row's key apart from every n-gram's.
type grams struct {
	words []string
	m     int    // words per key
	pm    uint64 // P^(m−1)
	h     uint64
	at    int // start of the current key's words
	key   uint64
}

// polyP is the rolling hash's multiplier: odd, so multiplying by it loses no bits.
const polyP = 0x9E3779B97F4A7C15

func newGrams(words []string, n int) grams {
	m := min(n, len(words))
	pm := uint64(1)
	for range m - 1 {
		pm *= polyP
	}
	return grams{words: words, m: m, pm: pm, at: -1}
}

// next moves to the next key and reports whether there is one.
func (g *grams) next() bool {
	if g.m == 0 || g.at+g.m >= len(g.words) {
		return false
	}
	if g.at < 0 {
		for _, w := range g.words[:g.m] {
			g.h = g.h*polyP + wordHash(w)
		}
	} else {
		g.h = (g.h-wordHash(g.words[g.at])*g.pm)*polyP + wordHash(g.words[g.at+g.m])
	}
	g.at++
	g.key = mix64(g.h ^ uint64(g.m)*0xC2B2AE3D27D4EB4F)
	return true
}

// wordHash is 64-bit FNV-1a (the constants of hash/fnv), mixed so that the words' hashes look
// random to the polynomial.
func wordHash(w string) uint64 {
	h := uint64(14695981039346656037)
	for i := 0; i < len(w); i++ {
		h ^= uint64(w[i])
		h *= 1099511628211
	}
	return mix64(h)
}

// mix64 is the 64-bit finaliser of MurmurHash3 (Austin Appleby, public domain).
func mix64(x uint64) uint64 {
	x ^= x >> 33
	x *= 0xff51afd7ed558ccd
	x ^= x >> 33
	x *= 0xc4ceb9fe1a85ec53
	x ^= x >> 33
	return x
}
