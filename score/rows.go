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
// target rows of a block [lo, hi) holding it (ascending, numbered from lo)
// with their factor qi.
type holders struct {
	lo, hi int
	off    []int32 // term k's holders are t[off[k]:off[k+1]]
	t      []int32
	qi     []float64
	// same reports that every holder of a term has the same qi (BM25's binary
	// queries), so one contribution per posting serves them all.
	same bool
}

func newHolders(pl *plan, method Method, lo, hi int) *holders {
	h := &holders{lo: lo, hi: hi, off: make([]int32, len(pl.vocab)+1), same: method == BM25}
	for j := lo; j < hi; j++ {
		for _, k := range pl.targets[j].terms {
			h.off[k+1]++
		}
	}
	for k := range pl.vocab {
		h.off[k+1] += h.off[k]
	}
	n := h.off[len(pl.vocab)]
	h.t, h.qi = make([]int32, n), make([]float64, n)
	next := slices.Clone(h.off[:len(pl.vocab)])
	for j := lo; j < hi; j++ {
		qu := &pl.targets[j]
		for i, k := range qu.terms {
			h.t[next[k]], h.qi[next[k]] = int32(j-lo), qu.factor(i, pl.idf)
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
	h, combined := s.rowSetup(&res.Work, 0, len(s.pl.targets), func(k int) int64 { return int64(len(s.cache[k].rows)) })
	lists := func(k int32) ([]uint32, []float64) { return s.cache[k].rows, s.cache[k].parts }
	return s.runBlocks(ctx, 0, s.pl.n, lists, h, combined, res, bestScore)
}

// rowSetup builds the target side of the row-at-a-time scorer for the target
// rows [lo, hi) and counts its work as the per-target passes would do it: per
// term, its list length (df) times the target rows holding it. The combined
// query (Sum) goes with the first block.
func (s *scorer) rowSetup(work *Work, lo, hi int, df func(k int) int64) (*holders, []float64) {
	pl := s.pl
	h := newHolders(pl, s.p.Method, lo, hi)
	for j := lo; j < hi; j++ {
		if len(pl.targets[j].terms) > 0 {
			work.Passes++
			work.QueryTerms += int64(len(pl.targets[j].terms))
		}
	}
	for k := range pl.vocab {
		work.Postings += int64(h.off[k+1]-h.off[k]) * df(k)
	}
	// combined[k] is the combined query's factor for vocab term k (Sum only);
	// NaN marks a term the combined query lacks.
	var combined []float64
	if s.p.Aggregate == Sum && lo == 0 {
		combined = make([]float64, len(pl.vocab))
		for k := range combined {
			combined[k] = math.NaN()
		}
		cq := &pl.combined
		for i, k := range cq.terms {
			combined[k] = cq.factor(i, pl.idf)
		}
		work.Passes++
		work.QueryTerms += int64(len(cq.terms))
		for _, k := range cq.terms {
			work.Postings += df(int(k))
		}
	}
	return h, combined
}

// runBlocks scores pool rows [lo, hi), lo a multiple of rowBlock, on the
// workers; lists gives each vocab term's postings and tf parts over at least
// those rows, rows ascending.
func (s *scorer) runBlocks(ctx context.Context, lo, hi int, lists func(k int32) ([]uint32, []float64), h *holders, combined []float64, res *Result, bestScore []float64) error {
	nw := s.p.Workers
	if nw == 0 {
		nw = runtime.GOMAXPROCS(0)
	}
	segs, segOff := blockSegments(lo, hi, len(s.pl.vocab), lists)
	blocks := len(segOff) - 1
	nw = max(1, min(nw, blocks))
	var next atomic.Int64
	var failed atomic.Bool
	errs := make([]error, nw)
	var wg sync.WaitGroup
	for i := range nw {
		wg.Go(func() {
			w := newRowWorker(h, combined, lists)
			for !failed.Load() {
				b := int(next.Add(1) - 1)
				if b >= blocks {
					return
				}
				if err := ctx.Err(); err != nil {
					errs[i] = fmt.Errorf("score: %w", err)
					failed.Store(true)
					return
				}
				b0 := lo + b*rowBlock
				w.block(b0, min(hi, b0+rowBlock), segs[segOff[b]:segOff[b+1]], res, bestScore)
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

// rowSegment is the part of vocab term k's postings, [a, b), that falls in
// one block of rows.
type rowSegment struct{ k, a, b int32 }

// blockSegments cuts the posting lists of rows [lo, hi) at the row blocks:
// segs holds, block after block and within a block in ascending term order,
// the segments of the lists, block b's being segs[off[b]:off[b+1]]. One pass
// over the postings finds them, where looking each term up in each block
// would touch every list once a block.
func blockSegments(lo, hi, nterms int, lists func(k int32) ([]uint32, []float64)) (segs []rowSegment, off []int32) {
	blocks := (hi - lo + rowBlock - 1) / rowBlock
	off = make([]int32, blocks+1)
	for k := range nterms {
		rows, _ := lists(int32(k))
		prev := -1
		for _, r := range rows {
			if b := (int(r) - lo) / rowBlock; b != prev {
				off[b+1]++
				prev = b
			}
		}
	}
	for b := range blocks {
		off[b+1] += off[b]
	}
	segs = make([]rowSegment, off[blocks])
	next := slices.Clone(off[:blocks])
	for k := range nterms {
		rows, _ := lists(int32(k))
		for a := 0; a < len(rows); {
			b := (int(rows[a]) - lo) / rowBlock
			end := a + 1
			for end < len(rows) && (int(rows[end])-lo)/rowBlock == b {
				end++
			}
			segs[next[b]] = rowSegment{int32(k), int32(a), int32(end)}
			next[b]++
			a = end
		}
	}
	return segs, off
}

// rowWorker is one goroutine's scratch space for rowPasses.
type rowWorker struct {
	h        *holders
	combined []float64
	lists    func(k int32) ([]uint32, []float64)
	acc      []float64 // per target row; negZero when not reached by the current pool row
	count    []int32   // per pool row of the block, then where its entries end
	terms    []int32   // the block's (row, term) pairs, grouped by row, terms ascending
	parts    []float64
}

func newRowWorker(h *holders, combined []float64, lists func(k int32) ([]uint32, []float64)) *rowWorker {
	w := &rowWorker{h: h, combined: combined, lists: lists, acc: make([]float64, h.hi-h.lo),
		count: make([]int32, rowBlock+1)}
	for i := range w.acc {
		w.acc[i] = negZero
	}
	return w
}

// block scores pool rows [lo, hi), whose postings segs holds.
func (w *rowWorker) block(lo, hi int, segs []rowSegment, res *Result, bestScore []float64) {
	count := w.count[:hi-lo+1]
	clear(count)
	for _, sg := range segs {
		rows, _ := w.lists(sg.k)
		for _, r := range rows[sg.a:sg.b] {
			count[r-uint32(lo)+1]++
		}
	}
	for i := 1; i < len(count); i++ {
		count[i] += count[i-1]
	}
	total := int(count[len(count)-1])
	w.terms = slices.Grow(w.terms[:0], total)[:total]
	w.parts = slices.Grow(w.parts[:0], total)[:total]
	for _, sg := range segs {
		rows, parts := w.lists(sg.k)
		rows, parts = rows[sg.a:sg.b], parts[sg.a:sg.b]
		parts = parts[:len(rows)]
		for i, r := range rows {
			at := count[r-uint32(lo)]
			w.terms[at], w.parts[at] = sg.k, parts[i]
			count[r-uint32(lo)] = at + 1
		}
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
	reached := 0 // target rows reached, once for each of the row's terms holding them
	for i, k := range terms {
		part := parts[i]
		if w.combined != nil {
			if c := w.combined[k]; c == c {
				sum += contribution(c, part)
			}
		}
		lo, hi := h.off[k], h.off[k+1]
		ts := h.t[lo:hi]
		reached += len(ts)
		if len(ts) == 0 {
			continue // read for the combined query alone: no target row of the block holds it
		}
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
	// the lowest target index, within the block and, blocks coming in
	// ascending order and a later one winning only when strictly higher,
	// across them.
	best, bv := int32(-1), 0.0
	if reached <= len(acc)/4 {
		// Few target rows reached: looking at theirs alone (in any order, and a row reached
		// through several terms more than once) beats a scan of every accumulator; the lowest
		// index is kept among equals.
		for _, k := range terms {
			for _, t := range h.t[h.off[k]:h.off[k+1]] {
				if v := acc[t]; !math.Signbit(v) && (best < 0 || v > bv || v == bv && t < best) {
					best, bv = t, v
				}
				acc[t] = negZero
			}
		}
	} else {
		for t, v := range acc {
			if !math.Signbit(v) && (best < 0 || v > bv) {
				best, bv = int32(t), v
			}
			acc[t] = negZero
		}
	}
	switch {
	case best < 0:
	case bestScore == nil: // Sum with one block: no other block to compare with
		res.Best[r] = best + int32(h.lo)
	case res.Best[r] < 0 || bv > bestScore[r]:
		res.Best[r], bestScore[r] = best+int32(h.lo), bv
	}
	if w.combined != nil {
		res.Scores[r] = sum
	}
}
