package main

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"sort"

	"github.com/spf13/pflag"

	"sluice/cmd/sluice/demodata"
	"sluice/index"
	"sluice/index/atomicdir"
	"sluice/score"
	"sluice/select/run"
)

type demoCmd struct{}

func (*demoCmd) name() string    { return "demo" }
func (*demoCmd) summary() string { return "index and pick on the demo data built into sluice" }

// The demo's budget and model are chosen so that roughly the target topic's share of the pool fits.
const (
	demoBudget      = "6e12"
	demoTrainParams = 125e6
)

func (*demoCmd) flags() *pflag.FlagSet {
	fs := newFlags("demo", "sluice demo [--out DIR]",
		`Writes the built-in demo pool and target rows to DIR, indexes the pool, picks rows for the target
task under a small budget, and says what was kept and where the files are. The scenario is invented.`,
		`  sluice demo
  sluice demo --out /tmp/sluice-demo --method tfidf`)
	fs.String("out", "sluice-demo", "folder for the demo's files: made, or an earlier demo's replaced")
	fs.String("method", "bm25", "scoring: bm25 or tfidf")
	fs.String("aggregate", "sum", "over target rows: sum or max")
	fs.BoolP("quiet", "q", false, "print nothing but errors")
	return fs
}

func (c *demoCmd) run(ctx context.Context, e *env, fs *pflag.FlagSet) error {
	out, _ := fs.GetString("out")
	quiet, _ := fs.GetBool("quiet")
	ms, _ := fs.GetString("method")
	as, _ := fs.GetString("aggregate")
	p := score.DefaultParams()
	var err error
	if p.Method, err = score.ParseMethod(ms); err != nil {
		return usagef("--method: %v", err)
	}
	if p.Aggregate, err = score.ParseAggregate(as); err != nil {
		return usagef("--aggregate: %v", err)
	}
	pool, target, err := writeDemoData(out)
	if err != nil {
		return err
	}
	say := func(format string, a ...any) {
		if !quiet {
			fmt.Fprintf(e.stdout, format, a...)
		}
	}
	say("%s\n\n", demodata.Scenario)
	idx := filepath.Join(out, "index")
	say("$ sluice index --out %s --id id %s\n", idx, pool)
	st, err := index.Build(ctx, idx, []string{pool}, index.Options{ID: "id"})
	if err != nil {
		return err
	}
	say("indexed %d rows (%s; %d terms; rows read %d = indexed %d + quarantined %d)\n\n", st.Rows, st.Text, st.Terms, st.RowsRead, st.Rows, st.RowsRejected)

	runDir := filepath.Join(out, "run")
	eval := filepath.Join(out, "eval.jsonl")
	say("$ sluice pick --index %s --target %s --exclude %s --method %s --aggregate %s --budget %s --train-params 125M --out %s\n",
		idx, target, eval, p.Method, p.Aggregate, demoBudget, runDir)
	opt := run.Options{Index: idx, Target: target, Params: p, TrainParams: demoTrainParams, Epochs: 1,
		Out: runDir, BudgetHow: "--budget " + demoBudget, Guards: run.Guards{Exclude: []string{eval}}}
	opt.Command = []string{"sluice", "pick", "--index", idx, "--target", target, "--exclude", eval, "--method", p.Method.String(),
		"--aggregate", p.Aggregate.String(), "--budget", demoBudget, "--train-params", "125M", "--out", runDir}
	if _, err := fmt.Sscanf(demoBudget, "%g", &opt.Budget); err != nil {
		return err
	}
	de := *e
	de.stderr = e.stdout // the demo's whole story goes to stdout
	pr, err := pick(ctx, &de, opt, quiet)
	if err != nil || quiet {
		return err
	}
	return printDemoTopics(e, pool, runDir, st.Rows, len(pr.Kept))
}

// demoFolder describes the demo's folder: the built-in pool, byte for byte, and nothing but the
// demo's files, so that a rerun replaces only what an earlier demo wrote.
func demoFolder() atomicdir.Kind {
	return atomicdir.Kind{Name: "demo", Mark: "pool.jsonl",
		IsOur: func(b []byte) bool { return bytes.Equal(b, demodata.Pool()) },
		Holds: func(name string) bool {
			return name == "pool.jsonl" || name == "target.jsonl" || name == "eval.jsonl" || name == "index" || name == "run"
		}}
}

// writeDemoData writes the built-in pool and target rows into the folder out, which must be new,
// empty or an earlier demo's.
func writeDemoData(out string) (pool, target string, err error) {
	if _, err := os.Stat(out); err == nil {
		if err := atomicdir.CheckOut(out, demoFolder(), nil, index.Folder(), run.Folder()); err != nil {
			return "", "", err
		}
	}
	if err := os.MkdirAll(out, 0o755); err != nil {
		return "", "", fmt.Errorf("demo: %w", err)
	}
	pool, target = filepath.Join(out, "pool.jsonl"), filepath.Join(out, "target.jsonl")
	for _, f := range []struct {
		path string
		data []byte
	}{{pool, demodata.Pool()}, {target, demodata.Target()}, {filepath.Join(out, "eval.jsonl"), demodata.Eval()}} {
		if err := os.WriteFile(f.path, f.data, 0o644); err != nil {
			return "", "", fmt.Errorf("demo: %w", err)
		}
	}
	return pool, target, nil
}

// printDemoTopics says how the kept rows fall into the demo's topics, the target's first.
func printDemoTopics(e *env, pool, runDir string, rows int64, kept int) error {
	topics, err := topicCounts(pool, filepath.Join(runDir, "kept.jsonl"))
	if err != nil {
		return err
	}
	want := demodata.TargetTopic
	w := e.stdout
	fmt.Fprintf(w, "\nkept rows by topic:\n")
	var restRows, restTopics, hit int
	for _, t := range topics {
		if t.name == want {
			hit = t.kept
		}
		if t.kept == 0 && t.name != want {
			restRows += t.pool
			restTopics++
			continue
		}
		mark := ""
		if t.name == want {
			mark = "   <- the target task"
		}
		fmt.Fprintf(w, "  %-22s %4d of %4d rows kept (the topic is %4.1f%% of the pool)%s\n", t.name, t.kept, t.pool, 100*float64(t.pool)/float64(rows), mark)
	}
	if restTopics > 0 {
		fmt.Fprintf(w, "  %d other topics           0 of %4d rows kept\n", restTopics, restRows)
	}
	if kept > 0 {
		fmt.Fprintf(w, "precision: %.1f%% of kept rows are %s\n", 100*float64(hit)/float64(kept), want)
	}
	fmt.Fprintf(w, "\nfiles:\n  %s  the kept rows, byte for byte\n  %s  every row's score, rank and fate\n  %s  the FLOP ledger\n",
		filepath.Join(runDir, "kept.jsonl"), filepath.Join(runDir, "scores.jsonl"), filepath.Join(runDir, "ledger.json"))
	return nil
}

type topicCount struct {
	name       string
	pool, kept int
}

func topicCounts(pool, kept string) ([]topicCount, error) {
	count := func(path string, into map[string]int) error {
		f, err := os.Open(path)
		if err != nil {
			return err
		}
		defer f.Close()
		sc := bufio.NewScanner(f)
		sc.Buffer(nil, 1<<20)
		for sc.Scan() {
			var row struct{ Topic string }
			if err := json.Unmarshal(sc.Bytes(), &row); err != nil {
				return fmt.Errorf("%s: %w", path, err)
			}
			into[row.Topic]++
		}
		return sc.Err()
	}
	p, k := map[string]int{}, map[string]int{}
	if err := errors.Join(count(pool, p), count(kept, k)); err != nil {
		return nil, fmt.Errorf("demo: %w", err)
	}
	var out []topicCount
	for name, n := range p {
		out = append(out, topicCount{name: name, pool: n, kept: k[name]})
	}
	sort.Slice(out, func(i, j int) bool {
		if out[i].kept != out[j].kept {
			return out[i].kept > out[j].kept
		}
		return out[i].name < out[j].name
	})
	return out, nil
}
