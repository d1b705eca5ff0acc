package run

import (
	"cmp"
	"fmt"
	"io"
	"slices"
	"strings"
	"time"

	"sluice/budget"
	selection "sluice/select"
)

// WriteSummary writes what the pick kept and spent, for people: the ledger in brief, why it
// stopped, what the guards dropped, the rows by pool file and the files written.
func (res *Result) WriteSummary(w io.Writer, took time.Duration) error {
	l := res.Ledger
	pct := func(v float64) string {
		if l.Budget == 0 {
			return "-"
		}
		return fmt.Sprintf("%.1f%%", 100*v/l.Budget)
	}
	var sb strings.Builder
	fmt.Fprintf(&sb, "picked %d of %d rows (%d tokens) with %s against %s in %s\n",
		len(res.Kept), res.Rows, res.KeptTokens, res.Settings.MethodName(), plural(res.Targets, "target row"), took.Round(time.Millisecond))
	fmt.Fprintf(&sb, "  budget     %s FLOPs (%s)\n", budget.FormatFLOPs(l.Budget), res.Settings.BudgetHow)
	fmt.Fprintf(&sb, "  selection  %s FLOPs (%s)\n", budget.FormatFLOPs(l.Selection()), pct(l.Selection()))
	fmt.Fprintf(&sb, "  training   %s FLOPs (%s)\n", budget.FormatFLOPs(l.Training()), pct(l.Training()))
	fmt.Fprintf(&sb, "  left       %s FLOPs (%s)\n", budget.FormatFLOPs(l.Left()), pct(l.Left()))
	if len(res.Sets) == 0 {
		fmt.Fprintf(&sb, "  stopped    %s\n", l.Stop)
	} else {
		printSets(&sb, res)
	}
	if res.Summary.Stop == selection.StopNoMatch && res.Summary.StopRank == 1 {
		fmt.Fprintf(&sb, "  warning    no pool row shares a term with the target rows: check --target-text and that the target is the task you meant\n")
	} else if res.Summary.Stop == selection.StopNoMatch || res.Summary.Stop == selection.StopExhausted {
		fmt.Fprintf(&sb, "  note       the budget buys more than the pool holds worth keeping: %s of it is left; every row that matches at all was kept\n", pct(l.Left()))
	}
	fmt.Fprintf(&sb, "  %s\n", strings.Replace(res.Reconciliation(), "rows: ", "rows       ", 1))
	var guarded []string
	for _, why := range selection.Reasons() {
		if n := res.Dropped[why.String()]; n > 0 && !why.Walk() {
			guarded = append(guarded, fmt.Sprintf("%d %s", n, why))
		}
	}
	if len(guarded) > 0 {
		fmt.Fprintf(&sb, "  dropped    %s (see the reason in scores.jsonl, or sluice why)\n", strings.Join(guarded, ", "))
	}
	for _, n := range res.Notes {
		if strings.HasPrefix(n, "target rows in the pool") {
			fmt.Fprintf(&sb, "  warning    %s: the pick may learn the target set itself\n", n)
		}
		if strings.HasPrefix(n, "evaluation n-grams") {
			fmt.Fprintf(&sb, "  warning    %s; give a shorter n-gram\n", n)
		}
	}
	printSources(&sb, res)
	if res.Meta.RowsRejected > 0 {
		fmt.Fprintf(&sb, "  quarantine %s/rejected.jsonl (pool rows)\n", res.Index)
	}
	if res.TargetsRejected > 0 {
		fmt.Fprintf(&sb, "  quarantine %s/rejected.jsonl (target rows)\n", res.Out)
	}
	fmt.Fprintf(&sb, "  wrote      %s/{%s}\n", res.Out, strings.Join(res.Files, ","))
	_, err := io.WriteString(w, sb.String())
	return err
}

// printSets says what each target set of a pick for several kept, and why it stopped.
func printSets(sb *strings.Builder, res *Result) {
	l := res.Ledger
	training := l.Budget - l.Selection()
	fmt.Fprintf(sb, "  sets       %d, walked in the order given within their shares of the training budget; a set whose ranking runs out gives the rest to the others\n", len(res.Sets))
	for _, s := range res.Sets {
		pct := "-"
		if training > 0 {
			pct = fmt.Sprintf("%.1f%%", 100*s.TrainingFLOPs/training)
		}
		fmt.Fprintf(sb, "             %s (weight %.3g): %d rows, %d tokens, %s of the training budget (share %g tokens, given %g, given back %g)\n",
			s.Name, s.Weight, s.KeptRows, s.KeptTokens, pct, s.Share, s.Given, s.Returned)
		fmt.Fprintf(sb, "             %s stopped: %s\n", strings.Repeat(" ", len(s.Name)), s.Stop)
	}
}

// summarySources is how many pool files the pick summary names; the rest share one line.
const summarySources = 8

// printSources lists the pool files that gave the most kept tokens.
func printSources(sb *strings.Builder, res *Result) {
	if len(res.Sources) < 2 {
		return
	}
	src := slices.Clone(res.Sources)
	slices.SortStableFunc(src, func(a, b SourceTally) int { return cmp.Compare(b.KeptTokens, a.KeptTokens) })
	fmt.Fprintf(sb, "  by file    kept rows of rows, kept tokens\n")
	for i, s := range src {
		if i == summarySources {
			var rows, kept int
			var tok int64
			for _, r := range src[i:] {
				rows, kept, tok = rows+r.Rows, kept+r.KeptRows, tok+r.KeptTokens
			}
			fmt.Fprintf(sb, "             %d more files: %d of %d rows, %d tokens\n", len(src)-i, kept, rows, tok)
			break
		}
		fmt.Fprintf(sb, "             %s: %d of %d rows, %d tokens\n", s.File, s.KeptRows, s.Rows, s.KeptTokens)
	}
}

// plural writes n with a noun, adding an s when n is not 1.
func plural(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}
