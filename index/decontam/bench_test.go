package decontam

import (
	"bufio"
	"encoding/json"
	"os"
	"path/filepath"
	"testing"
)

// sharedRows reads up to max rows of ../shared/data: the self-instruct evaluation tasks
// (instruction, input and output of each instance) and T0 pool rows (prompt and completion), or
// skips.
func sharedRows(b *testing.B, max int) (eval, pool []string) {
	b.Helper()
	base := "../../../shared/data"
	evalFiles, _ := filepath.Glob(filepath.Join(base, "self-instruct-human-eval/*.jsonl"))
	poolFiles, _ := filepath.Glob(filepath.Join(base, "t0-train-50k-per-template/data_per_template/*.jsonl"))
	if len(evalFiles) == 0 || len(poolFiles) == 0 {
		b.Skip("../shared/data is absent: benchmark needs the self-instruct and T0 corpora")
	}
	each := func(files []string, fn func([]byte) bool) {
		for _, f := range files {
			fh, err := os.Open(f)
			if err != nil {
				b.Fatal(err)
			}
			sc := bufio.NewScanner(fh)
			sc.Buffer(nil, 1<<24)
			for sc.Scan() {
				if !fn(sc.Bytes()) {
					fh.Close()
					return
				}
			}
			fh.Close()
		}
	}
	each(evalFiles, func(line []byte) bool {
		var r struct {
			Instruction string
			Instances   []struct{ Input, Output string }
		}
		if err := json.Unmarshal(line, &r); err != nil {
			b.Fatal(err)
		}
		for _, in := range r.Instances {
			eval = append(eval, r.Instruction+"\n"+in.Input+"\n"+in.Output)
		}
		return true
	})
	each(poolFiles, func(line []byte) bool {
		var r struct{ Prompt, Completion string }
		if err := json.Unmarshal(line, &r); err != nil {
			b.Fatal(err)
		}
		pool = append(pool, r.Prompt+"\n"+r.Completion)
		return len(pool) < max
	})
	return eval, pool
}

func BenchmarkWords(b *testing.B) {
	_, pool := sharedRows(b, 20000)
	var w []string
	var bytes int64
	b.ResetTimer()
	for i := range b.N {
		t := pool[i%len(pool)]
		w = Words(w[:0], t)
		bytes += int64(len(t))
	}
	s := b.Elapsed().Seconds()
	b.ReportMetric(float64(bytes)/s/1e6, "MB/s")
	b.ReportMetric(float64(b.N)/s, "rows/s")
}

// BenchmarkBuild builds the set of the evaluation rows' 13-grams, the pool rows standing in for
// a larger evaluation set, and reports n-grams/s and bytes per distinct n-gram.
func BenchmarkBuild(b *testing.B) {
	_, pool := sharedRows(b, 20000)
	words := make([][]string, len(pool))
	for i, t := range pool {
		words[i] = Words(nil, t)
	}
	var s *Set
	var added int
	b.ResetTimer()
	for range b.N {
		bu, err := NewBuilder(DefaultN)
		if err != nil {
			b.Fatal(err)
		}
		added = 0
		for i, w := range words {
			if err := bu.Add(0, int64(i+1), w); err != nil {
				b.Fatal(err)
			}
			added += max(len(w)-DefaultN+1, min(len(w), 1))
		}
		s = bu.Set()
	}
	b.ReportMetric(float64(b.N*added)/b.Elapsed().Seconds(), "n-grams/s")
	b.ReportMetric(float64(s.Bytes())/float64(s.Len()), "B/n-gram")
}

// BenchmarkCheck checks T0 pool rows (words split beforehand; BenchmarkWords measures that)
// against the self-instruct evaluation tasks alone, and against a large set made of those and
// 20,000 other T0 rows (some templates and passages recur, so hits are real overlaps). It
// reports rows/s, the share of rows hit and the size of the set.
func BenchmarkCheck(b *testing.B) {
	eval, pool := sharedRows(b, 40000)
	half := len(pool) / 2
	words := make([][]string, len(pool)-half)
	for i, t := range pool[half:] {
		words[i] = Words(nil, t)
	}
	for _, large := range []bool{false, true} {
		name := "self-instruct"
		if large {
			name = "large"
		}
		b.Run(name, func(b *testing.B) {
			bu, err := NewBuilder(DefaultN)
			if err != nil {
				b.Fatal(err)
			}
			for i, t := range eval {
				if err := bu.Add(0, int64(i+1), Words(nil, t)); err != nil {
					b.Fatal(err)
				}
			}
			if large {
				for i, t := range pool[:half] {
					if err := bu.Add(1, int64(i+1), Words(nil, t)); err != nil {
						b.Fatal(err)
					}
				}
			}
			s := bu.Set()
			hits := 0
			b.ResetTimer()
			for i := range b.N {
				if _, ok := s.Check(words[i%len(words)]); ok {
					hits++
				}
			}
			b.ReportMetric(float64(b.N)/b.Elapsed().Seconds(), "rows/s")
			b.ReportMetric(float64(hits)/float64(b.N), "hit-share")
			b.ReportMetric(float64(s.Len()), "n-grams")
		})
	}
}
