package score

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"testing"
)

// zipfCorpus is a synthetic Corpus with Zipf-distributed terms, stored as
// posting arrays so that a 200k-row pool fits in a benchmark.
type zipfCorpus struct {
	lens  []int
	avg   float64
	norms []float64
	ids   map[string]int
	rows  [][]uint32
	tfs   [][]uint32
}

func newZipfCorpus(rng *rand.Rand, z *rand.Zipf, nrows, rowLen, vocab int) *zipfCorpus {
	c := &zipfCorpus{lens: make([]int, nrows), norms: make([]float64, nrows), ids: make(map[string]int, vocab),
		rows: make([][]uint32, vocab), tfs: make([][]uint32, vocab)}
	for i := range vocab {
		c.ids[zipfTerm(i)] = i
	}
	draw := make([]uint32, rowLen)
	for r := range nrows {
		for i := range draw {
			draw[i] = uint32(z.Uint64())
		}
		slices.Sort(draw)
		for i := 0; i < len(draw); {
			j := i
			for j < len(draw) && draw[j] == draw[i] {
				j++
			}
			c.rows[draw[i]] = append(c.rows[draw[i]], uint32(r))
			c.tfs[draw[i]] = append(c.tfs[draw[i]], uint32(j-i))
			i = j
		}
		c.lens[r] = rowLen
	}
	c.avg = float64(rowLen)
	ss := make([]float64, nrows)
	for t := range c.rows {
		idf := math.Log(float64(1+nrows)/float64(1+len(c.rows[t]))) + 1
		for i, r := range c.rows[t] {
			x := float64(c.tfs[t][i]) * idf
			ss[r] += x * x
		}
	}
	for r := range ss {
		c.norms[r] = math.Sqrt(ss[r])
	}
	return c
}

func zipfTerm(i int) string { return "w" + strconv.Itoa(i) }

func (c *zipfCorpus) NumRows() int            { return len(c.lens) }
func (c *zipfCorpus) AvgLen() float64         { return c.avg }
func (c *zipfCorpus) RowLen(row int) int      { return c.lens[row] }
func (c *zipfCorpus) RowNorm(row int) float64 { return c.norms[row] }

func (c *zipfCorpus) DF(term string) int {
	if id, ok := c.ids[term]; ok {
		return len(c.rows[id])
	}
	return 0
}

func (c *zipfCorpus) Postings(term string, rows, tfs []uint32) ([]uint32, []uint32, error) {
	if id, ok := c.ids[term]; ok {
		rows = append(rows, c.rows[id]...)
		tfs = append(tfs, c.tfs[id]...)
	}
	return rows, tfs, nil
}

// BenchmarkScore scores a synthetic 200k-row pool (100 Zipf tokens per row,
// 100k-term vocabulary) against 1,000 target rows of 32 tokens. The "reread"
// variants disable the posting cache and run on one worker, so every pass
// decodes its lists again as Score did before it kept them; comparing the two
// in one run gives the speed-up on a shared, noisy machine.
func BenchmarkScore(b *testing.B) {
	const nrows, rowLen, vocab, ntargets, targetLen = 200_000, 100, 100_000, 1000, 32
	rng := rand.New(rand.NewPCG(1, 2))
	z := rand.NewZipf(rng, 1.1, 2, vocab-1)
	c := newZipfCorpus(rng, z, nrows, rowLen, vocab)
	q := make([]Query, ntargets)
	for j := range q {
		for range targetLen {
			q[j].Terms = append(q[j].Terms, zipfTerm(int(z.Uint64())))
		}
	}
	for _, p := range allParams() {
		for _, v := range []struct {
			name    string
			workers int
			cache   int64
		}{{"cached", 0, 0}, {"cached-1worker", 1, 0}, {"reread-1worker", 1, -1}} {
			p.Workers, p.CacheBytes = v.workers, v.cache
			b.Run(p.Method.String()+"/"+p.Aggregate.String()+"/"+v.name, func(b *testing.B) {
				var postings int64
				for b.Loop() {
					res, err := Score(context.Background(), c, q, p)
					if err != nil {
						b.Fatal(err)
					}
					postings += res.Work.Postings
				}
				sec := b.Elapsed().Seconds()
				b.ReportMetric(float64(postings)/sec, "postings/s")
				b.ReportMetric(float64(b.N)*nrows/sec, "rows/s")
				b.ReportMetric(sec*1e9/float64(postings), "ns/posting")
			})
		}
	}
}
