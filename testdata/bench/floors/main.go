// Command floors times two floors under sluice's own work, for the bench scripts to set beside a
// build and a pick of the same files: the analyzer alone over a pool's text (read and parsed
// first, outside the time), and one read of the postings a target's terms need (every list
// decoded once, as a pick reads them), each on every core. It prints "analyzer_s X postings_s Y",
// the best of three rounds each.
//
//	go run ./testdata/bench/floors -pool POOL.jsonl -text prompt,completion -index IDX -target TARGET.jsonl
package main

import (
	"bufio"
	"flag"
	"fmt"
	"os"
	"runtime"
	"sync"
	"time"

	"sluice/index"
	"sluice/index/analysis"
	"sluice/index/jsonl"
)

func main() {
	pool := flag.String("pool", "", "the pool, JSONL")
	text := flag.String("text", "", "its text fields")
	analyzer := flag.String("analyzer", "english", "the analyzer")
	dir := flag.String("index", "", "an index of the pool")
	target := flag.String("target", "", "a target set, read with the index's settings")
	flag.Parse()
	a, err := analyzerFloor(*pool, *text, *analyzer)
	if err != nil {
		fmt.Fprintln(os.Stderr, "floors:", err)
		os.Exit(1)
	}
	p, err := postingsFloor(*dir, *target)
	if err != nil {
		fmt.Fprintln(os.Stderr, "floors:", err)
		os.Exit(1)
	}
	fmt.Printf("analyzer_s %.3f postings_s %.3f\n", a.Seconds(), p.Seconds())
}

// analyzerFloor reads the pool's text fields into memory, then times the analyzer over all of
// them, a share of the rows on each core.
func analyzerFloor(pool, text, name string) (time.Duration, error) {
	spec, err := jsonl.ParseSpec(text)
	if err != nil {
		return 0, err
	}
	ex, err := jsonl.NewExtractor(spec, "", "")
	if err != nil {
		return 0, err
	}
	f, err := os.Open(pool)
	if err != nil {
		return 0, err
	}
	defer f.Close()
	var texts [][]byte
	sc := jsonl.NewScanner(bufio.NewReaderSize(f, 1<<20), 64<<20)
	for sc.Scan() {
		// Rows that do not parse are left out: the floor is the analyzer's, not the parser's.
		_, _ = ex.Extract(sc.Bytes(), func(part []byte) { texts = append(texts, append([]byte(nil), part...)) })
	}
	if err := sc.Err(); err != nil {
		return 0, fmt.Errorf("read %s: %w", pool, err)
	}
	nw := runtime.GOMAXPROCS(0)
	ans := make([]*analysis.Analyzer, nw)
	for i := range ans {
		if ans[i], err = analysis.New(name); err != nil {
			return 0, err
		}
	}
	return best(func() {
		var wg sync.WaitGroup
		for i, an := range ans {
			wg.Go(func() {
				n := 0
				for j := i; j < len(texts); j += nw {
					an.Each(texts[j], func([]byte) { n++ })
				}
			})
		}
		wg.Wait()
	}), nil
}

// postingsFloor times one read of the postings of the target's terms, as the index's analyzer and
// text fields make them: every list decoded once, a share of the terms on each core.
func postingsFloor(dir, target string) (time.Duration, error) {
	ix, err := index.Open(dir)
	if err != nil {
		return 0, err
	}
	defer ix.Close()
	an, err := ix.NewAnalyzer()
	if err != nil {
		return 0, err
	}
	m := ix.Meta()
	targets, _, err := index.ReadTargets(target, m.Text, m.IDField, an, m.MaxRowBytes)
	if err != nil {
		return 0, err
	}
	seen := map[string]bool{}
	var terms []string
	for _, t := range targets {
		for _, term := range t.Terms {
			if !seen[term] {
				seen[term] = true
				terms = append(terms, term)
			}
		}
	}
	nw := runtime.GOMAXPROCS(0)
	errs := make([]error, nw)
	d := best(func() {
		var wg sync.WaitGroup
		for i := range nw {
			wg.Go(func() {
				var rows, tfs []uint32
				for j := i; j < len(terms); j += nw {
					var err error
					if rows, tfs, err = ix.Postings(terms[j], rows[:0], tfs[:0]); err != nil {
						errs[i] = err
						return
					}
				}
			})
		}
		wg.Wait()
	})
	for _, err := range errs {
		if err != nil {
			return 0, err
		}
	}
	return d, nil
}

// best runs fn three times and returns its shortest time.
func best(fn func()) time.Duration {
	var b time.Duration
	for i := range 3 {
		t := time.Now()
		fn()
		if d := time.Since(t); i == 0 || d < b {
			b = d
		}
	}
	return b
}
