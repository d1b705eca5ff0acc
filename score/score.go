package score

import (
	"context"
	"errors"
	"fmt"
	"math"
	"strings"
)

// Corpus is what scoring needs from an index.
type Corpus interface {
	NumRows() int
	AvgLen() float64         // mean analysed length (tokens after analysis) over all rows
	RowLen(row int) int      // analysed length of one row
	RowNorm(row int) float64 // l2 norm of the row's TF-IDF vector: raw tf × idf, idf = ln((1+N)/(1+df)) + 1 over the corpus
	DF(term string) int      // 0 if absent
	// Postings appends the postings of term (rows ascending, with term frequencies) to rows and tfs
	// (callers pass slices to reuse, truncated [:0]) and returns them.
	Postings(term string, rows, tfs []uint32) ([]uint32, []uint32, error)
}

// Errors reported by this package; test with errors.Is.
var (
	// ErrInvalidParams reports an unknown method or aggregate name or out-of-range parameters.
	ErrInvalidParams = errors.New("invalid scoring parameters")
	// ErrBadCorpus reports a Corpus whose answers contradict each other
	// (a posting beyond NumRows, df > N, a zero norm for a row holding a term, ...).
	ErrBadCorpus = errors.New("inconsistent corpus")
	// ErrRowRange reports an Explain row outside [0, NumRows).
	ErrRowRange = errors.New("row out of range")
)

// Method selects the relevance function.
type Method uint8

const (
	// BM25 is Okapi BM25 as given by Robertson and Zaragoza (2009),
	// "The Probabilistic Relevance Framework: BM25 and Beyond":
	// idf = ln(1 + (N − df + 0.5)/(df + 0.5)) and a term weight of
	// tf·(k1+1)/(tf + k1·(1 − b + b·len/avglen)) on the pool row.
	// Each target row is a binary query: a term repeated in it counts once.
	BM25 Method = iota
	// TFIDF is the cosine between l2-normalised TF-IDF vectors, weighted like
	// scikit-learn's TfidfVectorizer defaults (smooth_idf=True, sublinear_tf=False,
	// norm='l2'): raw tf × (ln((1+N)/(1+df)) + 1), with N and df taken from the pool
	// for both sides. Target terms absent from the pool are dropped before the
	// target vector is normalised, as the vectorizer's transform drops
	// out-of-vocabulary terms.
	TFIDF
)

var methodNames = [...]string{BM25: "bm25", TFIDF: "tfidf"}

func (m Method) String() string {
	if int(m) < len(methodNames) {
		return methodNames[m]
	}
	return fmt.Sprintf("Method(%d)", uint8(m))
}

// ParseMethod parses "bm25" or "tfidf", ignoring case.
func ParseMethod(s string) (Method, error) {
	for i, name := range methodNames {
		if strings.EqualFold(s, name) {
			return Method(i), nil
		}
	}
	return 0, fmt.Errorf("score: unknown method %q (want bm25 or tfidf): %w", s, ErrInvalidParams)
}

// Aggregate selects how the scores against several target rows combine into one.
type Aggregate uint8

const (
	// Sum scores each pool row against the whole target set as one query.
	// For BM25 a term's query weight is the number of target rows holding it,
	// which equals the sum over target rows of their binary-query BM25.
	// For TF-IDF the score is the mean over target rows of the cosine, computed
	// in one pass with query weight Σ_j t̂_j[t] / |T|.
	Sum Aggregate = iota
	// Max keeps, for each pool row, the best score against any single target row.
	Max
)

var aggregateNames = [...]string{Sum: "sum", Max: "max"}

func (a Aggregate) String() string {
	if int(a) < len(aggregateNames) {
		return aggregateNames[a]
	}
	return fmt.Sprintf("Aggregate(%d)", uint8(a))
}

// ParseAggregate parses "sum" or "max", ignoring case.
func ParseAggregate(s string) (Aggregate, error) {
	for i, name := range aggregateNames {
		if strings.EqualFold(s, name) {
			return Aggregate(i), nil
		}
	}
	return 0, fmt.Errorf("score: unknown aggregate %q (want sum or max): %w", s, ErrInvalidParams)
}

// Params configures scoring. K1 and B are used by BM25 only.
type Params struct {
	Method    Method
	Aggregate Aggregate
	K1, B     float64
}

// DefaultParams returns BM25 with Sum aggregation and k1 = 1.2, b = 0.75
// (common practice; Robertson and Zaragoza report good results for k1 in 1.2–2 and b near 0.75).
func DefaultParams() Params {
	return Params{Method: BM25, Aggregate: Sum, K1: 1.2, B: 0.75}
}

// Validate reports whether p names a known method and aggregate and has
// finite k1 ≥ 0 and 0 ≤ b ≤ 1.
func (p Params) Validate() error {
	switch {
	case int(p.Method) >= len(methodNames):
		return fmt.Errorf("score: %v: %w", p.Method, ErrInvalidParams)
	case int(p.Aggregate) >= len(aggregateNames):
		return fmt.Errorf("score: %v: %w", p.Aggregate, ErrInvalidParams)
	case math.IsNaN(p.K1) || math.IsInf(p.K1, 0) || p.K1 < 0:
		return fmt.Errorf("score: k1 = %v, want finite and >= 0: %w", p.K1, ErrInvalidParams)
	case math.IsNaN(p.B) || p.B < 0 || p.B > 1:
		return fmt.Errorf("score: b = %v, want 0 <= b <= 1: %w", p.B, ErrInvalidParams)
	}
	return nil
}

// Query is one analysed target row: its terms in text order, with repeats.
type Query struct {
	ID    string
	Terms []string
}

// Work is the work Score really did, for a FLOP ledger.
type Work struct {
	Postings     int64 // postings visited, over all passes
	QueryTerms   int64 // posting lists fetched, over all passes
	TargetTokens int64 // target tokens read while building the queries
	Passes       int64 // term-at-a-time passes over the index that touched at least one term
}

// Result holds one score per pool row.
type Result struct {
	Scores []float64 // one per pool row
	// Best is, per pool row, the index into the queries of the target row that
	// scored highest against it (ties go to the lowest index), or -1 if no target
	// row shares a term with it.
	Best []int32
	Work Work
}

// Score scores every pool row of c against the target rows q.
//
// Scoring is term-at-a-time into one accumulator per pool row. Query terms are
// processed in ascending byte order so that results are reproducible and
// Explain can repeat the same float operations. In Sum mode one pass scores the
// combined query and one pass per target row finds Best; in Max mode the
// per-target passes give both. ctx is checked before every posting list.
func Score(ctx context.Context, c Corpus, q []Query, p Params) (*Result, error) {
	if err := p.Validate(); err != nil {
		return nil, err
	}
	pl, err := newPlan(c, q, p)
	if err != nil {
		return nil, err
	}
	n := pl.n
	res := &Result{Scores: make([]float64, n), Best: make([]int32, n)}
	for i := range res.Best {
		res.Best[i] = -1
	}
	res.Work.TargetTokens = pl.tokens
	if len(pl.vocab) == 0 {
		return res, nil
	}
	s := &scorer{c: c, p: p, pl: pl, k1p1: p.K1 + 1, factor: make([]float64, n), work: &res.Work}
	for i := range s.factor {
		s.factor[i] = math.NaN()
	}

	bestScore := res.Scores
	if p.Aggregate == Sum {
		if _, err := s.pass(ctx, &pl.combined, res.Scores, nil, false); err != nil {
			return nil, err
		}
		bestScore = make([]float64, n)
	}
	acc := make([]float64, n)
	var touched []uint32
	for j := range pl.targets {
		touched, err = s.pass(ctx, &pl.targets[j], acc, touched[:0], true)
		if err != nil {
			return nil, err
		}
		for _, r := range touched {
			v := acc[r]
			if res.Best[r] < 0 || v > bestScore[r] {
				bestScore[r] = v
				res.Best[r] = int32(j)
			}
			acc[r] = 0
		}
	}
	return res, nil
}

// scorer holds what one Score call reuses across passes.
type scorer struct {
	c    Corpus
	p    Params
	pl   *plan
	k1p1 float64
	// factor caches per pool row the BM25 length normaliser k1·(1−b+b·len/avglen)
	// or the TF-IDF row norm; NaN means not yet fetched. Filling it lazily
	// asks the corpus only about rows that some query term reaches.
	factor []float64
	rows   []uint32
	tfs    []uint32
	work   *Work
}

// pass adds the contributions of query qu into acc. With track set it appends
// to touched every row whose accumulator was zero before a contribution, so
// the caller can visit and reset exactly those rows.
func (s *scorer) pass(ctx context.Context, qu *query, acc []float64, touched []uint32, track bool) ([]uint32, error) {
	if len(qu.terms) == 0 {
		return touched, nil
	}
	s.work.Passes++
	for i, t := range qu.terms {
		if err := ctx.Err(); err != nil {
			return touched, fmt.Errorf("score: %w", err)
		}
		term := s.pl.vocab[t]
		var err error
		s.rows, s.tfs, err = s.c.Postings(term, s.rows[:0], s.tfs[:0])
		if err != nil {
			return touched, fmt.Errorf("score: postings of %q: %w", term, err)
		}
		if len(s.rows) != len(s.tfs) {
			return touched, fmt.Errorf("score: postings of %q: %d rows but %d tfs: %w", term, len(s.rows), len(s.tfs), ErrBadCorpus)
		}
		s.work.QueryTerms++
		s.work.Postings += int64(len(s.rows))
		if s.p.Method == BM25 {
			touched, err = s.addBM25(acc, qu.qi[i], touched, track)
		} else {
			touched, err = s.addTFIDF(acc, qu.qi[i], touched, track)
		}
		if err != nil {
			return touched, fmt.Errorf("score: postings of %q: %w", term, err)
		}
	}
	return touched, nil
}

// addBM25 and addTFIDF are the inner loops; the float expressions must stay
// identical to those in Explain (bm25Part, tfidfPart, contribution).
func (s *scorer) addBM25(acc []float64, qi float64, touched []uint32, track bool) ([]uint32, error) {
	factor := s.factor[:len(acc)]
	tfs := s.tfs[:len(s.rows)]
	k1p1 := s.k1p1
	for i, r := range s.rows {
		if int(r) >= len(acc) {
			return touched, fmt.Errorf("row %d of %d: %w", r, len(acc), ErrBadCorpus)
		}
		k := factor[r]
		if k != k {
			var err error
			if k, err = rowFactor(s.c, s.p, s.pl.avg, int(r)); err != nil {
				return touched, err
			}
			factor[r] = k
		}
		if track && acc[r] == 0 {
			touched = append(touched, r)
		}
		acc[r] += contribution(qi, bm25Part(float64(tfs[i]), k1p1, k))
	}
	return touched, nil
}

func (s *scorer) addTFIDF(acc []float64, qi float64, touched []uint32, track bool) ([]uint32, error) {
	factor := s.factor[:len(acc)]
	tfs := s.tfs[:len(s.rows)]
	for i, r := range s.rows {
		if int(r) >= len(acc) {
			return touched, fmt.Errorf("row %d of %d: %w", r, len(acc), ErrBadCorpus)
		}
		nrm := factor[r]
		if nrm != nrm {
			var err error
			if nrm, err = rowFactor(s.c, s.p, s.pl.avg, int(r)); err != nil {
				return touched, err
			}
			factor[r] = nrm
		}
		if track && acc[r] == 0 {
			touched = append(touched, r)
		}
		acc[r] += contribution(qi, tfidfPart(float64(tfs[i]), nrm))
	}
	return touched, nil
}

// rowFactor returns the per-row quantity the tf part needs: the BM25 length
// normaliser or the TF-IDF row norm.
func rowFactor(c Corpus, p Params, avg float64, row int) (float64, error) {
	if p.Method == BM25 {
		l := c.RowLen(row)
		if l < 0 {
			return 0, fmt.Errorf("row %d has length %d: %w", row, l, ErrBadCorpus)
		}
		return bm25Norm(p.K1, p.B, float64(l), avg), nil
	}
	nrm := c.RowNorm(row)
	if !(nrm > 0) || math.IsInf(nrm, 0) {
		return 0, fmt.Errorf("row %d holds a term but has norm %v: %w", row, nrm, ErrBadCorpus)
	}
	return nrm, nil
}

// The explicit float64 conversions forbid fused multiply-adds, which the Go
// spec otherwise allows; they keep Score and Explain bit-identical on every
// architecture.

// bm25Norm is k1·(1 − b + b·len/avglen). An empty corpus (avglen 0) gets the
// neutral ratio 1.
func bm25Norm(k1, b, l, avg float64) float64 {
	ratio := 1.0
	if avg > 0 {
		ratio = l / avg
	}
	return k1 * float64(float64(1-b)+float64(b*ratio))
}

// bm25Part is the saturated term weight tf·(k1+1)/(tf + K).
func bm25Part(tf, k1p1, k float64) float64 {
	return float64(tf*k1p1) / float64(tf+k)
}

// tfidfPart is the pool row's raw tf divided by the row's TF-IDF norm.
func tfidfPart(tf, nrm float64) float64 {
	return tf / nrm
}

// contribution is one term's share of a score: (query weight·idf)·tf part.
func contribution(qi, part float64) float64 {
	return float64(qi * part)
}
