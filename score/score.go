package score

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"math"
	"runtime"
	"slices"
	"strings"
	"sync"
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

// A PartCorpus is one part of a larger corpus (one segment of an index set, say) scored with the
// whole's statistics: its NumRows rows are scored, DF and AvgLen are the whole's, WholeRows is the
// whole's row count for the idf, and PartDF counts this part's rows holding a term, for the work
// done. Scores are then to the bit those of the same rows scored with the whole, and the Work of
// the parts sums to the whole's (Passes and TargetTokens aside, which each part repeats).
type PartCorpus interface {
	WholeRows() int
	PartDF(term string) int
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

// Params configures scoring. K1 and B are used by BM25 only; Workers and
// CacheBytes change how fast Score runs, never what it returns.
type Params struct {
	Method    Method
	Aggregate Aggregate
	K1, B     float64
	// Workers is the number of goroutines running the per-target passes;
	// 0 means runtime.GOMAXPROCS(0).
	Workers int
	// CacheBytes bounds the memory Score spends on decoded postings. A
	// CursorCorpus is read chunk of pool rows by chunk, each list once, a
	// few chunks in flight (20 bytes a posting) within the bound; 0 means
	// DefaultSpanBytes. Another Corpus has the query terms' lists kept
	// (12 bytes a posting) so that each is read once; lists past the bound
	// are read again on every pass that needs them, the lists used by the
	// most target rows kept first; 0 means DefaultCacheBytes. A negative
	// value keeps nothing and reads every list again for every pass.
	CacheBytes int64
	// SkipBest, with Sum, leaves Result.Best nil instead of finding each
	// row's best target row: the one pass over the combined query is then
	// all the work, where Best needs one pass per target row.
	SkipBest bool
	// Progress, when set, is told the pool rows read for scoring as they are read and how many
	// there are, one call at a time (from goroutines other than Score's); only a CursorCorpus (an
	// index) reports.
	Progress func(rows, of int) `json:"-"`
}

// DefaultCacheBytes is the posting cache bound used when Params.CacheBytes is 0.
const DefaultCacheBytes = 512 << 20

// DefaultSpanBytes bounds the chunks in flight when Params.CacheBytes is 0
// and the corpus is a CursorCorpus. Chunks are sized for the cache
// (chunkPostings), far below it, unless the terms are very many.
const DefaultSpanBytes = 64 << 20

// DefaultParams returns BM25 with Sum aggregation, k1 = 1.2 (common practice; Robertson and
// Zaragoza report good results for k1 in 1.2–2) and b = 1, full length normalisation, rather
// than the textbook 0.75: the README's quality table over the shared splits chose it.
func DefaultParams() Params {
	return Params{Method: BM25, Aggregate: Sum, K1: 1.2, B: 1}
}

// MaxK1 bounds BM25's saturation: far past any useful value (0.5 to 3 are usual), and low enough
// that no score overflows.
const MaxK1 = 1000

// CheckK1B refuses a k1 outside [0, MaxK1] or a b outside [0, 1], the error starting with the
// parameter's name, as a command line's flag would. It is stricter than Validate, which asks only
// for a finite k1 and leaves a score that overflows to be refused where it is made: a command line
// is refused before any work.
func (p Params) CheckK1B() error {
	if !(p.K1 >= 0 && p.K1 <= MaxK1) {
		return fmt.Errorf("k1 %v: give 0 to %g (1.2 is usual)", p.K1, float64(MaxK1))
	}
	if !(p.B >= 0 && p.B <= 1) {
		return fmt.Errorf("b %v: must be between 0 and 1", p.B)
	}
	return nil
}

// Validate reports whether p names a known method and aggregate and has
// finite k1 ≥ 0, 0 ≤ b ≤ 1 and Workers ≥ 0.
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
	case p.Workers < 0:
		return fmt.Errorf("score: %d workers, want >= 0: %w", p.Workers, ErrInvalidParams)
	case p.SkipBest && p.Aggregate != Sum:
		return fmt.Errorf("score: SkipBest needs Sum aggregation, where Best costs extra: %w", ErrInvalidParams)
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
	Postings     int64 // postings accumulated into a score, over all passes
	QueryTerms   int64 // posting lists scored, over all passes
	TargetTokens int64 // target tokens read while building the queries
	Passes       int64 // term-at-a-time passes over the index that touched at least one term
	// PostingsFetched counts the postings decoded from the corpus: each
	// distinct query term once, plus again per pass for lists that did not
	// fit in Params.CacheBytes.
	PostingsFetched int64
}

// Result holds one score per pool row.
type Result struct {
	Scores []float64 // one per pool row
	// Best is, per pool row, the index into the queries of the target row that
	// scored highest against it (ties go to the lowest index), or -1 if no target
	// row shares a term with it; nil with Params.SkipBest.
	Best []int32
	Work Work
}

// Score scores every pool row of c against the target rows q.
//
// Scoring is term-at-a-time into one accumulator per pool row. Query terms are
// processed in ascending byte order so that results are reproducible and
// Explain can repeat the same float operations. In Sum mode one pass scores the
// combined query and one pass per target row finds Best; in Max mode the
// per-target passes give both.
//
// The per-target passes (and the combined pass) are turned around into one
// walk over the pool rows that keeps an accumulator per target row: for a
// CursorCorpus chunk by chunk through cursors (streamPasses), taking the target
// rows 4,096 at a time, so that memory grows with neither the pool nor the
// target set; for another Corpus, when every list fits the cache and there
// are at most 4,096 target rows (rowPasses). The sums are the same, term by
// term, so the results are too.
//
// Each distinct query term's posting list is read from c once and kept, with
// its per-posting tf part, within Params.CacheBytes. The per-target passes run
// on Params.Workers goroutines, each over a contiguous block of target rows;
// the blocks are merged in target order, so the Result does not depend on the
// number of workers. c is only ever used by one goroutine at a time. ctx is
// checked before every posting list read and every pass.
func Score(ctx context.Context, c Corpus, q []Query, p Params) (*Result, error) {
	return scoreBlocks(ctx, c, q, p, maxRowTargets, 0)
}

// scoreBlocks is Score with the streamed scorer taking up to block target rows at a time and,
// unless chunkRows is 0, chunks of chunkRows pool rows.
func scoreBlocks(ctx context.Context, c Corpus, q []Query, p Params, block, chunkRows int) (*Result, error) {
	if err := p.Validate(); err != nil {
		return nil, err
	}
	if err := ctx.Err(); err != nil {
		return nil, fmt.Errorf("score: %w", err)
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
	s := &scorer{c: c, p: p, pl: pl, k1p1: p.K1 + 1, chunkRows: chunkRows}
	rowWise := !p.SkipBest && len(q) <= block
	// The row-at-a-time scorers find each row's best target row at once, so with Sum and one block
	// of target rows they keep no best score per row (nil); with Max the best score is the score.
	var rowBest []float64
	if p.Aggregate == Max {
		rowBest = res.Scores
	}
	if cc, ok := c.(CursorCorpus); ok && p.SkipBest && p.CacheBytes >= 0 {
		// The combined query alone, row by row: an empty block of target rows. The sums are those
		// of combinedPass (each row's terms in ascending order), and so is the work counted.
		if err := s.streamPasses(ctx, cc, res, nil, 0, 0); err != nil {
			return nil, err
		}
		res.Best = nil
		return res, nil
	}
	if cc, ok := c.(CursorCorpus); ok && p.CacheBytes >= 0 {
		// Target rows are taken a block at a time, each block one more read of its terms' lists,
		// so that memory grows with neither the target set nor, past a chunk, the pool.
		if !rowWise && rowBest == nil {
			rowBest = make([]float64, n)
		}
		for lo := 0; lo < len(q); lo += block {
			if err := s.streamPasses(ctx, cc, res, rowBest, lo, min(len(q), lo+block)); err != nil {
				return nil, err
			}
		}
		return res, nil
	}
	s.factor = make([]float64, n)
	if err := s.prepare(ctx); err != nil {
		return nil, err
	}
	res.Work.PostingsFetched = s.fetched

	if s.allCached && rowWise {
		if err := s.rowPasses(ctx, res, rowBest); err != nil {
			return nil, err
		}
		return res, nil
	}
	bestScore := res.Scores
	if p.Aggregate == Sum {
		if err := s.combinedPass(ctx, res.Scores, &res.Work); err != nil {
			return nil, err
		}
		if p.SkipBest {
			res.Best = nil
			return res, nil
		}
		bestScore = make([]float64, n)
	}
	if err := s.targetPasses(ctx, res, bestScore); err != nil {
		return nil, err
	}
	return res, nil
}

// scorer holds what one Score call shares across passes and workers.
type scorer struct {
	c    Corpus
	cmu  sync.Mutex // serialises calls into c from the workers
	p    Params
	pl   *plan
	k1p1 float64
	// factor holds per pool row the BM25 length normaliser
	// k1·(1−b+b·len/avglen) or the TF-IDF row norm, for the rows some query
	// term reaches; prepare fills it before any worker starts, and it is
	// read-only afterwards.
	factor []float64
	// cache holds per vocab term its postings and tf parts, or nil rows when
	// the term did not fit the bound and must be read again.
	cache     []cachedList
	allCached bool
	fetched   int64
	chunkRows int // rows a chunk of streamPasses takes; 0 lets chunkEnds choose (tests set it)
}

type cachedList struct {
	rows   []uint32
	parts  []float64
	cached bool
}

// prepare reads every distinct query term once: it validates the postings,
// fills factor for every row they reach and keeps, within the cache bound, the
// rows and tf parts. Terms used by more target rows are kept first.
func (s *scorer) prepare(ctx context.Context) error {
	pl := s.pl
	uses := make([]int32, len(pl.vocab))
	for j := range pl.targets {
		for _, k := range pl.targets[j].terms {
			uses[k]++
		}
	}
	order := make([]int32, len(pl.vocab))
	for k := range order {
		order[k] = int32(k)
	}
	slices.SortStableFunc(order, func(a, b int32) int { return cmp.Compare(uses[b], uses[a]) })

	budget := s.p.CacheBytes
	if budget == 0 {
		budget = DefaultCacheBytes
	}
	for i := range s.factor {
		s.factor[i] = math.NaN()
	}
	s.cache = make([]cachedList, len(pl.vocab))
	s.allCached = true
	var rows, tfs []uint32
	for _, k := range order {
		if err := ctx.Err(); err != nil {
			return fmt.Errorf("score: %w", err)
		}
		term := pl.vocab[k]
		var err error
		rows, tfs, err = s.fetch(term, rows[:0], tfs[:0])
		if err != nil {
			return err
		}
		s.fetched += int64(len(rows))
		for _, r := range rows {
			if s.factor[r] == s.factor[r] {
				continue
			}
			f, err := rowFactor(s.c, s.p, pl.avg, int(r))
			if err != nil {
				return fmt.Errorf("score: postings of %q: %w", term, err)
			}
			s.factor[r] = f
		}
		size := int64(len(rows)) * (4 + 8)
		if size > budget {
			s.allCached = false
			continue
		}
		budget -= size
		e := &s.cache[k]
		e.rows = slices.Clone(rows)
		e.parts = s.tfParts(make([]float64, len(rows)), rows, tfs)
		e.cached = true
	}
	return nil
}

// fetch reads and checks the postings of term. The workers call it under cmu
// because Corpus need not be safe for concurrent use.
func (s *scorer) fetch(term string, rows, tfs []uint32) ([]uint32, []uint32, error) {
	rows, tfs, err := s.c.Postings(term, rows, tfs)
	if err != nil {
		return rows, tfs, fmt.Errorf("score: postings of %q: %w", term, err)
	}
	if len(rows) != len(tfs) {
		return rows, tfs, fmt.Errorf("score: postings of %q: %d rows but %d tfs: %w", term, len(rows), len(tfs), ErrBadCorpus)
	}
	for _, r := range rows {
		if int(r) >= s.pl.n {
			return rows, tfs, fmt.Errorf("score: postings of %q: row %d of %d: %w", term, r, s.pl.n, ErrBadCorpus)
		}
	}
	return rows, tfs, nil
}

// tfParts fills parts with the pool-row side of the term weight; the float
// expressions must stay identical to those in Explain (bm25Part, tfidfPart).
func (s *scorer) tfParts(parts []float64, rows, tfs []uint32) []float64 {
	parts = parts[:len(rows)]
	tfs = tfs[:len(rows)]
	factor := s.factor
	if s.p.Method == BM25 {
		k1p1 := s.k1p1
		for i, r := range rows {
			parts[i] = bm25Part(float64(tfs[i]), k1p1, factor[r])
		}
	} else {
		for i, r := range rows {
			parts[i] = tfidfPart(float64(tfs[i]), factor[r])
		}
	}
	return parts
}

// chunkRows is how many pool rows the per-target passes cover at a time when
// every list is cached: the accumulator of a chunk (32 KiB) stays in the L1
// cache while all the targets of a worker run over it.
const chunkRows = 4096

// negZero marks an accumulator that no posting has reached in the current
// pass. Adding a contribution x ≥ 0 to it gives x exactly, as adding to +0
// does, so scores are unchanged; a reached row holds +0 or more even when its
// contributions underflow to zero.
var negZero = math.Copysign(0, -1)

// targetPasses runs one pass per target row on up to Params.Workers
// goroutines and leaves the best score per pool row in bestScore and its
// target in res.Best.
func (s *scorer) targetPasses(ctx context.Context, res *Result, bestScore []float64) error {
	nt := len(s.pl.targets)
	nw := s.p.Workers
	if nw == 0 {
		nw = runtime.GOMAXPROCS(0)
	}
	nw = max(1, min(nw, nt))
	n := s.pl.n
	chunk := n
	if s.allCached {
		chunk = chunkRows
	}
	ws := make([]*worker, nw)
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	var wg sync.WaitGroup
	for i := range ws {
		w := &worker{s: s, acc: make([]float64, n), lo: i * nt / nw, hi: (i + 1) * nt / nw, chunk: chunk}
		if i == 0 {
			// The first block writes straight into the result.
			w.bestScore, w.best = bestScore, res.Best
		} else {
			w.bestScore, w.best = make([]float64, n), make([]int32, n)
			for r := range w.best {
				w.best[r] = -1
			}
		}
		ws[i] = w
		wg.Go(func() {
			if w.err = w.run(ctx); w.err != nil {
				cancel()
			}
		})
	}
	wg.Wait()
	for _, w := range ws {
		if w.err != nil && !errors.Is(w.err, context.Canceled) {
			return w.err // a corpus error rather than the cancellation it caused
		}
	}
	for _, w := range ws {
		if w.err != nil {
			return w.err
		}
	}
	// Blocks hold ascending target ranges, so taking a later block's score
	// only when strictly higher keeps ties at the lowest target index.
	for _, w := range ws[1:] {
		for r, b := range w.best {
			if b >= 0 && (res.Best[r] < 0 || w.bestScore[r] > bestScore[r]) {
				bestScore[r] = w.bestScore[r]
				res.Best[r] = b
			}
		}
	}
	for _, w := range ws {
		w.work.add(&res.Work)
	}
	return nil
}

// worker is one goroutine's state: its accumulator, its best score and target
// per pool row over the block [lo, hi) of target rows, and its share of Work.
type worker struct {
	s         *scorer
	acc       []float64
	touched   []uint32
	bestScore []float64
	best      []int32
	lo, hi    int
	chunk     int
	seg       []segment // per vocab term, its postings in the current chunk
	rows, tfs []uint32  // scratch for lists read again
	parts     []float64 // scratch for lists read again
	work      Work
	err       error
}

type segment struct{ lo, hi int32 }

func (w *Work) add(to *Work) {
	to.Postings += w.Postings
	to.QueryTerms += w.QueryTerms
	to.Passes += w.Passes
	to.PostingsFetched += w.PostingsFetched
}

// run scores the worker's targets chunk by chunk of pool rows. Within a
// chunk every target runs in index order and every row sees its terms in the
// same order as a whole-pool pass would, so chunking changes no result.
func (w *worker) run(ctx context.Context) error {
	s := w.s
	targets := s.pl.targets[w.lo:w.hi]
	var terms []int32 // the block's vocabulary
	if s.allCached {
		mark := make([]bool, len(s.pl.vocab))
		for j := range targets {
			for _, k := range targets[j].terms {
				if !mark[k] {
					mark[k] = true
					terms = append(terms, k)
				}
			}
		}
		w.seg = make([]segment, len(s.pl.vocab))
	}
	for j := range targets {
		if len(targets[j].terms) > 0 {
			w.work.Passes++
			w.work.QueryTerms += int64(len(targets[j].terms))
		}
	}
	acc, best, bestScore := w.acc, w.best, w.bestScore
	for i := range acc {
		acc[i] = negZero
	}
	n := s.pl.n
	for c0 := 0; c0 < n; c0 += w.chunk {
		c1 := min(n, c0+w.chunk)
		for _, k := range terms {
			rows := s.cache[k].rows
			sg := &w.seg[k]
			sg.lo = sg.hi
			i, _ := slices.BinarySearch(rows[sg.lo:], uint32(c1))
			sg.hi = sg.lo + int32(i)
		}
		for jj := range targets {
			qu := &targets[jj]
			j := w.lo + jj
			if len(qu.terms) == 0 {
				continue
			}
			if err := ctx.Err(); err != nil {
				return fmt.Errorf("score: %w", err)
			}
			var total int
			if s.allCached {
				for _, k := range qu.terms {
					total += int(w.seg[k].hi - w.seg[k].lo)
				}
			}
			// A pass reaching many of the chunk's rows scans the chunk
			// afterwards; a sparse one records the rows it reaches.
			dense := 4*total >= c1-c0
			touched := w.touched[:0]
			for i, k := range qu.terms {
				rows, parts, err := w.list(ctx, k)
				if err != nil {
					return err
				}
				if s.allCached {
					sg := w.seg[k]
					rows, parts = rows[sg.lo:sg.hi], parts[sg.lo:sg.hi]
				}
				w.work.Postings += int64(len(rows))
				if dense {
					accumulate(acc, rows, parts, qu.factor(i, s.pl.idf))
				} else {
					touched = accumulateTrack(acc, rows, parts, qu.factor(i, s.pl.idf), touched)
				}
			}
			if dense {
				a, bs, b := acc[c0:c1], bestScore[c0:c1], best[c0:c1]
				for r, v := range a {
					if math.Signbit(v) {
						continue
					}
					if b[r] < 0 || v > bs[r] {
						bs[r] = v
						b[r] = int32(j)
					}
					a[r] = negZero
				}
				continue
			}
			for _, r := range touched {
				v := acc[r]
				if math.Signbit(v) {
					continue // a repeat: rows whose contributions underflow to 0 are recorded again
				}
				if best[r] < 0 || v > bestScore[r] {
					bestScore[r] = v
					best[r] = int32(j)
				}
				acc[r] = negZero
			}
			w.touched = touched
		}
	}
	return nil
}

// list returns the rows and tf parts of vocab term k, from the cache or read
// again from the corpus.
func (w *worker) list(ctx context.Context, k int32) ([]uint32, []float64, error) {
	s := w.s
	if e := &s.cache[k]; e.cached {
		return e.rows, e.parts, nil
	}
	if err := ctx.Err(); err != nil {
		return nil, nil, fmt.Errorf("score: %w", err)
	}
	var err error
	s.cmu.Lock()
	w.rows, w.tfs, err = s.fetch(s.pl.vocab[k], w.rows[:0], w.tfs[:0])
	s.cmu.Unlock()
	if err != nil {
		return nil, nil, err
	}
	w.work.PostingsFetched += int64(len(w.rows))
	w.parts = s.tfParts(slices.Grow(w.parts[:0], len(w.rows)), w.rows, w.tfs)
	return w.rows, w.parts, nil
}

// combinedPass adds the combined query's contributions into acc (Sum only).
func (s *scorer) combinedPass(ctx context.Context, acc []float64, work *Work) error {
	qu := &s.pl.combined
	if len(qu.terms) == 0 {
		return nil
	}
	w := worker{s: s}
	work.Passes++
	for i, k := range qu.terms {
		rows, parts, err := w.list(ctx, k)
		if err != nil {
			return err
		}
		work.QueryTerms++
		work.Postings += int64(len(rows))
		accumulate(acc, rows, parts, qu.factor(i, s.pl.idf))
	}
	work.PostingsFetched += w.work.PostingsFetched
	return nil
}

// accumulate is the inner loop; the float expression must stay identical to
// Explain's (contribution).
func accumulate(acc []float64, rows []uint32, parts []float64, qi float64) {
	parts = parts[:len(rows)]
	for i, r := range rows {
		acc[r] += contribution(qi, parts[i])
	}
}

func accumulateTrack(acc []float64, rows []uint32, parts []float64, qi float64, touched []uint32) []uint32 {
	parts = parts[:len(rows)]
	for i, r := range rows {
		a := acc[r]
		if a == 0 {
			touched = append(touched, r)
		}
		acc[r] = a + contribution(qi, parts[i])
	}
	return touched
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
