package run

import (
	"bufio"
	"context"
	"encoding/binary"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"sluice/index"
	selection "sluice/select"
)

// syntheticShards writes the rankings of rows invented rows in shards shards, as the score step
// writes them (scores with many ties, tokens 1 to 300), and returns their summaries and scores.
func syntheticShards(tb testing.TB, work string, rows, shards int) ([]*shardFile, []float64) {
	tb.Helper()
	r := rand.New(rand.NewPCG(uint64(rows), 7))
	all := make([]float64, rows)
	for i := range all {
		all[i] = float64(r.IntN(100_000)) / 7
	}
	var heads []*shardFile
	for s := range shards {
		lo, hi := s*rows/shards, (s+1)*rows/shards
		dir := shardFolder(work, s)
		if err := os.MkdirAll(dir, 0o777); err != nil {
			tb.Fatal(err)
		}
		sum, err := writeHashed(filepath.Join(dir, rankingFile), rankingFile, func(w *bufio.Writer) error {
			w.Write(fileHead("sluiceRK", s, shards, hi-lo, lo))
			var b [rankRecSize]byte
			for _, i := range selection.Order(all[lo:hi]) {
				binary.LittleEndian.PutUint64(b[0:], math.Float64bits(all[lo+i]))
				binary.LittleEndian.PutUint32(b[8:], uint32(lo+i))
				binary.LittleEndian.PutUint32(b[12:], uint32(s))
				binary.LittleEndian.PutUint64(b[16:], uint64(1+(lo+i)%300))
				w.Write(b[:])
			}
			return nil
		})
		if err != nil {
			tb.Fatal(err)
		}
		heads = append(heads, &shardFile{Shard: s, Of: shards, FirstRow: lo, Rows: hi - lo, Files: map[string]string{rankingFile: sum}})
	}
	return heads, all
}

// cutWalk runs the cut's walk over the synthetic shards, as CutShards does once it has read them.
func cutWalk(work string, heads []*shardFile, rows int, so selection.Options) (selection.Summary, error) {
	p := &picked{opt: &Options{}, cut: &cutInputs{meta: index.Meta{Rows: int64(rows), Sources: make([]index.Source, len(heads))}}}
	tmp, err := os.MkdirTemp(work, "cut")
	if err != nil {
		return selection.Summary{}, err
	}
	defer os.RemoveAll(tmp)
	return p.walkShards(context.Background(), work, tmp, heads, so, &cutFile{Rows: rows, Files: map[string]string{}})
}

// TestCutWalkIsPick checks the cut's walk over synthetic shards, ties across shards included,
// against selection.Pick over all the rows: the same summary, to the bit.
func TestCutWalkIsPick(t *testing.T) {
	work := t.TempDir()
	const rows = 20_000
	heads, scores := syntheticShards(t, work, rows, 5)
	costs := make([]float64, rows)
	for i := range costs {
		costs[i] = float64(1 + i%300)
	}
	so := selection.Options{Budget: 6e6 * 1e5, Unit: 6e6, Fill: true}
	_, want, err := selection.Pick(scores, costs, so)
	if err != nil {
		t.Fatal(err)
	}
	got, err := cutWalk(work, heads, rows, so)
	if err != nil || got != want {
		t.Fatalf("the cut's walk: %+v, %v; Pick: %+v", got, err, want)
	}
}

// BenchmarkCutMemory measures the cut's peak live heap over 10k, 100k and 1M invented rows in 4
// shards (peak-B, which must not grow with rows: the merge holds a head and a read buffer per
// shard, the decisions a write buffer per shard), beside selection.Pick's over the same rows in one
// machine's memory (pick-peak-B), the ranking and decisions it holds, and the cut's rows/s.
func BenchmarkCutMemory(b *testing.B) {
	for _, rows := range []int{10_000, 100_000, 1_000_000} {
		b.Run(fmt.Sprintf("rows=%d", rows), func(b *testing.B) {
			work := b.TempDir()
			heads, scores := syntheticShards(b, work, rows, 4)
			costs := make([]float64, rows)
			for i := range costs {
				costs[i] = float64(1 + i%300)
			}
			so := selection.Options{Budget: 6e6 * float64(rows) * 50, Unit: 6e6}
			var cut, pick int64
			b.ResetTimer()
			for range b.N {
				var err error
				if cut, err = peakHeap(func() error { _, err := cutWalk(work, heads, rows, so); return err }); err != nil {
					b.Fatal(err)
				}
			}
			b.StopTimer()
			pick, _ = peakHeap(func() error { _, _, err := selection.Pick(scores, costs, so); return err })
			b.ReportMetric(float64(cut), "peak-B")
			b.ReportMetric(float64(pick), "pick-peak-B")
			b.ReportMetric(float64(rows)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
		})
	}
}

// FuzzCutRankings gives the cut's merge and walk two rankings of any bytes whose heads and sums
// match their summaries, as a file written by something else than the score step could be: the cut
// must refuse them or decide every row once, never panic.
func FuzzCutRankings(f *testing.F) {
	rec := func(score float64, row uint32) []byte {
		b := make([]byte, rankRecSize)
		binary.LittleEndian.PutUint64(b, math.Float64bits(score))
		binary.LittleEndian.PutUint32(b[8:], row)
		binary.LittleEndian.PutUint64(b[16:], 7)
		return b
	}
	f.Add(append(rec(2, 0), rec(1, 1)...), 1)
	f.Add(append(rec(1, 0), rec(2, 1)...), 1)
	f.Add(append(append(rec(3, 1), rec(3, 0)...), rec(math.NaN(), 2)...), 2)
	f.Fuzz(func(t *testing.T, data []byte, cut int) {
		n := len(data) / rankRecSize
		if n > 64 || cut < 0 || cut > n {
			return
		}
		work := t.TempDir()
		var heads []*shardFile
		for s, part := range [][]byte{data[:cut*rankRecSize], data[cut*rankRecSize : n*rankRecSize]} {
			rows, first := len(part)/rankRecSize, s*cut
			dir := shardFolder(work, s)
			os.MkdirAll(dir, 0o777)
			sum, err := writeHashed(filepath.Join(dir, rankingFile), rankingFile, func(w *bufio.Writer) error {
				w.Write(fileHead("sluiceRK", s, 2, rows, first))
				_, err := w.Write(part)
				return err
			})
			if err != nil {
				t.Fatal(err)
			}
			heads = append(heads, &shardFile{Shard: s, Of: 2, FirstRow: first, Rows: rows, Files: map[string]string{rankingFile: sum}})
		}
		sum, err := cutWalk(work, heads, n, selection.Options{Budget: 1e9, Unit: 1})
		if err == nil && sum.Kept > n {
			t.Fatalf("kept %d of %d rows", sum.Kept, n)
		}
	})
}
