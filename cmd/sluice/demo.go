package main

import (
	"context"
	"fmt"
	"path/filepath"

	"github.com/spf13/pflag"

	"sluice/budget"
	"sluice/cmd/sluice/demodata"
	"sluice/index"
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
	fs := newFlags("demo")
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
	pool, target, err := demodata.WriteFiles(out, index.Folder(), run.Folder())
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
	opt.Budget, _ = budget.ParseFLOPs(demoBudget) // a constant that parses
	de := *e
	de.stderr = e.stdout // the demo's whole story goes to stdout
	_, err = pick(ctx, &de, opt, quiet)
	if err != nil || quiet {
		return err
	}
	return demodata.WriteRunTopics(e.stdout, runDir)
}
