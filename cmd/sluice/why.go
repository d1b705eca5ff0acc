package main

import (
	"bufio"
	"cmp"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"slices"
	"strings"
	"text/tabwriter"

	"github.com/spf13/pflag"

	"sluice/budget"
	"sluice/score"
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
		printWhy(w, r)
	}
	return nil
}

// printWhy prints one explained row as text.
func printWhy(w *bufio.Writer, r audit.Row) {
	fmt.Fprintf(w, "row %s (%s)\n", r.ID, r.Source)
	fmt.Fprintf(w, "  score   %v (%s), rank %d of %d\n", r.Score, r.Method, r.Rank, r.Rows)
	fmt.Fprintf(w, "  fate    %s\n", r.Why)
	fmt.Fprintf(w, "  ledger  %s of %s FLOPs after it; its %d tokens\n", budget.FormatFLOPs(r.Ledger), budget.FormatFLOPs(r.Budget), r.Tokens)
	fmt.Fprintf(w, "  text    %s\n", r.Text)
	switch {
	case len(r.Parts) > 0:
		fmt.Fprintf(w, "  terms   largest contribution first (they add up to the score)\n")
		tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintf(tw, "\tterm\ttf\tdf\tidf\ttf part\tweight\tcontribution\t\n")
		parts := slices.Clone(r.Parts)
		slices.SortStableFunc(parts, func(a, b score.Part) int { return cmp.Compare(b.Contribution, a.Contribution) })
		for _, p := range parts {
			fmt.Fprintf(tw, "\t%s\t%d\t%d\t%.4f\t%.4f\t%.4g\t%.6g\t\n", p.Term, p.TF, p.DF, p.IDF, p.TFPart, p.QueryWeight, p.Contribution)
		}
		tw.Flush()
	case len(r.Words) == 0 && !math.IsNaN(r.Score) && (strings.HasPrefix(r.Method, "bm25") || strings.HasPrefix(r.Method, "tfidf")):
		fmt.Fprintf(w, "  terms   none: this row shares no term with any target row, so its score is 0\n")
	}
	if len(r.Words) > 0 {
		fmt.Fprintf(w, "  tokens  that moved the score most (part = (target - pool log-probability) / symbols)\n")
		tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintf(tw, "\ttoken\tat\ttarget ln p\tn\tpool ln p\tn\tpart\t\n")
		for _, x := range r.Words {
			fmt.Fprintf(tw, "\t%s\t%d\t%.4f\t%d\t%.4f\t%d\t%+.5g\t\n", x.Token, x.Pos, x.Target, x.TargetOrder, x.Pool, x.PoolOrder, x.Part)
		}
		tw.Flush()
	}
	if len(r.Targets) > 0 {
		fmt.Fprintf(w, "  best target rows\n")
		for _, t := range r.Targets {
			fmt.Fprintf(w, "    %-20s %.6g  shares: %s\n", t.ID, t.Score, strings.Join(t.Shared, ", "))
		}
	}
	fmt.Fprintln(w)
}
