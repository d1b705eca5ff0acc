package index

import (
	"context"
	"io"
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
	return files, totalSize(tb, files)
}

// totalSize is the bytes of files together.
func totalSize(tb testing.TB, files []string) int64 {
	tb.Helper()
	var size int64
	for _, f := range files {
		fi, err := os.Stat(f)
		if err != nil {
			tb.Fatal(err)
		}
		size += fi.Size()
	}
	return size
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

// BenchmarkPostings decodes every posting list of an index of the demo-sized T0 sample (the first
// 20 template files), as a pick does for its query terms.
func BenchmarkPostings(b *testing.B) {
	files, _ := sharedPool(b)
	dir := filepath.Join(b.TempDir(), "idx")
	if _, err := Build(context.Background(), dir, files[:min(20, len(files))], Options{Text: "prompt,completion"}); err != nil {
		b.Fatal(err)
	}
	ix, err := Open(dir)
	if err != nil {
		b.Fatal(err)
	}
	defer ix.Close()
	var terms []string
	ix.lex.each(func(t []byte) { terms = append(terms, string(t)) })
	var rows, tfs []uint32
	var n int64
	for b.Loop() {
		for _, t := range terms {
			if rows, tfs, err = ix.Postings(t, rows[:0], tfs[:0]); err != nil {
				b.Fatal(err)
			}
			n += int64(len(rows))
		}
	}
	b.ReportMetric(float64(n)/b.Elapsed().Seconds(), "postings/s")
	b.ReportMetric(b.Elapsed().Seconds()*1e9/float64(n), "ns/posting")
}

// BenchmarkCopyRows copies every tenth row of the T0 files (a pick keeping a tenth of the pool),
// every other row and all of them, one read per row against one read per span of neighbouring
// rows: compare each pair in one run.
func BenchmarkCopyRows(b *testing.B) {
	files, _ := sharedPool(b)
	dir := filepath.Join(b.TempDir(), "idx")
	if _, err := Build(context.Background(), dir, files, Options{Text: "prompt,completion"}); err != nil {
		b.Fatal(err)
	}
	ix, err := Open(dir)
	if err != nil {
		b.Fatal(err)
	}
	defer ix.Close()
	for _, c := range []struct {
		name        string
		every, span int
	}{{"tenth/per-row", 10, 0}, {"tenth/spans", 10, copySpan}, {"half/per-row", 2, 0}, {"half/spans", 2, copySpan}, {"all/per-row", 1, 0}, {"all/spans", 1, copySpan}} {
		var rows []int
		var bytes int64
		for r := 0; r < ix.NumRows(); r += c.every {
			rows = append(rows, r)
			bytes += ix.RowLocation(r).Length
		}
		b.Run(c.name, func(b *testing.B) {
			b.SetBytes(bytes)
			var buf []byte
			for b.Loop() {
				for i := 0; i < len(rows); {
					src := ix.rec(rows[i]).src
					j := i
					for j < len(rows) && ix.rec(rows[j]).src == src {
						j++
					}
					if err := ix.copyFrom(io.Discard, int(src), rows[i:j], c.span, &buf); err != nil {
						b.Fatal(err)
					}
					i = j
				}
			}
			b.ReportMetric(float64(len(rows))*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
		})
	}
}
