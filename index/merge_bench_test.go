package index

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// benchPool returns the files of $SLUICE_BENCH_POOL (a comma-separated list) or else the T0 files.
func benchPool(tb testing.TB) ([]string, int64) {
	tb.Helper()
	env := os.Getenv("SLUICE_BENCH_POOL")
	if env == "" {
		return sharedPool(tb)
	}
	files := strings.Split(env, ",")
	return files, totalSize(tb, files)
}

// BenchmarkMerge builds the same pool at memory bounds that spill from no runs to many, and reports
// the merge's share of each build: the merge should not grow with the number of runs.
func BenchmarkMerge(b *testing.B) {
	files, size := benchPool(b)
	for _, mem := range []int64{1 << 30, 64 << 20, 16 << 20, 4 << 20} {
		b.Run(fmt.Sprintf("mem=%dMiB", mem>>20), func(b *testing.B) {
			dir := filepath.Join(b.TempDir(), "idx")
			b.SetBytes(size)
			var merge time.Duration
			var start time.Time
			opt := Options{Mem: mem, NoDups: true, trace: func(ev string) {
				switch ev {
				case "merge":
					start = time.Now()
				case "merged":
					merge += time.Since(start)
				}
			}}
			runs := 0
			for b.Loop() {
				st, err := Build(context.Background(), dir, files, opt)
				if err != nil {
					b.Fatal(err)
				}
				runs = st.Runs
			}
			b.ReportMetric(float64(runs), "runs")
			b.ReportMetric(merge.Seconds()/float64(b.N), "merge-s/op")
			b.ReportMetric(100*merge.Seconds()/b.Elapsed().Seconds(), "merge-%")
		})
	}
}

// BenchmarkBuildPool builds $SLUICE_BENCH_POOL (else the T0 files) with the default options, as
// `sluice index` does, and BenchmarkDryRunPool reads, parses and analyses it alone: with
// -cpuprofile, where a build's time goes beside its floor.
func BenchmarkBuildPool(b *testing.B) {
	files, size := benchPool(b)
	dir := filepath.Join(b.TempDir(), "idx")
	b.SetBytes(size)
	for b.Loop() {
		if _, err := Build(context.Background(), dir, files, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkDryRunPool(b *testing.B) {
	files, size := benchPool(b)
	b.SetBytes(size)
	for b.Loop() {
		if _, err := Build(context.Background(), "", files, Options{DryRun: true}); err != nil {
			b.Fatal(err)
		}
	}
}
