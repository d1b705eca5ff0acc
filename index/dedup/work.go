package dedup

// Work counts the operations behind deduplication, so that a FLOP ledger can charge them. Each
// count has a FLOP-equivalent weight, sluice's stated convention (an estimate of the arithmetic
// per unit, counted from the algorithm, not measured on a machine):
//
//	field        one unit is                                                      FLOP-equivalents
//	Bytes        a text byte read: decoded, classified, case folded, hashed into   4
//	             its word (FNV-1a: one xor, one multiply)
//	Hashed       a normalised byte fed to SHA-256 (64 rounds of about 25 32-bit   32
//	             operations and a 48-word message schedule per 64-byte block,
//	             our count from the definition in FIPS 180-4)
//	ShingleWords a word hash mixed into a shingle hash (k per shingle of k words)  2
//	MinHashes    a shingle sketched in one round (see Signer): its hash mixed with   12
//	             the round's seed (two multiplies, three shifts, four xors), a bin
//	             drawn (a multiply, a shift), a value made and kept if smaller
//	BandValues   a signature value mixed into a band's bucket key (K per row)      2
//	Probes       a bucket looked up or inserted (b per row)                        8
//	Compared     a sketch byte compared while confirming a candidate (K per pair)  1
//
// A row of n shingles takes about n + K·ln K sketch evaluations, fewer rounds the more shingles.
type Work struct {
	Bytes        int64 `json:"bytes"`
	Hashed       int64 `json:"hashed"`
	ShingleWords int64 `json:"shingle_words"`
	MinHashes    int64 `json:"minhashes"`
	BandValues   int64 `json:"band_values"`
	Probes       int64 `json:"probes"`
	Compared     int64 `json:"compared"`
}

// FLOPs converts w to FLOP-equivalents with the weights in Work's documentation.
func (w Work) FLOPs() float64 {
	return 4*float64(w.Bytes) + 32*float64(w.Hashed) + 2*float64(w.ShingleWords) +
		12*float64(w.MinHashes) + 2*float64(w.BandValues) + 8*float64(w.Probes) + float64(w.Compared)
}

// Plus returns the sum of w and v, for adding up the Work of several goroutines.
func (w Work) Plus(v Work) Work {
	return Work{
		Bytes:        w.Bytes + v.Bytes,
		Hashed:       w.Hashed + v.Hashed,
		ShingleWords: w.ShingleWords + v.ShingleWords,
		MinHashes:    w.MinHashes + v.MinHashes,
		BandValues:   w.BandValues + v.BandValues,
		Probes:       w.Probes + v.Probes,
		Compared:     w.Compared + v.Compared,
	}
}

// Minus returns w less v, for the work done between two readings of a counter.
func (w Work) Minus(v Work) Work {
	return Work{
		Bytes:        w.Bytes - v.Bytes,
		Hashed:       w.Hashed - v.Hashed,
		ShingleWords: w.ShingleWords - v.ShingleWords,
		MinHashes:    w.MinHashes - v.MinHashes,
		BandValues:   w.BandValues - v.BandValues,
		Probes:       w.Probes - v.Probes,
		Compared:     w.Compared - v.Compared,
	}
}
