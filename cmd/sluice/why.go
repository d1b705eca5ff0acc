package main

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"text/tabwriter"

	"github.com/spf13/pflag"

	"sluice/budget"
	"sluice/index"
	"sluice/score"
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

// rowWhy is what why says of one row; --json prints it as it is.
type rowWhy struct {
	ID      string       `json:"id"`
	Row     int          `json:"row"`
	Source  string       `json:"source"`
	Score   float64      `json:"score"`
	Rank    int          `json:"rank"`
	Rows    int          `json:"rows"`
	Kept    bool         `json:"kept"`
	Reason  string       `json:"reason,omitempty"`
	Why     string       `json:"why"`
	Tokens  int64        `json:"tokens"`
	Ledger  float64      `json:"ledger"`
	Budget  float64      `json:"budget"`
	Method  string       `json:"method"`
	Parts   []score.Part `json:"parts"`
	Targets []whyTarget  `json:"targets"`
}

type whyTarget struct {
	ID     string   `json:"id"`
	Score  float64  `json:"score"`
	Shared []string `json:"shared"`
}

func (c *whyCmd) run(ctx context.Context, e *env, fs *pflag.FlagSet) error {
	run, _ := fs.GetString("run")
	asJSON, _ := fs.GetBool("json")
	top, _ := fs.GetInt("targets")
	if run == "" {
		return usagef("--run is required")
	}
	if fs.NArg() == 0 {
		return usagef("name at least one row id")
	}
	if top < 0 {
		return usagef("--targets %d: must be 0 or more", top)
	}
	rows, err := explainRun(ctx, run, movedFrom(fs), fs.Args(), top)
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

// explainRun explains the rows with the given ids (every row with that id, if ids repeat).
func explainRun(ctx context.Context, run string, mv relocated, ids []string, top int) ([]rowWhy, error) {
	m, err := readManifest(run)
	if err != nil {
		return nil, err
	}
	mv.apply(m)
	if err := checkInputs("explain", run, m); err != nil {
		return nil, err
	}
	ix, err := index.Open(m.Index.Path)
	if err != nil {
		return nil, err
	}
	defer ix.Close()
	an, err := ix.NewAnalyzer()
	if err != nil {
		return nil, err
	}
	targets, _, err := index.ReadTargets(m.Target.Path, m.Settings.TargetText, m.Settings.TargetID, an, ix.Meta().MaxRowBytes)
	if err != nil {
		return nil, err
	}
	qs := make([]score.Query, len(targets))
	for i, t := range targets {
		qs[i] = score.Query{ID: t.ID, Terms: t.Terms}
	}
	p := score.DefaultParams()
	if p.Method, err = score.ParseMethod(m.Settings.Method); err != nil {
		return nil, err
	}
	if p.Aggregate, err = score.ParseAggregate(m.Settings.Aggregate); err != nil {
		return nil, err
	}
	p.K1, p.B = m.Settings.K1, m.Settings.B

	lines, err := findScoreLines(run, ids)
	if err != nil {
		return nil, err
	}
	var led budget.Ledger
	if b, err := os.ReadFile(filepath.Join(run, "ledger.json")); err == nil {
		var l struct {
			Stop string `json:"stop"`
		}
		json.Unmarshal(b, &l)
		led.Stop = l.Stop
	}
	var out []rowWhy
	for _, id := range ids {
		found := lines[id]
		if len(found) == 0 {
			return nil, fmt.Errorf("explain %s: no row %q in scores.jsonl", run, id)
		}
		for _, sl := range found {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			ex, err := score.Explain(ix, qs, p, sl.row, top)
			if err != nil {
				return nil, err
			}
			if math.Float64bits(ex.Score) != math.Float64bits(sl.Score) {
				return nil, fmt.Errorf("explain %s: row %q: recomputed score %v disagrees with scores.jsonl's %v", run, id, ex.Score, sl.Score)
			}
			loc := ix.RowLocation(sl.row)
			r := rowWhy{ID: id, Row: sl.row, Source: fmt.Sprintf("%s:%d", loc.File, loc.Line), Score: sl.Score, Rank: sl.Rank,
				Rows: ix.NumRows(), Kept: sl.Kept, Reason: sl.Reason, Tokens: sl.Tokens, Ledger: sl.Ledger,
				Budget: m.Settings.Budget, Method: m.Settings.Method + "/" + m.Settings.Aggregate, Parts: ex.Parts}
			for _, tm := range ex.Targets {
				r.Targets = append(r.Targets, whyTarget{ID: targets[tm.Index].ID, Score: tm.Score, Shared: tm.Shared})
			}
			r.Why = fateText(r, m, led.Stop)
			out = append(out, r)
		}
	}
	return out, nil
}

// runScore is one line of scores.jsonl, with its row number: the line's place in the file.
type runScore struct {
	row    int
	ID     string  `json:"id"`
	Score  float64 `json:"score"`
	Rank   int     `json:"rank"`
	Kept   bool    `json:"kept"`
	Reason string  `json:"reason"`
	Tokens int64   `json:"tokens"`
	Ledger float64 `json:"ledger"`
}

func findScoreLines(run string, ids []string) (map[string][]runScore, error) {
	want := map[string][]runScore{}
	for _, id := range ids {
		want[id] = nil
	}
	err := eachScoreLine(run, func(row int, line []byte) error {
		var probe struct {
			ID string `json:"id"`
		}
		if err := json.Unmarshal(line, &probe); err != nil {
			return err
		}
		if _, ok := want[probe.ID]; !ok {
			return nil
		}
		sl := runScore{row: row}
		if err := json.Unmarshal(line, &sl); err != nil {
			return err
		}
		want[probe.ID] = append(want[probe.ID], sl)
		return nil
	})
	return want, err
}

// fateText says in words why a row was or was not kept.
func fateText(r rowWhy, m *manifest, stop string) string {
	share := func(v float64) string {
		return fmt.Sprintf("%s FLOPs, %.1f%% of the budget", fmtFLOPs(v), 100*v/m.Settings.Budget)
	}
	cost := budget.TrainFLOPs(m.Settings.TrainParams, float64(r.Tokens), m.Settings.Epochs)
	switch r.Reason {
	case "":
		return fmt.Sprintf("kept: ranked %d of %d, and its training cost of %s FLOPs fitted; the ledger stood at %s after it", r.Rank, r.Rows, fmtFLOPs(cost), share(r.Ledger))
	case "below-cut":
		return fmt.Sprintf("below the cut: ranked %d of %d, after the pick had stopped (%s)", r.Rank, r.Rows, stop)
	case "budget":
		return fmt.Sprintf("budget reached: its training cost of %s FLOPs did not fit in the %s FLOPs left at rank %d", fmtFLOPs(cost), fmtFLOPs(m.Settings.Budget-r.Ledger), r.Rank)
	case "max-rows":
		return fmt.Sprintf("max-rows: %d rows had been kept before rank %d", m.Settings.MaxRows, r.Rank)
	case "min-score":
		return fmt.Sprintf("min-score: its score %g is below --min-score %g", r.Score, m.Settings.MinScore)
	case "no-match":
		return "no match: it shares no term with any target row"
	}
	return r.Reason
}

func printWhy(w *bufio.Writer, r rowWhy) {
	fmt.Fprintf(w, "row %s (%s)\n", r.ID, r.Source)
	fmt.Fprintf(w, "  score   %v (%s), rank %d of %d\n", r.Score, r.Method, r.Rank, r.Rows)
	fmt.Fprintf(w, "  fate    %s\n", r.Why)
	fmt.Fprintf(w, "  ledger  %s of %s FLOPs after it; its %d tokens\n", fmtFLOPs(r.Ledger), fmtFLOPs(r.Budget), r.Tokens)
	if len(r.Parts) > 0 {
		fmt.Fprintf(w, "  terms   (contributions add up to the score)\n")
		tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintf(tw, "\tterm\ttf\tdf\tidf\ttf part\tweight\tcontribution\t\n")
		for _, p := range r.Parts {
			fmt.Fprintf(tw, "\t%s\t%d\t%d\t%.4f\t%.4f\t%.4g\t%.6g\t\n", p.Term, p.TF, p.DF, p.IDF, p.TFPart, p.QueryWeight, p.Contribution)
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
