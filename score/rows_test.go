package score

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sync/atomic"
	"testing"
)

// The row-at-a-time scorer (every list cached) and the per-target passes
// (nothing cached) must agree bit for bit, over spans of several row blocks
// (17 blocks: one worker takes spans of two) and with
// repeated target rows so that ties occur. The property is internal, so no
// reference values are involved.
func TestRowPassesMatchTargetPasses(t *testing.T) {
	c, q := zipfSetup(3, 17*rowBlock+17, 40, 5000, 150, 25)
	for j := 9; j < len(q); j += 10 {
		q[j].Terms = q[j-1].Terms // a tie at every pool row the earlier one reaches
	}
	q = append(q, Query{ID: "no terms"}, Query{ID: "absent", Terms: []string{"not-in-pool"}})
	for _, p := range allParams() {
		p.CacheBytes, p.Workers = -1, 1
		want, err := Score(context.Background(), c, q, p)
		if err != nil {
			t.Fatal(err)
		}
		for _, workers := range []int{1, 2, 5} {
			p.CacheBytes, p.Workers = 0, workers
			got, err := Score(context.Background(), c, q, p)
			if err != nil {
				t.Fatal(err)
			}
			name := fmt.Sprintf("%v/%v workers %d", p.Method, p.Aggregate, workers)
			for r := range got.Scores {
				if math.Float64bits(got.Scores[r]) != math.Float64bits(want.Scores[r]) || got.Best[r] != want.Best[r] {
					t.Fatalf("%s: row %d: score %v best %d, per-target passes %v best %d",
						name, r, got.Scores[r], got.Best[r], want.Scores[r], want.Best[r])
				}
			}
			got.Work.PostingsFetched, want.Work.PostingsFetched = 0, 0
			if got.Work != want.Work {
				t.Errorf("%s: work %+v, want %+v", name, got.Work, want.Work)
			}
		}
	}
}

// cursorCorpus streams a zipfCorpus's lists through cursors.
type cursorCorpus struct {
	*zipfCorpus
	bad bool // hand out a row twice
}

type sliceCursor struct {
	rows, tfs []uint32
	bad       bool
}

func (c cursorCorpus) Cursor(term string) (PostingCursor, error) {
	rows, tfs, err := c.Postings(term, nil, nil)
	return &sliceCursor{rows: rows, tfs: tfs, bad: c.bad}, err
}

func (c *sliceCursor) Next(end int, rows, tfs []uint32) ([]uint32, []uint32, error) {
	i := 0
	for i < len(c.rows) && int(c.rows[i]) < end {
		i++
	}
	rows, tfs = append(rows, c.rows[:i]...), append(tfs, c.tfs[:i]...)
	if c.bad && i > 0 {
		rows, tfs = append(rows, c.rows[i-1]), append(tfs, 1)
	}
	c.rows, c.tfs = c.rows[i:], c.tfs[i:]
	return rows, tfs, nil
}

// releasingCorpus is a cursorCorpus that gives back its rows below a mark, and notes a row's length
// or norm asked below the mark of its pass.
type releasingCorpus struct {
	cursorCorpus
	mark, calls, early *atomic.Int64
}

func (c releasingCorpus) ReleaseRows(from, to int) {
	if m := c.mark.Load(); int64(from) != m && from != 0 || to < from {
		c.early.Add(1) // not the pass's next stretch
	}
	c.mark.Store(int64(to))
	c.calls.Add(1)
}

func (c releasingCorpus) RowLen(row int) int {
	if int64(row) < c.mark.Load() {
		c.early.Add(1)
	}
	return c.cursorCorpus.RowLen(row)
}

func (c releasingCorpus) RowNorm(row int) float64 {
	if int64(row) < c.mark.Load() {
		c.early.Add(1)
	}
	return c.cursorCorpus.RowNorm(row)
}

// A corpus that gives back its rows' memory is told only of rows no chunk still out needs, and is
// told as the pass goes; the scores are the same. Internal property: no reference values.
func TestStreamReleasesRowsBehind(t *testing.T) {
	c, q := zipfSetup(8, 9*rowBlock+5, 30, 3000, 60, 20)
	for _, p := range allParams() {
		want, err := Score(context.Background(), c, q, p)
		if err != nil {
			t.Fatal(err)
		}
		for _, workers := range []int{1, 2, 4} {
			p.Workers, p.CacheBytes = workers, 1<<10
			rc := releasingCorpus{cursorCorpus{zipfCorpus: c}, new(atomic.Int64), new(atomic.Int64), new(atomic.Int64)}
			got, err := scoreBlocks(context.Background(), rc, q, p, maxRowTargets, 7)
			if err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(got.Scores, want.Scores) || !slices.Equal(got.Best, want.Best) {
				t.Fatalf("%v/%v, %d workers: the scores differ with rows released", p.Method, p.Aggregate, workers)
			}
			if n := rc.early.Load(); n > 0 || rc.calls.Load() < 100 {
				t.Fatalf("%v/%v, %d workers: %d rows asked for below the mark, over %d releases", p.Method, p.Aggregate, workers, n, rc.calls.Load())
			}
			p.Workers, p.CacheBytes = 0, 0
		}
	}
}

// Reading the lists chunk by chunk through cursors gives the same results as
// keeping them all, whatever the chunks and workers. Internal property: no
// reference values.
func TestStreamPassesMatchRowPasses(t *testing.T) {
	c, q := zipfSetup(7, 9*rowBlock+5, 30, 3000, 60, 20)
	for _, p := range allParams() {
		want, err := Score(context.Background(), c, q, p)
		if err != nil {
			t.Fatal(err)
		}
		for _, tc := range []struct{ workers, chunk int }{{1, 0}, {3, 0}, {2, 1}, {1, 7}, {3, 3*rowBlock + 1}, {2, 100 * rowBlock}} {
			// A bound this small makes chunks of one block, unless a chunk is given.
			p.Workers, p.CacheBytes = tc.workers, 1<<10
			got, err := scoreBlocks(context.Background(), cursorCorpus{zipfCorpus: c}, q, p, maxRowTargets, tc.chunk)
			if err != nil {
				t.Fatal(err)
			}
			name := fmt.Sprintf("%v/%v workers %d chunk %d", p.Method, p.Aggregate, tc.workers, tc.chunk)
			for r := range got.Scores {
				if math.Float64bits(got.Scores[r]) != math.Float64bits(want.Scores[r]) || got.Best[r] != want.Best[r] {
					t.Fatalf("%s: row %d: score %v best %d, cached %v best %d", name, r, got.Scores[r], got.Best[r], want.Scores[r], want.Best[r])
				}
			}
			if got.Work != want.Work {
				t.Errorf("%s: work %+v, cached %+v", name, got.Work, want.Work)
			}
			p.Workers, p.CacheBytes = 0, 0
		}
		p.CacheBytes = 1 << 10
		if _, err := Score(context.Background(), cursorCorpus{zipfCorpus: c, bad: true}, q, p); !errors.Is(err, ErrBadCorpus) {
			t.Errorf("%v/%v: a cursor repeating a row: %v, want ErrBadCorpus", p.Method, p.Aggregate, err)
		}
	}
}

// zipfSetup makes a Zipf corpus of the given shape and nq target rows of 1
// to maxLen Zipf terms, from seed.
func zipfSetup(seed uint64, rows, rowLen, vocab, nq, maxLen int) (*zipfCorpus, []Query) {
	rng := rand.New(rand.NewPCG(seed, seed+1))
	z := rand.NewZipf(rng, 1.1, 2, uint64(vocab-1))
	c := newZipfCorpus(rng, z, rows, rowLen, vocab)
	q := make([]Query, nq)
	for j := range q {
		for range 1 + j%maxLen {
			q[j].Terms = append(q[j].Terms, zipfTerm(int(z.Uint64())))
		}
	}
	return c, q
}

// Target rows taken a block at a time, so that a large target set needs no memory per target row
// and pool row, give the same scores, best target rows (ties to the lowest index across blocks
// too) and work as one block. Internal property: no reference values.
func TestTargetBlocksMatchOneBlock(t *testing.T) {
	c, q := zipfSetup(11, 5*rowBlock+3, 30, 3000, 90, 20)
	for j := 9; j < len(q); j += 10 {
		q[j].Terms = q[j-1].Terms // ties, some across a block's edge
	}
	q = append(q, Query{ID: "no terms"}, Query{ID: "absent", Terms: []string{"not-in-pool"}})
	cc := cursorCorpus{zipfCorpus: c}
	for _, p := range allParams() {
		p.CacheBytes = 1 << 12
		want, err := scoreBlocks(context.Background(), cc, q, p, maxRowTargets, 0)
		if err != nil {
			t.Fatal(err)
		}
		for _, block := range []int{1, 7, 10, 64} {
			got, err := scoreBlocks(context.Background(), cc, q, p, block, 0)
			if err != nil {
				t.Fatal(err)
			}
			name := fmt.Sprintf("%v/%v blocks of %d", p.Method, p.Aggregate, block)
			for r := range got.Scores {
				if math.Float64bits(got.Scores[r]) != math.Float64bits(want.Scores[r]) || got.Best[r] != want.Best[r] {
					t.Fatalf("%s: row %d: score %v best %d, one block %v best %d", name, r, got.Scores[r], got.Best[r], want.Scores[r], want.Best[r])
				}
			}
			if got.Work.PostingsFetched < want.Work.PostingsFetched {
				t.Errorf("%s: %d postings fetched, fewer than one block's %d", name, got.Work.PostingsFetched, want.Work.PostingsFetched)
			}
			got.Work.PostingsFetched, want.Work.PostingsFetched = 0, 0
			if got.Work != want.Work {
				t.Errorf("%s: work %+v, one block %+v", name, got.Work, want.Work)
			}
		}
	}
}

// The readers' shares of the terms are runs in order that cover every term once, none empty, at
// most as many as asked for, each with its postings counted, and with about as many postings each.
// Internal property: no reference values.
func TestShareTerms(t *testing.T) {
	c, q := zipfSetup(5, 3*rowBlock, 30, 3000, 60, 20)
	pl, err := newPlan(c, q, DefaultParams())
	if err != nil {
		t.Fatal(err)
	}
	s := &scorer{pl: pl}
	all := make([]int32, len(pl.vocab))
	for k := range all {
		all[k] = int32(k)
	}
	for _, active := range [][]int32{all, all[:1], all[:3], all[len(all)/2:]} {
		var total, top int64
		for _, k := range active {
			total += int64(pl.partDF[k])
			top = max(top, int64(pl.partDF[k]))
		}
		for _, nr := range []int{1, 2, 3, 8} {
			shares := s.shareTerms(active, total, nr)
			var got []int32
			var most int64
			for _, sh := range shares {
				if len(sh.terms) == 0 {
					t.Fatalf("%d terms, %d readers: an empty share", len(active), nr)
				}
				got = append(got, sh.terms...)
				var n int64
				for _, k := range sh.terms {
					n += int64(pl.partDF[k])
				}
				if n != sh.postings {
					t.Fatalf("%d terms, %d readers: a share of %d postings says %d", len(active), nr, n, sh.postings)
				}
				most = max(most, n)
			}
			if len(shares) > nr || !slices.Equal(got, active) {
				t.Fatalf("%d terms, %d readers: %d shares covering %v", len(active), nr, len(shares), got)
			}
			// A share closes once it holds its part, so it passes it by less than one list.
			if len(shares) == nr && most > total/int64(nr)+top {
				t.Errorf("%d terms, %d readers: a share of %d postings of %d", len(active), nr, most, total)
			}
		}
	}
}

// A pool row that reaches few target rows is scored looking at theirs alone, in the order its
// terms reach them; a tie still goes to the lowest target index, as over every accumulator. Here
// the row's first term reaches target row 1 and its second, of the same weight, target row 0.
// Internal property: no reference values.
func TestFewTargetsTieToLowest(t *testing.T) {
	pool := [][]string{{"a", "b"}, {"a", "c"}, {"b", "d"}}
	q := []Query{{ID: "holds b", Terms: []string{"b"}}, {ID: "holds a", Terms: []string{"a"}}}
	for range 10 {
		q = append(q, Query{ID: "holds z", Terms: []string{"z"}}) // in no pool row
	}
	q = append(q, Query{ID: "holds c", Terms: []string{"c"}})
	for _, p := range allParams() {
		p.CacheBytes, p.Workers = -1, 1
		want, err := Score(context.Background(), newMemCorpus(pool), q, p)
		if err != nil {
			t.Fatal(err)
		}
		if want.Best[0] != 0 {
			t.Fatalf("%v/%v: per-target passes give row 0 target %d, want the tie's lowest, 0", p.Method, p.Aggregate, want.Best[0])
		}
		p.CacheBytes = 0
		for _, c := range []Corpus{newMemCorpus(pool), cursorsOver{newMemCorpus(pool)}} {
			got, err := Score(context.Background(), c, q, p)
			if err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(got.Best, want.Best) {
				t.Errorf("%v/%v over %T: best %v, per-target passes %v", p.Method, p.Aggregate, c, got.Best, want.Best)
			}
		}
	}
}

// Chunks follow the rows' analysed lengths: over a pool whose first half has rows twenty times as
// long as the second's, they cover the rows in order, and each holds about the same length, so a
// chunk of long rows has about a twentieth of the rows of one of short rows. Internal property:
// no reference values.
func TestChunkEndsFollowLength(t *testing.T) {
	var docs [][]string
	for r := range 4000 {
		n := 1
		if r < 2000 {
			n = 20
		}
		doc := make([]string, n)
		for i := range doc {
			doc[i] = zipfTerm(i)
		}
		docs = append(docs, doc)
	}
	c := newMemCorpus(docs)
	s := &scorer{c: c, pl: &plan{n: len(docs)}}
	var total int64
	for r := range docs {
		total += int64(c.RowLen(r))
	}
	const per = 2000 // postings a chunk, here one a term of a row
	end := s.chunkEnds(total, per)
	var long, short []int
	for lo := 0; lo < len(docs); {
		hi := end(lo)
		if hi <= lo || hi > len(docs) {
			t.Fatalf("chunk from %d ends at %d", lo, hi)
		}
		length := 0
		for r := lo; r < hi; r++ {
			length += c.RowLen(r)
		}
		if length > per+20 {
			t.Errorf("chunk [%d, %d) holds %d terms, over %d and a row", lo, hi, length, per)
		}
		if hi <= 2000 {
			long = append(long, hi-lo)
		} else if lo >= 2000 {
			short = append(short, hi-lo)
		}
		lo = hi
	}
	if len(long) == 0 || len(short) == 0 || long[0] != 100 || short[0] != 2000 {
		t.Errorf("chunks of long rows %v, of short rows %v: want 100 and 2000 rows", long, short)
	}
}
