package score

import (
	"fmt"
	"math"
	"slices"
)

// tfScheme and idfScheme make the TF-IDF weighting of query vectors pluggable.
// Score always uses tfRaw with idfSmooth (the Corpus row norms assume it); the
// other variants exist so the vector code can be checked against textbook
// examples that use them.
type tfScheme uint8

const (
	tfRaw tfScheme = iota // tf
	tfLog                 // 1 + log10(tf) for tf > 0
)

type idfScheme uint8

const (
	idfSmooth idfScheme = iota // ln((1+N)/(1+df)) + 1
	idfNone                    // 1
)

type weighting struct {
	tf  tfScheme
	idf idfScheme
}

// sklearnWeighting is TfidfVectorizer's default: raw tf, smooth idf.
var sklearnWeighting = weighting{tf: tfRaw, idf: idfSmooth}

func (w weighting) tfWeight(tf int) float64 {
	if w.tf == tfLog {
		if tf <= 0 {
			return 0
		}
		return 1 + math.Log10(float64(tf))
	}
	return float64(tf)
}

func (w weighting) idfWeight(n, df int) float64 {
	if w.idf == idfNone {
		return 1
	}
	return math.Log(float64(1+n)/float64(1+df)) + 1
}

// unitWeights appends to dst the l2-normalised weights tfWeight(counts[i])·idf[i].
// The norm is summed in slice order. A zero vector stays zero.
func unitWeights(dst []float64, counts []int, idf []float64, w weighting) []float64 {
	start := len(dst)
	var ss float64
	for i, c := range counts {
		x := float64(w.tfWeight(c) * idf[i])
		dst = append(dst, x)
		ss += float64(x * x)
	}
	if ss == 0 {
		return dst
	}
	nrm := math.Sqrt(ss)
	for i := start; i < len(dst); i++ {
		dst[i] /= nrm
	}
	return dst
}

// bm25IDF is ln(1 + (N − df + 0.5)/(df + 0.5)), always positive for 0 ≤ df ≤ N.
func bm25IDF(n, df int) float64 {
	return math.Log1p((float64(n-df) + 0.5) / (float64(df) + 0.5))
}

// plan is the set of queries one Score or Explain call runs. Score and Explain
// both build it with newPlan so that they share every query weight bit for bit.
type plan struct {
	n        int
	avg      float64
	vocab    []string  // distinct target terms present in the pool, ascending bytes
	df       []int     // per vocab term
	partDF   []int     // per vocab term, the rows scored holding it: df but for a PartCorpus
	idf      []float64 // per vocab term, for the method
	targets  []query   // one per target row
	combined query     // the whole target set as one query (Sum only)
	tokens   int64
}

// query is one query of a plan. It holds 4 bytes a term for BM25's binary queries, whose weights
// are all 1, and 12 for TF-IDF's, since a large target set holds one query per row.
type query struct {
	terms []int32   // vocab indices, ascending (so terms ascend by bytes)
	qw    []float64 // query weight per term; nil when every weight is 1
}

// weight is the query weight of the query's i-th term.
func (qu *query) weight(i int) float64 {
	if qu.qw == nil {
		return 1
	}
	return qu.qw[i]
}

// factor is float64(qw·idf), the factor applied to the tf part of the i-th term: computed where it
// is used, which gives the same bits every time, rather than kept beside the weight.
func (qu *query) factor(i int, idf []float64) float64 {
	return float64(qu.weight(i) * idf[qu.terms[i]])
}

func newPlan(c Corpus, q []Query, p Params) (*plan, error) {
	rows := c.NumRows()
	if rows < 0 || uint64(rows) > math.MaxUint32+1 {
		return nil, fmt.Errorf("score: corpus has %d rows: %w", rows, ErrBadCorpus)
	}
	if len(q) > math.MaxInt32 {
		return nil, fmt.Errorf("score: %d target rows, at most %d allowed: %w", len(q), math.MaxInt32, ErrInvalidParams)
	}
	n, part := rows, PartCorpus(nil) // the rows the statistics are taken over, and the part scored
	if pc, ok := c.(PartCorpus); ok {
		if n, part = pc.WholeRows(), pc; n < rows {
			return nil, fmt.Errorf("score: a part of %d rows of a corpus of %d: %w", rows, n, ErrBadCorpus)
		}
	}
	pl := &plan{n: rows, targets: make([]query, len(q))}
	if p.Method == BM25 {
		pl.avg = c.AvgLen()
		if math.IsNaN(pl.avg) || math.IsInf(pl.avg, 0) || pl.avg < 0 {
			return nil, fmt.Errorf("score: corpus average length %v: %w", pl.avg, ErrBadCorpus)
		}
	}

	// The distinct terms alone are gathered: a large target set repeats most of its terms.
	index := map[string]int32{}
	for _, qq := range q {
		pl.tokens += int64(len(qq.Terms))
		for _, t := range qq.Terms {
			index[t] = 0
		}
	}
	all := make([]string, 0, len(index))
	for t := range index {
		all = append(all, t)
	}
	slices.Sort(all)
	clear(index)
	for _, t := range all {
		df := c.DF(t)
		if df < 0 || df > n {
			return nil, fmt.Errorf("score: df(%q) = %d with %d rows: %w", t, df, n, ErrBadCorpus)
		}
		if df == 0 {
			continue // no postings, and TF-IDF drops out-of-vocabulary terms
		}
		index[t] = int32(len(pl.vocab))
		pl.vocab = append(pl.vocab, t)
		pl.df = append(pl.df, df)
		pdf := df
		if part != nil {
			pdf = part.PartDF(t)
		}
		if pdf < 0 || pdf > df || pdf > rows {
			return nil, fmt.Errorf("score: df(%q) = %d in a part of %d rows, %d in the whole: %w", t, pdf, rows, df, ErrBadCorpus)
		}
		pl.partDF = append(pl.partDF, pdf)
		if p.Method == BM25 {
			pl.idf = append(pl.idf, bm25IDF(n, df))
		} else {
			pl.idf = append(pl.idf, sklearnWeighting.idfWeight(n, df))
		}
	}

	var ids []int32
	var counts []int
	var idf []float64
	for j, qq := range q {
		ids = ids[:0]
		for _, t := range qq.Terms {
			if k, ok := index[t]; ok {
				ids = append(ids, k)
			}
		}
		slices.Sort(ids)
		tq := &pl.targets[j]
		counts = counts[:0]
		uniq := ids[:0] // the distinct ids, written over the sorted ones
		for i, k := range ids {
			if i > 0 && ids[i-1] == k {
				counts[len(counts)-1]++
				continue
			}
			uniq = append(uniq, k)
			counts = append(counts, 1)
		}
		if len(uniq) > 0 {
			tq.terms = slices.Clone(uniq) // sized to fit, which appending would not be
		}
		if p.Method == TFIDF { // BM25's binary queries count a repeated target term once: weights 1, nil
			idf = idf[:0]
			for _, k := range tq.terms {
				idf = append(idf, pl.idf[k])
			}
			tq.qw = unitWeights(make([]float64, 0, len(counts)), counts, idf, sklearnWeighting)
		}
	}

	if p.Aggregate == Sum {
		w := make([]float64, len(pl.vocab))
		for j := range pl.targets {
			tq := &pl.targets[j]
			for i, k := range tq.terms {
				w[k] += tq.weight(i) // BM25: counts target rows holding the term
			}
		}
		cq := &pl.combined
		for k, x := range w {
			if x == 0 {
				continue // possible for TF-IDF only through underflow
			}
			if p.Method == TFIDF {
				x /= float64(len(q))
			}
			cq.terms = append(cq.terms, int32(k))
			cq.qw = append(cq.qw, x)
		}
	}
	return pl, nil
}
