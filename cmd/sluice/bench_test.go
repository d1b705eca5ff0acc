package main

import (
	"bufio"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"sluice/index"
	"sluice/score"
	"sluice/select/run"
)

// t0Split makes, from the shared T0 corpus, a pool of every template file but some of one cluster's,
// and a target of up to n rows from those held out, the way ../shared/scripts/t0-split.py does.
func t0Split(b *testing.B, cluster string, n int) (pool []string, target string) {
	b.Helper()
	base := "../../../shared/data/t0-train-50k-per-template"
	f, err := os.Open(filepath.Join(base, "files.tsv"))
	if err != nil {
		b.Skip("../shared/data is absent: benchmark needs the shared T0 corpus")
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	sc.Scan()
	var held []string
	k := 0
	for sc.Scan() {
		cols := strings.Split(sc.Text(), "\t")
		path := filepath.Join(base, "data_per_template", cols[0])
		if cols[2] == cluster && k%5 == 0 {
			held = append(held, path)
		} else {
			pool = append(pool, path)
		}
		if cols[2] == cluster {
			k++
		}
	}
	target = filepath.Join(b.TempDir(), "target.jsonl")
	out, _ := os.Create(target)
	w := bufio.NewWriter(out)
	for _, h := range held {
		data, _ := os.ReadFile(h)
		for _, line := range strings.SplitAfter(string(data), "\n") {
			if n > 0 && strings.TrimSpace(line) != "" {
				w.WriteString(line)
				n--
			}
		}
	}
	w.Flush()
	out.Close()
	return pool, target
}

// BenchmarkPick builds an index of the shared T0 pool once, then times picks with a new 1,000-row
// target against it and reports each pick's time as a share of the build's, both measured here.
func BenchmarkPick(b *testing.B) {
	pool, target := t0Split(b, "sentiment", 1000)
	dir := b.TempDir()
	idx := filepath.Join(dir, "idx")
	start := time.Now()
	if _, err := index.Build(context.Background(), idx, pool, index.Options{Text: "prompt,completion"}); err != nil {
		b.Fatal(err)
	}
	build := time.Since(start)
	for _, method := range []score.Method{score.BM25, score.TFIDF} {
		for _, agg := range []score.Aggregate{score.Sum, score.Max} {
			b.Run(method.String()+"-"+agg.String(), func(b *testing.B) {
				p := score.DefaultParams()
				p.Method, p.Aggregate = method, agg
				opt := run.Options{Index: idx, Target: target, Params: p, Budget: 1e16, TrainParams: 1e9, Epochs: 1, Version: "bench",
					Out: filepath.Join(dir, "run")}
				for b.Loop() {
					if _, err := run.Pick(context.Background(), opt); err != nil {
						b.Fatal(err)
					}
				}
				per := b.Elapsed() / time.Duration(b.N)
				b.ReportMetric(100*per.Seconds()/build.Seconds(), "%build")
			})
		}
	}
}
