package score

import (
	"context"
	"fmt"
	"runtime"
	"slices"
	"sync"
	"sync/atomic"
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
//
// Score reads several cursors at once, each from one goroutine at a time, and
// asks RowLen and RowNorm from several goroutines: a CursorCorpus must allow
// that, as reads of an index's mapped files do.
type CursorCorpus interface {
	Corpus
	Cursor(term string) (PostingCursor, error)
}

// A RowReleaser is a corpus that can give back the memory its per-row data (RowLen, RowNorm) holds
// for rows [from, to), which a pass in row order will not ask for again; asked again, they are
// still given.
type RowReleaser interface {
	ReleaseRows(from, to int)
}

// streamPasses is rowPasses over chunks of pool rows read through cursors.
// Readers, each with its share of the query terms (a run of them, ascending,
// with about as many postings as the others), read and check their terms'
// postings in a chunk, while the workers turn earlier chunks around into rows
// of (term, tf part), find the factors of the rows reached and score them.
// Every list is read exactly once, and what is held grows with neither the
// pool nor the lists: a few chunks of about chunkPostings postings each,
// reused. The readers' shares, taken in turn, give each row its terms in
// ascending order, so the results do not depend on how many there are.
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
	if len(active) == 0 {
		if s.p.Progress != nil && n > 0 {
			s.p.Progress(n, n) // nothing to read: no row is reached
		}
		return nil
	}
	nw := s.p.Workers
	if nw == 0 {
		nw = runtime.GOMAXPROCS(0)
	}
	shares := s.shareTerms(active, total, nw)
	nbuf := nw + len(shares) + 1 // one being read by each reader, one waiting, one per worker
	per := chunkPostingsFor(total, len(active), s.p.CacheBytes, nbuf)
	end := s.chunkEnds(total, per)

	parent := ctx
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	var failure error
	var failOnce sync.Once
	fail := func(err error) {
		failOnce.Do(func() { failure = err })
		cancel()
	}
	free, full := make(chan *streamChunk, nbuf), make(chan *streamChunk, nbuf)
	for range nbuf {
		free <- &streamChunk{parts: make([]chunkPart, len(shares))}
	}
	var fetched atomic.Int64
	var readers, workers sync.WaitGroup
	ins := make([]chan *streamChunk, len(shares))
	for i, sh := range shares {
		ins[i] = make(chan *streamChunk, nbuf)
		readers.Go(func() {
			for c := range ins[i] {
				if ctx.Err() == nil {
					if err := s.readPart(&c.parts[i], curs, sh, c.lo, c.hi, per*sh.postings/total); err != nil {
						fail(err)
					}
					fetched.Add(int64(len(c.parts[i].rows)))
				}
				// A chunk's last reader hands it on; each reads the chunks in order, so they are
				// handed on in order, one after another.
				if c.pending.Add(-1) == 0 {
					if ctx.Err() == nil && s.p.Progress != nil {
						s.p.Progress(c.hi-c.lo, n)
					}
					full <- c
				}
			}
		})
	}
	for range nw {
		workers.Go(func() {
			w := newRowWorker(h, combined, nil)
			for c := range full {
				if ctx.Err() == nil {
					if err := w.chunk(s, c, res, bestScore); err != nil {
						fail(err)
					}
				}
				free <- c
			}
		})
	}
	// A corpus that can give back its rows' pages is told of the rows left behind: those below every
	// chunk still out (a chunk is back, done, when its buffer is free again).
	rr, _ := cc.(RowReleaser)
	out := make([]int, 0, nbuf) // the first rows of the chunks out
	released := 0
	// No send below blocks: each channel holds every chunk there is.
	for lo := 0; lo < n && ctx.Err() == nil; {
		var c *streamChunk
		select {
		case c = <-free:
		case <-ctx.Done():
			continue
		}
		if rr != nil {
			if c.hi > 0 {
				out = slices.DeleteFunc(out, func(l int) bool { return l == c.lo })
			}
			low := lo
			for _, l := range out {
				low = min(low, l)
			}
			rr.ReleaseRows(released, low)
			released, out = low, append(out, lo)
		}
		c.lo, c.hi = lo, end(lo)
		lo = c.hi
		c.pending.Store(int32(len(shares)))
		for _, in := range ins {
			in <- c
		}
	}
	for _, in := range ins {
		close(in)
	}
	readers.Wait()
	close(full)
	workers.Wait()
	res.Work.PostingsFetched += fetched.Load()
	if failure != nil {
		return failure
	}
	if err := parent.Err(); err != nil {
		return fmt.Errorf("score: %w", err)
	}
	return nil
}

// share is one reader's run of the query terms and their postings.
type share struct {
	terms    []int32
	postings int64
}

// shareTerms splits the active terms (ascending, total postings in all) into at most nr runs of
// about as many postings each, one per reader, in order.
func (s *scorer) shareTerms(active []int32, total int64, nr int) []share {
	nr = max(1, min(nr, len(active)))
	shares := make([]share, 0, nr)
	var sum, done int64
	from := 0
	for i, k := range active {
		sum += int64(s.pl.partDF[k])
		// Close the current run once it holds its part of the postings, leaving a term for each
		// run still to come.
		if len(shares) < nr-1 && sum*int64(nr) >= total*int64(len(shares)+1) && len(active)-(i+1) >= nr-1-len(shares) {
			shares = append(shares, share{active[from : i+1], sum - done})
			from, done = i+1, sum
		}
	}
	if from < len(active) {
		shares = append(shares, share{active[from:], sum - done})
	}
	return shares
}

// chunkPostings is about how many postings a chunk of streamPasses holds:
// a worker's turned-around chunk (12 bytes a posting, with the read rows and
// tfs 20) then stays within the L2 cache of a core.
const chunkPostings = 1 << 15

// chunkPostingsFor is about how many postings a chunk takes: chunkPostings, at
// least four times as many as the terms read (each cursor is called once a
// chunk), and bufs chunks within the bound (0 for DefaultSpanBytes), at 20
// bytes a posting; never more than there are.
func chunkPostingsFor(total int64, terms int, bound int64, bufs int) int64 {
	if bound <= 0 {
		bound = DefaultSpanBytes
	}
	per := max(chunkPostings, 4*int64(terms))
	per = min(per, bound/(20*int64(bufs)), total)
	return max(1, per)
}

// chunkEnds returns where a chunk starting at a row ends. A chunk takes rows
// until their analysed lengths make about per postings at the pool's rate of
// postings read per analysed term: rows differ in length by stretches (a pool
// concatenated from sources of short and long rows), and chunks of as many
// rows each held from a third to four times the postings of the mean, each
// growing its buffers. With chunkRows set (tests), chunks are of that many
// rows.
func (s *scorer) chunkEnds(total, per int64) func(lo int) int {
	n, c := s.pl.n, s.c
	if s.chunkRows > 0 {
		return func(lo int) int { return min(n, lo+s.chunkRows) }
	}
	// The analysed length a chunk takes: per postings at total postings over all rows' length.
	length := c.AvgLen() * float64(n) * float64(per) / float64(max(1, total))
	return func(lo int) int {
		hi, sum := lo, 0.0
		for hi < n && (hi == lo || sum < length) {
			sum += float64(max(0, c.RowLen(hi))) // a damaged length is the worker's to report
			hi++
		}
		return hi
	}
}

// streamChunk is the postings of pool rows [lo, hi) as read, a part from each reader.
type streamChunk struct {
	lo, hi  int
	parts   []chunkPart
	pending atomic.Int32 // readers yet to read their part
}

// chunkPart is one reader's share of a chunk, term by term.
type chunkPart struct {
	rows, tfs []uint32
	segs      []rowSegment // the terms with postings here, ascending; segment [a, b) of rows and tfs
}

// readPart reads the postings of rows [lo, hi) of the terms of one reader's share into p and
// checks them; the share's part of the chunk is about want postings. Each cursor is read by one
// reader only.
func (s *scorer) readPart(p *chunkPart, curs []PostingCursor, sh share, lo, hi int, want int64) error {
	pl := s.pl
	p.rows, p.tfs, p.segs = p.rows[:0], p.tfs[:0], p.segs[:0]
	if p.rows == nil {
		// Sized for the share's part of a chunk and a half more, so that a part's buffers seldom
		// grow (each growth copies, and touches fresh memory).
		size := int(min(sh.postings, want*3/2)) + 64
		p.rows, p.tfs = make([]uint32, 0, size), make([]uint32, 0, size)
	}
	for _, k := range sh.terms {
		a := len(p.rows)
		var err error
		if p.rows, p.tfs, err = curs[k].Next(hi, p.rows, p.tfs); err != nil {
			return fmt.Errorf("score: postings of %q: %w", pl.vocab[k], err)
		}
		if len(p.rows) == a {
			continue
		}
		if err := s.checkSpan(pl.vocab[k], p.rows[a:], p.tfs[a:], lo, hi); err != nil {
			return err
		}
		p.segs = append(p.segs, rowSegment{k, int32(a), int32(len(p.rows))})
	}
	return nil
}

// chunk turns a chunk's postings around into rows of (term, tf part), terms
// ascending, finds the factor of each row reached and scores it.
func (w *rowWorker) chunk(s *scorer, c *streamChunk, res *Result, bestScore []float64) error {
	lo := uint32(c.lo)
	w.count = resize(w.count, c.hi-c.lo+1)
	count := w.count
	clear(count)
	total := 0
	for i := range c.parts {
		for _, r := range c.parts[i].rows {
			count[r-lo+1]++
		}
		total += len(c.parts[i].rows)
	}
	for i := 1; i < len(count); i++ {
		count[i] += count[i-1]
	}
	w.terms, w.parts = resize(w.terms, total), resize(w.parts, total)
	// The tf goes where its part will be; the part is worked out row by row below. The parts
	// follow one another in term order, so each row's terms come in ascending.
	for i := range c.parts {
		p := &c.parts[i]
		for _, sg := range p.segs {
			rows, tfs := p.rows[sg.a:sg.b], p.tfs[sg.a:sg.b]
			tfs = tfs[:len(rows)]
			for i, r := range rows {
				at := count[r-lo]
				w.terms[at], w.parts[at] = sg.k, float64(tfs[i])
				count[r-lo] = at + 1
			}
		}
	}
	// count[r] is now the end of row r's entries, and the start of row r+1's.
	start := int32(0)
	bm25, k1p1 := s.p.Method == BM25, s.k1p1
	for i, end := range count[:c.hi-c.lo] {
		if end == start {
			continue
		}
		f, err := rowFactor(s.c, s.p, s.pl.avg, c.lo+i)
		if err != nil {
			return fmt.Errorf("score: %w", err)
		}
		parts := w.parts[start:end]
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

// resize returns b with length n, its contents lost: a new slice when b is too short, since
// growing would copy what is about to be overwritten.
func resize[T any](b []T, n int) []T {
	if cap(b) < n {
		return make([]T, n, n+n/4)
	}
	return b[:n]
}
