package score

import (
	"context"
	"fmt"
	"math"
)

// A PostingCursor reads one term's postings in row order, a stretch at a time.
type PostingCursor interface {
	// Next appends the postings of rows below end that earlier calls have not
	// handed out to rows and tfs (rows ascending, with term frequencies) and
	// returns them.
	Next(end int, rows, tfs []uint32) ([]uint32, []uint32, error)
}

// A CursorCorpus can also hand out posting lists a stretch of rows at a
// time. Score then reads each list once, span of pool rows by span, holding
// only a span's postings, instead of keeping whole lists (or reading those
// that do not fit again for every target row that uses them).
type CursorCorpus interface {
	Corpus
	Cursor(term string) (PostingCursor, error)
}

// streamPasses is rowPasses over spans of pool rows: for each span it reads
// every query term's postings in the span through a cursor, fills in their
// tf parts, and scores the span's blocks on the workers. A span's postings
// take about Params.CacheBytes, and every list is read exactly once.
//
// It scores against the target rows [tlo, thi) (and, for the first block, the
// combined query), reading the lists of their terms only.
func (s *scorer) streamPasses(ctx context.Context, cc CursorCorpus, res *Result, bestScore []float64, tlo, thi int) error {
	pl := s.pl
	n := pl.n
	h, combined := s.rowSetup(&res.Work, tlo, thi, func(k int) int64 { return int64(pl.df[k]) })
	curs := make([]PostingCursor, len(pl.vocab))
	var total int64
	for k, term := range pl.vocab {
		if h.off[k] == h.off[k+1] && (combined == nil || combined[k] != combined[k]) {
			continue // no target row of the block holds it, nor does the combined query
		}
		c, err := cc.Cursor(term)
		if err != nil {
			return fmt.Errorf("score: postings of %q: %w", term, err)
		}
		curs[k] = c
		total += int64(pl.df[k])
	}
	budget := s.p.CacheBytes
	if budget <= 0 {
		budget = DefaultSpanBytes
	}
	// A posting in a span takes 16 bytes: row, tf, and the tf part.
	perRow := max(1, total/int64(max(1, n)))
	span := int(max(1, budget/(16*perRow)/rowBlock)) * rowBlock

	s.factor = make([]float64, min(span, n))
	start := make([]int, len(pl.vocab)+1)
	// Sized for a span of average rows up front: growing by appending would
	// touch about twice the memory.
	size := min(total, perRow*int64(span)*5/4)
	rows, tfs, parts := make([]uint32, 0, size), make([]uint32, 0, size), make([]float64, 0, size)
	lists := func(k int32) ([]uint32, []float64) {
		return rows[start[k]:start[k+1]], parts[start[k]:start[k+1]]
	}
	for lo := 0; lo < n; lo += span {
		hi := min(n, lo+span)
		rows, tfs = rows[:0], tfs[:0]
		for k, c := range curs {
			if err := ctx.Err(); err != nil {
				return fmt.Errorf("score: %w", err)
			}
			start[k] = len(rows)
			if c == nil {
				continue
			}
			var err error
			if rows, tfs, err = c.Next(hi, rows, tfs); err != nil {
				return fmt.Errorf("score: postings of %q: %w", pl.vocab[k], err)
			}
			if err := s.checkSpan(pl.vocab[k], rows[start[k]:], tfs[start[k]:], lo, hi); err != nil {
				return err
			}
		}
		start[len(pl.vocab)] = len(rows)
		res.Work.PostingsFetched += int64(len(rows))
		// The factors of the span's rows only: a span's rows are scored, and done with, before the
		// next span's are read, so that this costs no memory per pool row.
		s.factorLo, s.factor = lo, s.factor[:hi-lo]
		for i := range s.factor {
			s.factor[i] = math.NaN()
		}
		for _, r := range rows {
			i := int(r) - lo
			if s.factor[i] == s.factor[i] {
				continue
			}
			f, err := rowFactor(s.c, s.p, pl.avg, int(r))
			if err != nil {
				return fmt.Errorf("score: %w", err)
			}
			s.factor[i] = f
		}
		if cap(parts) < len(rows) {
			parts = make([]float64, len(rows))
		}
		parts = s.tfParts(parts[:len(rows)], rows, tfs)
		if err := s.runBlocks(ctx, lo, hi, lists, h, combined, res, bestScore); err != nil {
			return err
		}
	}
	return nil
}

// checkSpan checks that a cursor handed out rows of [lo, hi) only, ascending,
// with a tf for each.
func (s *scorer) checkSpan(term string, rows, tfs []uint32, lo, hi int) error {
	if len(rows) != len(tfs) {
		return fmt.Errorf("score: postings of %q: %d rows but %d tfs: %w", term, len(rows), len(tfs), ErrBadCorpus)
	}
	prev := int64(lo) - 1
	for _, r := range rows {
		if int64(r) <= prev || int(r) >= hi {
			return fmt.Errorf("score: postings of %q: row %d out of order or range: %w", term, r, ErrBadCorpus)
		}
		prev = int64(r)
	}
	return nil
}
