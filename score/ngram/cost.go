package ngram

// The FLOP-equivalents below are sluice's stated conventions, estimates of
// the work per unit, not measurements of any machine, so that n-gram
// selection can share a budget with training.
const (
	// flopsPerWordLookup covers hashing a token and comparing it against
	// the vocabulary: the figure sluice charges for analysing a token
	// (budget.FLOPsPerToken).
	flopsPerWordLookup = 8
	// flopsPerProbe covers one probe of a table with a 64-bit key: a
	// multiply, shifts and xors to hash it, and a compare.
	flopsPerProbe = 4
	// flopsPerLog covers one natural logarithm, about ten multiply-adds of
	// a polynomial (common practice).
	flopsPerLog = 20
)

// FLOPsPerToken is the FLOP-equivalent cost for a model of the given order
// to score one symbol, each token of a row and its closing </s>, assuming
// every probe is made: one word lookup, a read of its unigram and order−1
// table probes at 4 each, a multiply-add (2) per order and one logarithm:
//
//	8 + 4·order + 2·order + 20
//
// Score and CrossEntropyDifference cost (len(tokens)+1) ×
// (FLOPsPerToken(target.Order()) + FLOPsPerToken(pool.Order())) per row.
func FLOPsPerToken(order int) float64 {
	return flopsPerWordLookup + flopsPerProbe*float64(order) + 2*float64(order) + flopsPerLog
}

// TrainFLOPsPerToken is the FLOP-equivalent cost of counting one training
// symbol into a Counter and building the model from it (a row of t tokens is
// t + order symbols with its padding under ModifiedKneserNey, t + 2·(order−1)
// under NLTKKneserNey), charged as if every n-gram were new: one word lookup, order
// table probes while counting, and three probes' worth of work for each of
// those order n-grams when the model is built (its continuation count, its
// context's totals, its table entry):
//
//	8 + 4·order + 3·4·order
func TrainFLOPsPerToken(order int) float64 {
	return flopsPerWordLookup + flopsPerProbe*float64(order) + 3*flopsPerProbe*float64(order)
}
