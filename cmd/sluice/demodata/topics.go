package demodata

import (
	"bufio"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strings"
)

type topicCount struct {
	name       string
	pool, kept int
}

// countTopics counts the rows of each topic in JSONL rows with a "topic" field.
func countTopics(r io.Reader, into map[string]int) (int, error) {
	sc := bufio.NewScanner(r)
	sc.Buffer(nil, 1<<20)
	n := 0
	for sc.Scan() {
		var row struct{ Topic string }
		if err := json.Unmarshal(sc.Bytes(), &row); err != nil {
			return n, fmt.Errorf("line %d: %w", n+1, err)
		}
		into[row.Topic]++
		n++
	}
	return n, sc.Err()
}

// WriteTopics writes how rows kept from the demo pool fall into its topics, the target's first,
// and the share of them on the target task: the demo's measure of a pick, which the labels of the
// invented data make possible.
func WriteTopics(w io.Writer, kept io.Reader) error {
	p, k := map[string]int{}, map[string]int{}
	rows, err := countTopics(strings.NewReader(pool), p)
	if err != nil {
		return err
	}
	nkept, err := countTopics(kept, k)
	if err != nil {
		return fmt.Errorf("kept rows: %w", err)
	}
	var topics []topicCount
	for name, n := range p {
		topics = append(topics, topicCount{name: name, pool: n, kept: k[name]})
	}
	sort.Slice(topics, func(i, j int) bool {
		if topics[i].kept != topics[j].kept {
			return topics[i].kept > topics[j].kept
		}
		return topics[i].name < topics[j].name
	})
	fmt.Fprintf(w, "\nkept rows by topic:\n")
	var restRows, restTopics int
	for _, t := range topics {
		if t.kept == 0 && t.name != TargetTopic {
			restRows += t.pool
			restTopics++
			continue
		}
		mark := ""
		if t.name == TargetTopic {
			mark = "   <- the target task"
		}
		fmt.Fprintf(w, "  %-22s %4d of %4d rows kept (the topic is %4.1f%% of the pool)%s\n", t.name, t.kept, t.pool, 100*float64(t.pool)/float64(rows), mark)
	}
	if restTopics > 0 {
		fmt.Fprintf(w, "  %d other topics           0 of %4d rows kept\n", restTopics, restRows)
	}
	if nkept > 0 {
		_, err = fmt.Fprintf(w, "precision: %.1f%% of kept rows are %s\n", 100*float64(k[TargetTopic])/float64(nkept), TargetTopic)
	}
	return err
}

// WriteRunTopics writes WriteTopics of the demo run folder runDir's kept rows, and where the run's
// files are.
func WriteRunTopics(w io.Writer, runDir string) error {
	kept, err := os.Open(filepath.Join(runDir, "kept.jsonl"))
	if err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	defer kept.Close()
	if err := WriteTopics(w, kept); err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	_, err = fmt.Fprintf(w, "\nfiles:\n  %s  the kept rows, byte for byte\n  %s  every row's score, rank and fate\n  %s  the FLOP ledger\n",
		filepath.Join(runDir, "kept.jsonl"), filepath.Join(runDir, "scores.jsonl"), filepath.Join(runDir, "ledger.json"))
	return err
}
