package vectors

// flopsPerWordLookup is the FLOP-equivalent charged for looking a word up in
// the word-vector table: hashing it and comparing it, the figure sluice
// charges for analysing a token (budget.FLOPsPerToken).
const flopsPerWordLookup = 8

// Work counts what scoring did, for the FLOP ledger.
type Work struct {
	// MultiplyAdds counts float multiply-adds: dot products, norms,
	// centroid sums and word-vector sums.
	MultiplyAdds int64
	// WordLookups counts words looked up in a word-vector table, found or
	// not.
	WordLookups int64
}

// FLOPs converts w to FLOPs: 2 per multiply-add (a multiply and an add,
// common practice) and 8 per word lookup (sluice's per-token figure). The
// few divisions and square roots per row are not counted.
func (w Work) FLOPs() float64 {
	return 2*float64(w.MultiplyAdds) + flopsPerWordLookup*float64(w.WordLookups)
}

// Add returns the sum of w and o.
func (w Work) Add(o Work) Work {
	return Work{MultiplyAdds: w.MultiplyAdds + o.MultiplyAdds, WordLookups: w.WordLookups + o.WordLookups}
}
