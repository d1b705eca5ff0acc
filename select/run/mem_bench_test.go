package run

import (
	"bufio"
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"runtime/debug"
	"runtime/metrics"
	"strings"
	"sync/atomic"
	"testing"
	"time"

	"sluice/index"
)

// writeRows writes n invented rows of about a dozen words drawn from a skewed vocabulary of 5,000
// made-up words, each with an id, as a pool or a target for the memory benchmarks.
func writeRows(tb testing.TB, path string, n int, seed uint64) { writeCopies(tb, path, n, seed, 1) }

// writeCopies is writeRows with each text written copies times in a row, under ids of their own.
func writeCopies(tb testing.TB, path string, n int, seed uint64, copies int) {
	f, err := os.Create(path)
	if err != nil {
		tb.Fatal(err)
	}
	w := bufio.NewWriter(f)
	rng := rand.New(rand.NewPCG(seed, 1))
	z := rand.NewZipf(rng, 1.1, 2, 4999)
	var text []byte
	for i := 0; i < n; i += copies {
		text = text[:0]
		for j := range 8 + rng.IntN(10) {
			if j > 0 {
				text = append(text, ' ')
			}
			text = fmt.Appendf(text, "w%x", z.Uint64())
		}
		for c := range min(copies, n-i) {
			fmt.Fprintf(w, `{"id":"r%d","text":"%s"}`+"\n", i+c, text)
		}
	}
	if err := w.Flush(); err != nil {
		tb.Fatal(err)
	}
	f.Close()
}

// peakHeap runs fn while sampling the bytes of heap objects every 200µs and returns the highest
// sample above the heap after a collection before fn. The collector runs whenever the heap grows
// by a tenth, so that the peak is what fn holds live rather than when collections happened to
// come; at Go's default (GOGC=100) the heap may grow to twice that before a collection.
func peakHeap(fn func() error) (int64, error) {
	defer debug.SetGCPercent(debug.SetGCPercent(10))
	s := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
	read := func() int64 { metrics.Read(s); return int64(s[0].Value.Uint64()) }
	runtime.GC()
	base := read()
	var peak atomic.Int64
	done := make(chan struct{})
	stopped := make(chan struct{})
	go func() {
		defer close(stopped)
		t := time.NewTicker(200 * time.Microsecond)
		defer t.Stop()
		for {
			if v := read(); v > peak.Load() {
				peak.Store(v)
			}
			select {
			case <-done:
				return
			case <-t.C:
			}
		}
	}()
	err := fn()
	close(done)
	<-stopped
	return peak.Load() - base, err
}

// BenchmarkPickMemory measures what a lexical pick holds per pool row and per target row: the
// rise of its peak heap between two pool sizes (and two target sizes), divided by the rows added,
// so that what does not grow with either (buffers, the posting span of --mem, 1 MiB here) drops
// out. Duplicates are kept but in sum+duplicates, which adds the duplicate guard's own cost per row
// (dedup's, BenchmarkDetector).
func BenchmarkPickMemory(b *testing.B) {
	dir := b.TempDir()
	const rows0, rows1, targets0, targets1 = 100_000, 300_000, 500, 8_500
	// copies holds pools of the same sizes whose every text is written four times, so that most
	// rows are dropped for a copy kept.
	var idx, copies [2]string
	for i, n := range []int{rows0, rows1} {
		for _, c := range []int{1, 4} {
			pool := filepath.Join(dir, fmt.Sprintf("pool%d-%d.jsonl", i, c))
			writeCopies(b, pool, n, 1, c)
			at := filepath.Join(dir, fmt.Sprintf("idx%d-%d", i, c))
			if _, err := index.Build(context.Background(), at, []string{pool}, index.Options{ID: "id"}); err != nil {
				b.Fatal(err)
			}
			if c == 1 {
				idx[i] = at
			} else {
				copies[i] = at
			}
		}
	}
	var target [2]string
	for i, n := range []int{targets0, targets1} {
		target[i] = filepath.Join(dir, fmt.Sprintf("target%d.jsonl", i))
		writeRows(b, target[i], n, 2)
	}
	for _, agg := range []string{"sum", "max", "sum+duplicates", "sum+duplicates,copies"} {
		b.Run(agg, func(b *testing.B) {
			idx := idx
			if agg == "sum+duplicates,copies" {
				idx = copies
			}
			peak := func(ix, tg string) int64 {
				opt := demoOptions(ix, tg, filepath.Join(dir, "run"))
				opt.Guards.KeepDuplicates = !strings.HasPrefix(agg, "sum+duplicates")
				opt.Params.CacheBytes = 1 << 20 // the span, --mem, bounded apart from the rows
				if agg == "max" {
					opt.Params.Aggregate = 1
				}
				p, err := peakHeap(func() error { _, err := Pick(context.Background(), opt); return err })
				if err != nil {
					b.Fatal(err)
				}
				return p
			}
			var perRow, perTarget float64
			for range b.N {
				p0, p1 := peak(idx[0], target[0]), peak(idx[1], target[0])
				perRow = float64(p1-p0) / (rows1 - rows0)
				t1 := peak(idx[0], target[1])
				perTarget = float64(t1-p0) / (targets1 - targets0)
			}
			b.ReportMetric(perRow, "B/row")
			b.ReportMetric(perTarget, "B/target-row")
		})
	}
}
