package score

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sync"
	"sync/atomic"
)

// rowBlock is how many pool rows a row-at-a-time worker turns around at once:
// their query terms, with tf parts, take about 12 bytes × rows × terms per
// row, which at a few dozen terms a row stays within the L2 cache.
const rowBlock = 1024

// maxRowTargets bounds the target rows the row-at-a-time scorer takes on:
// it scans one accumulator per target row for every pool row, which pays
// while they stay in the cache and the per-target passes do the same work.
const maxRowTargets = 4096

// holders is the target side of the row-at-a-time scorer: per vocab term, the
// target rows holding it (ascending) with their factor qi.
type holders struct {
	off []int32 // term k's holders are t[off[k]:off[k+1]]
	t   []int32
	qi  []float64
	// umax is per term the largest qi of its holders: qi·part bounds any
	// target row's contribution from the term.
	umax []float64
	// same reports that every holder of a term has the same qi (BM25's binary
	// queries), so one contribution per posting serves them all.
	same bool
}

func newHolders(pl *plan, method Method) *holders {
	h := &holders{off: make([]int32, len(pl.vocab)+1), same: method == BM25}
	for j := range pl.targets {
		for _, k := range pl.targets[j].terms {
			h.off[k+1]++
		}
	}
	for k := range pl.vocab {
		h.off[k+1] += h.off[k]
	}
	n := h.off[len(pl.vocab)]
	h.t, h.qi, h.umax = make([]int32, n), make([]float64, n), make([]float64, len(pl.vocab))
	next := slices.Clone(h.off[:len(pl.vocab)])
	for j := range pl.targets {
		qu := &pl.targets[j]
		for i, k := range qu.terms {
			h.t[next[k]], h.qi[next[k]] = int32(j), qu.qi[i]
			h.umax[k] = max(h.umax[k], qu.qi[i])
			next[k]++
		}
	}
	return h
}

// rowPasses gives the same results as the per-target passes (and, in Sum
// mode, the combined pass) but turns the work around: for each pool row it
// walks the row's query terms in ascending order and adds each term's
// contribution to one accumulator per target row holding it. Every target's
// score is thus the same sum, in the same order, as a per-target pass
// computes, so the results are bit-identical; the accumulators, one per
// target row, stay in the L1 cache, where a per-target pass scatters over the
// whole pool. It needs every posting list cached (scorer.allCached).
//
// Workers take blocks of rowBlock pool rows in turn and write only their
// block's rows, so the Result does not depend on the number of workers.
func (s *scorer) rowPasses(ctx context.Context, res *Result, bestScore []float64) error {
	pl := s.pl
	h := newHolders(pl, s.p.Method)
	for j := range pl.targets {
		if len(pl.targets[j].terms) > 0 {
			res.Work.Passes++
			res.Work.QueryTerms += int64(len(pl.targets[j].terms))
		}
	}
	for k := range pl.vocab {
		res.Work.Postings += int64(h.off[k+1]-h.off[k]) * int64(len(s.cache[k].rows))
	}
	// combined[k] is the combined query's factor for vocab term k (Sum only);
	// NaN marks a term the combined query lacks.
	var combined []float64
	if s.p.Aggregate == Sum {
		combined = make([]float64, len(pl.vocab))
		for k := range combined {
			combined[k] = math.NaN()
		}
		cq := &pl.combined
		for i, k := range cq.terms {
			combined[k] = cq.qi[i]
		}
		res.Work.Passes++
		res.Work.QueryTerms += int64(len(cq.terms))
		for _, k := range cq.terms {
			res.Work.Postings += int64(len(s.cache[k].rows))
		}
	}

	nw := s.p.Workers
	if nw == 0 {
		nw = runtime.GOMAXPROCS(0)
	}
	n := pl.n
	// Workers claim spans of whole blocks; within a span each term's cursor
	// only moves forward, so finding a block's postings costs one binary
	// search per term and span. Eight spans a worker even out the load.
	blocks := (n + rowBlock - 1) / rowBlock
	span := max(1, blocks/(8*max(1, nw))) * rowBlock
	spans := (n + span - 1) / span
	nw = max(1, min(nw, spans))
	var next atomic.Int64
	var failed atomic.Bool
	errs := make([]error, nw)
	var wg sync.WaitGroup
	for i := range nw {
		wg.Go(func() {
			w := newRowWorker(s, h, combined)
			for !failed.Load() {
				sp := int(next.Add(1) - 1)
				if sp >= spans {
					return
				}
				lo := sp * span
				w.seek(lo)
				for b := lo; b < min(n, lo+span); b += rowBlock {
					if err := ctx.Err(); err != nil {
						errs[i] = fmt.Errorf("score: %w", err)
						failed.Store(true)
						return
					}
					w.block(b, min(n, b+rowBlock), res, bestScore)
				}
			}
		})
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	return nil
}

// rowWorker is one goroutine's scratch space for rowPasses.
type rowWorker struct {
	s        *scorer
	h        *holders
	combined []float64
	acc      []float64 // per target row; negZero when not reached by the current pool row
	cur      []int32   // per vocab term, its first posting at or after the current block
	count    []int32   // per pool row of the block, then where its entries end
	terms    []int32   // the block's (row, term) pairs, grouped by row, terms ascending
	parts    []float64
}

func newRowWorker(s *scorer, h *holders, combined []float64) *rowWorker {
	w := &rowWorker{s: s, h: h, combined: combined, acc: make([]float64, len(s.pl.targets)),
		cur: make([]int32, len(s.pl.vocab)), count: make([]int32, rowBlock+1)}
	for i := range w.acc {
		w.acc[i] = negZero
	}
	return w
}

// seek places every term's cursor at its first posting at or after row lo.
func (w *rowWorker) seek(lo int) {
	for k := range w.cur {
		i, _ := slices.BinarySearch(w.s.cache[k].rows, uint32(lo))
		w.cur[k] = int32(i)
	}
}

// block scores pool rows [lo, hi), which must follow the rows of the
// previous block or seek.
func (w *rowWorker) block(lo, hi int, res *Result, bestScore []float64) {
	s := w.s
	count := w.count[:hi-lo+1]
	clear(count)
	for k := range w.cur {
		rows := s.cache[k].rows
		for i := w.cur[k]; int(i) < len(rows) && rows[i] < uint32(hi); i++ {
			count[rows[i]-uint32(lo)+1]++
		}
	}
	for i := 1; i < len(count); i++ {
		count[i] += count[i-1]
	}
	total := int(count[len(count)-1])
	w.terms = slices.Grow(w.terms[:0], total)[:total]
	w.parts = slices.Grow(w.parts[:0], total)[:total]
	for k := range w.cur {
		rows, parts := s.cache[k].rows, s.cache[k].parts
		i := w.cur[k]
		for ; int(i) < len(rows) && rows[i] < uint32(hi); i++ {
			r := rows[i] - uint32(lo)
			at := count[r]
			w.terms[at], w.parts[at] = int32(k), parts[i]
			count[r] = at + 1
		}
		w.cur[k] = i
	}
	// count[r] is now the end of row r's entries, and the start of row r+1's.
	start := int32(0)
	for r := lo; r < hi; r++ {
		end := count[r-lo]
		w.row(r, w.terms[start:end], w.parts[start:end], res, bestScore)
		start = end
	}
}

// row scores pool row r, whose query terms (ascending) and tf parts are given.
func (w *rowWorker) row(r int, terms []int32, parts []float64, res *Result, bestScore []float64) {
	if len(terms) == 0 {
		return
	}
	h, acc := w.h, w.acc
	parts = parts[:len(terms)]
	var sum float64
	for i, k := range terms {
		part := parts[i]
		if w.combined != nil {
			if c := w.combined[k]; c == c {
				sum += contribution(c, part)
			}
		}
		lo, hi := h.off[k], h.off[k+1]
		ts := h.t[lo:hi]
		if h.same {
			x := contribution(h.qi[lo], part)
			for _, t := range ts {
				acc[t] += x
			}
			continue
		}
		qi := h.qi[lo:hi]
		qi = qi[:len(ts)]
		for i, t := range ts {
			acc[t] += contribution(qi[i], part)
		}
	}
	// Unreached accumulators hold -0, reached ones +0 or more; ties go to
	// the lowest target index.
	best, bv := int32(-1), 0.0
	for t, v := range acc {
		if !math.Signbit(v) && (best < 0 || v > bv) {
			best, bv = int32(t), v
		}
		acc[t] = negZero
	}
	res.Best[r] = best
	bestScore[r] = bv
	if w.combined != nil {
		res.Scores[r] = sum
	}
}
