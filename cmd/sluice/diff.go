package main

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
	"strings"

	"github.com/spf13/pflag"

	"sluice/budget"
	"sluice/select/audit"
)

type diffCmd struct{}

func (*diffCmd) name() string    { return "diff" }
func (*diffCmd) summary() string { return "compare the kept sets and rankings of two runs" }

func (*diffCmd) flags() *pflag.FlagSet {
	fs := newFlags("diff", "sluice diff [--json] [--top N] RUN_A RUN_B",
		`Compares two runs, usually two target sets or two methods on the same index: the rows kept in
both, only in A and only in B (counts, tokens, Jaccard index), the budget each used, the rank
correlation of their scores over the rows both scored (Spearman's rho: the Pearson correlation of
the ranks), and the rows whose rank moved most. Rows are matched by id; a repeated id is matched by
its occurrence.`,
		`  sluice diff run-support run-billing
  sluice diff --json --top 50 run-bm25 run-tfidf | jq .moved`)
	fs.Bool("json", false, "print one JSON object instead of text")
	fs.Int("top", 10, "how many of the rows that moved most to list")
	fs.Bool("across-indexes", false, "compare runs made on different indexes (rows are still matched by id)")
	return fs
}

func (c *diffCmd) run(ctx context.Context, e *env, fs *pflag.FlagSet) error {
	asJSON, _ := fs.GetBool("json")
	top, _ := fs.GetInt("top")
	if fs.NArg() != 2 {
		return usagef("give two run folders")
	}
	if top < 0 {
		return usagef("--top %d: must be 0 or more", top)
	}
	across, _ := fs.GetBool("across-indexes")
	d, err := audit.Compare(fs.Arg(0), fs.Arg(1), top, across)
	if err != nil {
		return err
	}
	if asJSON {
		b, err := json.MarshalIndent(d, "", "  ")
		if err != nil {
			return err
		}
		_, err = e.stdout.Write(append(b, '\n'))
		return err
	}
	w := bufio.NewWriter(e.stdout)
	defer w.Flush()
	pct := func(a, b float64) string {
		if b == 0 {
			return "-"
		}
		return fmt.Sprintf("%.1f%%", 100*a/b)
	}
	fmt.Fprintf(w, "A %s: %d rows kept, %d tokens, %s of %s FLOPs used (%s)\n", d.A.Run, d.A.Kept, d.A.KeptTokens, budget.FormatFLOPs(d.A.Used), budget.FormatFLOPs(d.A.Budget), pct(d.A.Used, d.A.Budget))
	fmt.Fprintf(w, "B %s: %d rows kept, %d tokens, %s of %s FLOPs used (%s)\n", d.B.Run, d.B.Kept, d.B.KeptTokens, budget.FormatFLOPs(d.B.Used), budget.FormatFLOPs(d.B.Budget), pct(d.B.Used, d.B.Budget))
	fmt.Fprintf(w, "kept in both %d (%d tokens), only in A %d (%d tokens), only in B %d (%d tokens); Jaccard %.4f\n",
		d.Both, d.BothTokens, d.OnlyA, d.OnlyATokens, d.OnlyB, d.OnlyBTokens, d.Jaccard)
	for _, side := range []struct {
		name string
		s    audit.Side
	}{{"A", d.A}, {"B", d.B}} {
		var parts []string
		for _, why := range []string{"duplicate", "contaminated", "source-cap", "prefilter", "no-score", "no-match", "min-score", "max-rows", "budget", "below-cut"} {
			if n := side.s.Dropped[why]; n > 0 {
				parts = append(parts, fmt.Sprintf("%d %s", n, why))
			}
		}
		fmt.Fprintf(w, "%s not kept: %s\n", side.name, strings.Join(parts, ", "))
	}
	if d.SpearmanNote != "" {
		fmt.Fprintf(w, "rank correlation: %s\n", d.SpearmanNote)
	} else {
		fmt.Fprintf(w, "rank correlation over the %d rows both scored: Spearman's rho %.4f\n", d.Common, d.Spearman)
	}
	if len(d.Moved) > 0 {
		fmt.Fprintf(w, "rows that moved most:\n")
		for _, m := range d.Moved {
			id := m.ID
			if m.Occurrence > 1 {
				id = fmt.Sprintf("%s (occurrence %d)", m.ID, m.Occurrence)
			}
			fmt.Fprintf(w, "  %-28s rank %7d -> %-7d  kept %s -> %s\n", id, m.RankA, m.RankB, yesNo(m.KeptA), yesNo(m.KeptB))
		}
	}
	return nil
}

func yesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}
