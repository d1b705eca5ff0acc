// Command manyrows writes a pool of many short rows for the bench scripts' memory measurements: a
// pick's memory grows with the pool's rows, and the shared files hold too few. Each row joins two
// sentences drawn at random (a seeded generator, so the same flags write the same bytes) from the
// sentences of the JSONL files named, as {"id": ..., "text": ...}. Only speed and memory are
// measured on such a pool: its rows are not real instructions.
//
//	go run ./testdata/bench/manyrows -rows 40000000 -text prompt,completion FILE.jsonl... > pool.jsonl
package main

import (
	"bufio"
	"bytes"
	"encoding/json"
	"flag"
	"fmt"
	"math/rand/v2"
	"os"
	"strconv"

	"sluice/index/jsonl"
)

func main() {
	rows := flag.Int("rows", 1000000, "rows to write")
	text := flag.String("text", "prompt,completion", "the text fields of the files read")
	seed := flag.Uint64("seed", 1, "the generator's seed")
	flag.Parse()
	if err := run(*rows, *text, *seed, flag.Args()); err != nil {
		fmt.Fprintln(os.Stderr, "manyrows:", err)
		os.Exit(1)
	}
}

func run(rows int, text string, seed uint64, files []string) error {
	sentences, err := readSentences(text, files)
	if err != nil {
		return err
	}
	if len(sentences) < 2 {
		return fmt.Errorf("%d sentences in the files named: too few to join", len(sentences))
	}
	fmt.Fprintf(os.Stderr, "manyrows: %d rows from %d distinct sentences\n", rows, len(sentences))
	r := rand.New(rand.NewPCG(seed, seed^0x9e3779b97f4a7c15))
	w := bufio.NewWriterSize(os.Stdout, 1<<20)
	var line []byte
	for i := range rows {
		a, b := sentences[r.IntN(len(sentences))], sentences[r.IntN(len(sentences))]
		line = append(line[:0], `{"id":"m`...)
		line = strconv.AppendInt(line, int64(i), 10)
		line = append(line, `","text":`...)
		line = strconv.AppendQuote(line, a+" "+b)
		line = append(line, "}\n"...)
		if _, err := w.Write(line); err != nil {
			return err
		}
	}
	return w.Flush()
}

// readSentences splits the files' text fields at ". " and newlines and keeps each distinct piece of
// 20 to 300 bytes that is valid JSON text once quoted.
func readSentences(text string, files []string) ([]string, error) {
	spec, err := jsonl.ParseSpec(text)
	if err != nil {
		return nil, err
	}
	ex, err := jsonl.NewExtractor(spec, "", "")
	if err != nil {
		return nil, err
	}
	seen := map[string]bool{}
	var out []string
	for _, name := range files {
		f, err := os.Open(name)
		if err != nil {
			return nil, err
		}
		sc := jsonl.NewScanner(bufio.NewReaderSize(f, 1<<20), 64<<20)
		for sc.Scan() {
			_, _ = ex.Extract(sc.Bytes(), func(part []byte) {
				for _, line := range bytes.Split(part, []byte("\n")) {
					for _, s := range bytes.Split(line, []byte(". ")) {
						s = bytes.TrimSpace(s)
						if len(s) < 20 || len(s) > 300 || seen[string(s)] || !json.Valid(strconv.AppendQuote(nil, string(s))) {
							continue
						}
						seen[string(s)] = true
						out = append(out, string(s))
					}
				}
			})
		}
		f.Close()
		if err := sc.Err(); err != nil {
			return nil, fmt.Errorf("read %s: %w", name, err)
		}
	}
	return out, nil
}
