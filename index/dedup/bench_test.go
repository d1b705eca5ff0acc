package dedup

import (
	"bufio"
	"encoding/json"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"testing"
)

// benchRows returns up to max rows of real text: the prompt and completion of T0 rows from
// ../shared/data when it is there, else the fixture's rows (outside text too, but few and short).
func benchRows(b testing.TB, max int) ([][]byte, string) {
	b.Helper()
	files, _ := filepath.Glob("../../../shared/data/t0-train-50k-per-template/data_per_template/*.jsonl")
	var rows [][]byte
	for _, f := range files {
		fh, err := os.Open(f)
		if err != nil {
			b.Fatal(err)
		}
		sc := bufio.NewScanner(fh)
		sc.Buffer(nil, 1<<24)
		for sc.Scan() && len(rows) < max {
			var r struct{ Prompt, Completion string }
			if err := json.Unmarshal(sc.Bytes(), &r); err != nil {
				b.Fatalf("%s: %v", f, err)
			}
			rows = append(rows, []byte(r.Prompt+"\n"+r.Completion))
		}
		fh.Close()
		if len(rows) >= max {
			return rows, "T0"
		}
	}
	if len(rows) > 0 {
		return rows, "T0"
	}
	texts, _ := loadFixture(b)
	for len(rows) < max {
		for _, t := range texts {
			rows = append(rows, []byte(t))
		}
	}
	return rows[:max], "fixture"
}

func report(b *testing.B, rows int, bytes int64) {
	s := b.Elapsed().Seconds()
	b.ReportMetric(float64(rows)/s, "rows/s")
	b.ReportMetric(float64(bytes)/s/1e6, "MB/s")
}

func BenchmarkHasher(b *testing.B) {
	rows, _ := benchRows(b, 20000)
	var h Hasher
	var bytes int64
	b.ResetTimer()
	for i := range b.N {
		r := rows[i%len(rows)]
		h.Write(r)
		h.Sum()
		bytes += int64(len(r))
	}
	report(b, b.N, bytes)
}

func BenchmarkSign(b *testing.B) {
	rows, _ := benchRows(b, 20000)
	s, err := NewSigner(Params{})
	if err != nil {
		b.Fatal(err)
	}
	var sig Signature
	var bytes int64
	b.ResetTimer()
	for i := range b.N {
		r := rows[i%len(rows)]
		s.Write(r)
		sig = s.Sum(sig)
		bytes += int64(len(r))
	}
	report(b, b.N, bytes)
	b.ReportMetric(s.Work().FLOPs()/float64(b.N), "FLOPs/row")
}

// BenchmarkDetector feeds the signatures of 20,000 rows to a new Detector per iteration and
// reports rows/s and the bytes held per row.
func BenchmarkDetector(b *testing.B) {
	rows, _ := benchRows(b, 20000)
	s, err := NewSigner(Params{})
	if err != nil {
		b.Fatal(err)
	}
	sigs := make([]Signature, len(rows))
	for i, r := range rows {
		s.Write(r)
		sigs[i] = s.Sum(nil)
	}
	var d *Detector
	var pairs []Pair
	b.ResetTimer()
	for range b.N {
		d, err = NewDetector(Params{})
		if err != nil {
			b.Fatal(err)
		}
		for i, sig := range sigs {
			if pairs, err = d.Add(pairs[:0], i, sig); err != nil {
				b.Fatal(err)
			}
		}
	}
	b.ReportMetric(float64(b.N*len(sigs))/b.Elapsed().Seconds(), "rows/s")
	b.ReportMetric(float64(d.Bytes())/float64(len(sigs)), "B/row")
}

// BenchmarkExactAdd reports the heap bytes per distinct key held by Exact.
func BenchmarkExactAdd(b *testing.B) {
	const n = 1 << 20
	rng := rand.New(rand.NewPCG(1, 2))
	keys := make([]Key, n)
	for i := range keys {
		for j := range keys[i] {
			keys[i][j] = byte(rng.Uint32())
		}
	}
	var held uint64
	b.ResetTimer()
	for range b.N {
		var before, after runtime.MemStats
		runtime.GC()
		runtime.ReadMemStats(&before)
		var ex Exact
		for i, k := range keys {
			if _, err := ex.Add(i, k); err != nil {
				b.Fatal(err)
			}
		}
		runtime.GC()
		runtime.ReadMemStats(&after)
		held = after.HeapAlloc - before.HeapAlloc
		runtime.KeepAlive(&ex)
	}
	b.ReportMetric(float64(b.N*n)/b.Elapsed().Seconds(), "rows/s")
	b.ReportMetric(float64(held)/n, "B/row")
}

// BenchmarkPipeline runs what a pool pass would: exact keys first, then signatures and LSH for
// the rows that are not exact duplicates. It reports rows/s, MB/s, and the share of rows that
// would be dropped as exact or near duplicates.
func BenchmarkPipeline(b *testing.B) {
	rows, src := benchRows(b, 50000)
	b.Logf("%d rows from %s", len(rows), src)
	var bytes int64
	var exactDups, nearDropped int
	b.ResetTimer()
	for range b.N {
		var h Hasher
		var ex Exact
		s, err := NewSigner(Params{})
		if err != nil {
			b.Fatal(err)
		}
		d, err := NewDetector(Params{})
		if err != nil {
			b.Fatal(err)
		}
		var sig Signature
		var pairs []Pair
		exactDups = 0
		for i, r := range rows {
			bytes += int64(len(r))
			h.Write(r)
			first, err := ex.Add(i, h.Sum())
			if err != nil {
				b.Fatal(err)
			}
			if first != i {
				exactDups++
				if err := d.Clusters().Union(first, i); err != nil {
					b.Fatal(err)
				}
				continue
			}
			s.Write(r)
			sig = s.Sum(sig)
			if pairs, err = d.Add(pairs[:0], i, sig); err != nil {
				b.Fatal(err)
			}
		}
		kept, err := d.Clusters().Keep(make([]float64, len(rows)))
		if err != nil {
			b.Fatal(err)
		}
		nearDropped = -exactDups
		for i, k := range kept {
			if k != i {
				nearDropped++
			}
		}
	}
	report(b, b.N*len(rows), bytes)
	b.ReportMetric(float64(exactDups)/float64(len(rows)), "exact-dup-share")
	b.ReportMetric(float64(nearDropped)/float64(len(rows)), "near-dup-share")
}

// BenchmarkAddMarks gives a new Detector, each iteration, the marks of 300,000 rows whose band keys
// are all different (random, seeded), its table growing as a build's does: every look-up a miss in
// a table larger than the cache, the case a build of distinct rows meets. It reports rows/s.
func BenchmarkAddMarks(b *testing.B) {
	const n = 300000
	d0, _ := NewDetector(ForThreshold(DefaultThreshold))
	ml := d0.MarksLen()
	marks := make([]byte, n*ml)
	rng := rand.New(rand.NewPCG(5, 6))
	for i := range marks {
		marks[i] = byte(rng.Uint32())
	}
	var pairs []Pair
	b.ResetTimer()
	for range b.N {
		d, _ := NewDetector(ForThreshold(DefaultThreshold))
		for r := range n {
			var err error
			if pairs, err = d.AddMarks(pairs[:0], r, marks[r*ml:(r+1)*ml]); err != nil {
				b.Fatal(err)
			}
		}
	}
	b.ReportMetric(float64(b.N*n)/b.Elapsed().Seconds(), "rows/s")
}
