package main

import (
	"bufio"
	"context"
	"encoding/json"

	"github.com/spf13/pflag"

	"sluice/select/audit"
)

type whyCmd struct{}

func (*whyCmd) name() string    { return "why" }
func (*whyCmd) summary() string { return "explain the score and fate of pool rows in a run" }

func (*whyCmd) flags() *pflag.FlagSet {
	fs := newFlags("why", "sluice why --run RUN [--json] ID...",
		`Explains pool rows of a run: the score and rank, the terms that made the score with each one's
part (tf, df, idf, length factor, weight) summing to the score, the target rows that matched best
with the terms they share, the ledger at the row's place against the budget, and why a row was not
kept. It recomputes each score from the index and the target the run used, and checks that it agrees
with scores.jsonl to the last bit. IDs are as in scores.jsonl.`,
		`  sluice why --run run1 pool-0028
  sluice why --run run1 --json train.jsonl:1234 train.jsonl:99 | jq .
  sluice why --run copied/run1 --index /data/pool.idx --target /data/support.jsonl pool-0028`)
	fs.String("run", "", "run folder made by 'sluice pick' (required)")
	fs.Bool("json", false, "print one JSON object per row instead of text")
	fs.Int("targets", 3, "how many of the best-matching target rows to show")
	addMovedFlags(fs)
	return fs
}

func (c *whyCmd) run(ctx context.Context, e *env, fs *pflag.FlagSet) error {
	dir, _ := fs.GetString("run")
	asJSON, _ := fs.GetBool("json")
	top, _ := fs.GetInt("targets")
	if dir == "" {
		return usagef("--run is required")
	}
	if fs.NArg() == 0 {
		return usagef("name at least one row id")
	}
	if top < 0 {
		return usagef("--targets %d: must be 0 or more", top)
	}
	rows, err := audit.Explain(ctx, dir, movedFrom(fs), fs.Args(), top)
	if err != nil {
		return err
	}
	w := bufio.NewWriter(e.stdout)
	defer w.Flush()
	for _, r := range rows {
		if asJSON {
			b, err := json.Marshal(r)
			if err != nil {
				return err
			}
			w.Write(append(b, '\n'))
			continue
		}
		r.WriteText(w)
	}
	return nil
}
