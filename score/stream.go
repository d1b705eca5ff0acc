package score

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"sync"
)

// A PostingCursor reads one term's postings in row order, a stretch at a time.
type PostingCursor interface {
	// Next appends the postings of rows below end that earlier calls have not
	// handed out to rows and tfs (rows ascending, with term frequencies) and
	// returns them.
	Next(end int, rows, tfs []uint32) ([]uint32, []uint32, error)
}

// A CursorCorpus can also hand out posting lists a stretch of rows at a
// time. Score then reads each list once, chunk of pool rows by chunk, holding
// only a few chunks' postings, instead of keeping whole lists (or reading those
// that do not fit again for every target row that uses them).
type CursorCorpus interface {
	Corpus
	Cursor(term string) (PostingCursor, error)
}

// streamPasses is rowPasses over chunks of pool rows read through cursors:
// this goroutine reads every query term's postings in a chunk, checks them
// and finds the factors of the rows they reach, while the workers turn
// earlier chunks around into rows of (term, tf part) and score them. Every
// list is read exactly once, and what is held grows with neither the pool nor
// the lists: a few chunks of about chunkPostings postings each, reused.
//
// It scores against the target rows [tlo, thi) (and, for the first block, the
// combined query), reading the lists of their terms only.
func (s *scorer) streamPasses(ctx context.Context, cc CursorCorpus, res *Result, bestScore []float64, tlo, thi int) error {
	pl := s.pl
	n := pl.n
	h, combined := s.rowSetup(&res.Work, tlo, thi, func(k int) int64 { return int64(pl.partDF[k]) })
	curs := make([]PostingCursor, len(pl.vocab))
	var active []int32 // the terms read, ascending
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
		active = append(active, int32(k))
		total += int64(pl.partDF[k])
	}
	nw := s.p.Workers
	if nw == 0 {
		nw = runtime.GOMAXPROCS(0)
	}
	nbuf := nw + 2 // one being read, one waiting, one per worker
	size := chunkSize(n, total, len(active), s.p.CacheBytes, nbuf)
	if s.chunkRows > 0 {
		size = s.chunkRows
	}
	s.total = total

	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	free, full := make(chan *streamChunk, nbuf), make(chan *streamChunk, nbuf)
	for range nbuf {
		free <- &streamChunk{}
	}
	var wg sync.WaitGroup
	for range nw {
		wg.Go(func() {
			w := newRowWorker(h, combined, nil)
			for c := range full {
				if ctx.Err() == nil {
					w.chunk(s, c, res, bestScore)
				}
				free <- c
			}
		})
	}
	err := func() error {
		defer close(full)
		for lo := 0; lo < n; lo += size {
			var c *streamChunk
			select {
			case c = <-free:
			case <-ctx.Done():
				return fmt.Errorf("score: %w", ctx.Err())
			}
			if err := s.readChunk(ctx, c, curs, active, lo, min(n, lo+size)); err != nil {
				return err
			}
			res.Work.PostingsFetched += int64(len(c.rows))
			if s.p.Progress != nil {
				s.p.Progress(min(n, lo+size)-lo, n)
			}
			full <- c
		}
		return nil
	}()
	if err != nil {
		cancel()
	}
	wg.Wait()
	if err == nil && ctx.Err() != nil {
		err = fmt.Errorf("score: %w", ctx.Err())
	}
	return err
}

// chunkPostings is about how many postings a chunk of streamPasses holds:
// a worker's turned-around chunk (12 bytes a posting, with the read rows and
// tfs 20) then stays within the L2 cache of a core.
const chunkPostings = 1 << 15

// chunkSize is how many pool rows a chunk takes, a multiple of rowBlock: about
// chunkPostings postings, at least four times as many as the terms read (each
// cursor is called once a chunk), and bufs chunks within the bound (0 for
// DefaultSpanBytes), at 20 bytes a posting.
func chunkSize(n int, total int64, terms int, bound int64, bufs int) int {
	if bound <= 0 {
		bound = DefaultSpanBytes
	}
	perRow := max(1, total/int64(max(1, n)))
	want := max(chunkPostings, 4*int64(terms)) / perRow
	want = min(want, bound/(20*perRow*int64(bufs)))
	return int(max(1, want/rowBlock)) * rowBlock
}

// streamChunk is the postings of pool rows [lo, hi) as read, term by term.
type streamChunk struct {
	lo, hi    int
	rows, tfs []uint32
	segs      []rowSegment // the terms with postings here, ascending; segment [a, b) of rows and tfs
	factor    []float64    // per row of the chunk, its row factor; NaN where no posting reaches it
}

// readChunk reads the postings of rows [lo, hi) of the active terms into c,
// checks them and finds the factors of the rows they reach. It alone calls the
// corpus, so that a Corpus need not be safe for concurrent use.
func (s *scorer) readChunk(ctx context.Context, c *streamChunk, curs []PostingCursor, active []int32, lo, hi int) error {
	if err := ctx.Err(); err != nil {
		return fmt.Errorf("score: %w", err)
	}
	pl := s.pl
	c.lo, c.hi = lo, hi
	c.rows, c.tfs, c.segs = c.rows[:0], c.tfs[:0], c.segs[:0]
	if c.rows == nil {
		// Sized for a chunk of average rows and a quarter more, so that a chunk's buffers seldom
		// grow (each growth copies, and touches fresh memory).
		want := int(min(s.total, s.total/int64(max(1, pl.n))*int64(hi-lo)*5/4)) + 64
		c.rows, c.tfs = make([]uint32, 0, want), make([]uint32, 0, want)
	}
	for _, k := range active {
		a := len(c.rows)
		var err error
		if c.rows, c.tfs, err = curs[k].Next(hi, c.rows, c.tfs); err != nil {
			return fmt.Errorf("score: postings of %q: %w", pl.vocab[k], err)
		}
		if len(c.rows) == a {
			continue
		}
		if err := s.checkSpan(pl.vocab[k], c.rows[a:], c.tfs[a:], lo, hi); err != nil {
			return err
		}
		c.segs = append(c.segs, rowSegment{k, int32(a), int32(len(c.rows))})
	}
	c.factor = resize(c.factor, hi-lo)
	for i := range c.factor {
		c.factor[i] = math.NaN()
	}
	for _, r := range c.rows {
		i := int(r) - lo
		if c.factor[i] == c.factor[i] {
			continue
		}
		f, err := rowFactor(s.c, s.p, pl.avg, int(r))
		if err != nil {
			return fmt.Errorf("score: %w", err)
		}
		c.factor[i] = f
	}
	return nil
}

// chunk turns a chunk's postings around into rows of (term, tf part), terms
// ascending, and scores its rows.
func (w *rowWorker) chunk(s *scorer, c *streamChunk, res *Result, bestScore []float64) {
	lo := uint32(c.lo)
	w.count = resize(w.count, c.hi-c.lo+1)
	count := w.count
	clear(count)
	for _, r := range c.rows {
		count[r-lo+1]++
	}
	for i := 1; i < len(count); i++ {
		count[i] += count[i-1]
	}
	total := len(c.rows)
	w.terms, w.parts = resize(w.terms, total), resize(w.parts, total)
	// The tf goes where its part will be; the part is worked out row by row below.
	for _, sg := range c.segs {
		rows, tfs := c.rows[sg.a:sg.b], c.tfs[sg.a:sg.b]
		tfs = tfs[:len(rows)]
		for i, r := range rows {
			at := count[r-lo]
			w.terms[at], w.parts[at] = sg.k, float64(tfs[i])
			count[r-lo] = at + 1
		}
	}
	// count[r] is now the end of row r's entries, and the start of row r+1's.
	start := int32(0)
	bm25, k1p1 := s.p.Method == BM25, s.k1p1
	for i, end := range count[:c.hi-c.lo] {
		if end == start {
			continue
		}
		parts, f := w.parts[start:end], c.factor[i]
		// The expressions of tfParts, so that the parts are the bits it gives.
		if bm25 {
			for j, tf := range parts {
				parts[j] = bm25Part(tf, k1p1, f)
			}
		} else {
			for j, tf := range parts {
				parts[j] = tfidfPart(tf, f)
			}
		}
		w.row(c.lo+i, w.terms[start:end], parts, res, bestScore)
		start = end
	}
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

// resize returns b with length n, its contents lost: a new slice when b is too short, since
// growing would copy what is about to be overwritten.
func resize[T any](b []T, n int) []T {
	if cap(b) < n {
		return make([]T, n, n+n/4)
	}
	return b[:n]
}
