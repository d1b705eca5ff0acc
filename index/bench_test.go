package index

import (
	"context"
	"os"
	"path/filepath"
	"testing"
)

// sharedPool returns T0 pool files from ../shared/data, or skips.
func sharedPool(tb testing.TB) ([]string, int64) {
	tb.Helper()
	files, _ := filepath.Glob("../../shared/data/t0-train-50k-per-template/data_per_template/*.jsonl")
	if len(files) == 0 {
		tb.Skip("../shared/data is absent: benchmark needs the shared T0 corpus")
	}
	var size int64
	for _, f := range files {
		fi, err := os.Stat(f)
		if err != nil {
			tb.Fatal(err)
		}
		size += fi.Size()
	}
	return files, size
}

// BenchmarkBuild and BenchmarkFloor run on the same files; their MB/s ratio is the share of the
// read+parse+analyse floor that a full build reaches.
func BenchmarkBuild(b *testing.B) {
	files, size := sharedPool(b)
	dir := filepath.Join(b.TempDir(), "idx")
	b.SetBytes(size)
	var rows int64
	for b.Loop() {
		st, err := Build(context.Background(), dir, files, Options{Text: "prompt,completion"})
		if err != nil {
			b.Fatal(err)
		}
		rows = st.Rows
	}
	b.ReportMetric(float64(rows)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
}

func BenchmarkFloor(b *testing.B) {
	files, size := sharedPool(b)
	b.SetBytes(size)
	var rows int64
	for b.Loop() {
		st, err := Build(context.Background(), "", files, Options{Text: "prompt,completion", DryRun: true})
		if err != nil {
			b.Fatal(err)
		}
		rows = st.Rows
	}
	b.ReportMetric(float64(rows)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
}
