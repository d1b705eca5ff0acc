package main

import (
	"bufio"
	"context"
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"

	"github.com/spf13/pflag"

	"sluice/budget"
	"sluice/budget/plan"
	"sluice/index"
	"sluice/index/atomicdir"
	"sluice/select/run"
)

type planCmd struct{}

// maxPlanPoints bounds the budget grid: each point costs a fit evaluation per method, a JSON object
// and a chart sample, and more than a chart's width of them shows nothing more.
const maxPlanPoints = 1000

func (*planCmd) name() string { return "plan" }
func (*planCmd) summary() string {
	return "fit pilot runs and say which method and how many tokens each budget affords"
}

func (*planCmd) flags() *pflag.FlagSet {
	fs := newFlags("plan", "sluice plan (--pilots FILE | --simulate CURVE... --p0 P) --pool-tokens T --train-params N --out DIR [flags]",
		`Fits P(k) = P̄ - (P̄ - P0)·exp(-λ·k) to pilot fine-tunes, one curve per method and base model,
by nonlinear least squares; methods of one base model share P0 unless --free-p0. Then, over a log
grid of budgets, works out for each method the tokens it can train on once it has scored the whole
pool, (budget - selection) / (6 x train-params x epochs), its predicted metric with a ±2 standard
error band, the best method, and the budgets where the best method changes.

Pilots are CSV with a header row, or JSONL; columns method, cost (lexical, forward,
forward+backward or a number of forward passes), selector_params (0 for lexical), trained_params,
tokens (or rows and tokens_per_row) and metric. Selection costs passes x 2 x selector params x pool
tokens; lexical scoring is charged 8 FLOPs per pool token. Each method needs pilots at 3 or more
data sizes, spread over where its metric bends and levels off.

With --simulate no pilots are fitted: each curve is given as METHOD=COST,SELECTOR,PBAR,LAMBDA
(λ per 1B tokens) with one --p0 for all, to explore, say, a selector ten times smaller.

Writes into DIR: plan.json (fits, residuals, every budget's options, changes), plan.svg (predicted
metric against total FLOPs, one line per method, the best-method envelope, pilots and changes
marked) and, from pilots, residuals.svg (each pilot's metric minus its fitted curve).
Predictions beyond the largest pilot are extrapolations of the curve.`,
		`  sluice plan --pilots pilots.csv --pool-tokens 4B --train-params 1B --out plan1
  sluice plan --pilots pilots.jsonl --pool-tokens 20B --train-params 7B --epochs 2 \
      --budgets 1e19:1e22 --points 40 --free-p0 --out plan2
  # what if the gradient selector were 10x smaller?
  sluice plan --simulate bm25=lexical,0,0.547,10.2 --simulate grad=forward+backward,100M,0.657,4.0 \
      --p0 0.421 --pool-tokens 4B --train-params 1B --out what-if`)
	fs.String("pilots", "", "CSV or JSONL file of pilot runs (required unless --simulate)")
	fs.String("pool-tokens", "", "tokens in the whole pool, e.g. 4B (required unless --index)")
	fs.String("index", "", "an index of the pool, to count its tokens as a pick would")
	fs.String("train-params", "", "parameters of the model to be trained, e.g. 1B (required)")
	fs.Float64("epochs", 1, "passes over the kept tokens")
	fs.String("budgets", "", "budget grid LO:HI in FLOPs, e.g. 1e18:1e21 (default: from the pilots and pool)")
	fs.Int("points", 25, "budgets in the grid, log-spaced")
	addBudgetFlags(fs)
	fs.Lookup("budget").Usage = "the budget you have, in FLOPs (or as GPU time below): also plan for exactly it and print a pick command"
	fs.Bool("free-p0", false, "fit a base score P0 per method instead of one per base model")
	fs.StringArray("simulate", nil, "instead of --pilots, a curve METHOD=COST,SELECTOR,PBAR,LAMBDA (λ per 1B tokens); repeatable")
	fs.String("p0", "", "the base model's score P0 for --simulate")
	fs.String("out", "", "folder to write plan.json and the charts to (required)")
	return fs
}

func (c *planCmd) run(ctx context.Context, e *env, fs *pflag.FlagSet) error {
	get := func(n string) string { s, _ := fs.GetString(n); return s }
	if fs.NArg() > 0 {
		return usagef("unexpected argument %q", fs.Arg(0))
	}
	sims, _ := fs.GetStringArray("simulate")
	switch {
	case get("pilots") == "" && len(sims) == 0:
		return usagef("--pilots is required (or --simulate curves)")
	case get("pilots") != "" && len(sims) > 0:
		return usagef("give --pilots or --simulate, not both")
	}
	var missing []string
	for _, n := range []string{"train-params", "out"} {
		if get(n) == "" {
			missing = append(missing, "--"+n)
		}
	}
	if (get("pool-tokens") == "") == (get("index") == "") {
		missing = append(missing, "one of --pool-tokens and --index")
	}
	if len(missing) > 0 {
		return usagef("required: %s", strings.Join(missing, ", "))
	}
	cfg, err := planConfig(fs)
	if err != nil {
		return err
	}
	// Checked before any work: the folder must be nothing, empty or an earlier plan, and not hold
	// the pilots.
	if err := atomicdir.CheckOut(get("out"), plan.Folder(), []string{get("pilots")}, index.Folder(), run.Folder()); err != nil {
		return err
	}
	curves, err := planCurves(fs, sims, cfg.TrainParams)
	if err != nil {
		return err
	}
	p, err := plan.Make(curves, cfg)
	if err != nil {
		return err
	}
	if budgetGiven(fs) {
		f, _, err := budgetFlags(fs)
		if err != nil {
			return err
		}
		s := p.StepAt(f)
		p.Asked = &s
	}
	return writePlan(e, get("out"), p, len(sims) == 0)
}

// planConfig reads the numbers a plan is made for; every fault is a usage error.
func planConfig(fs *pflag.FlagSet) (plan.Config, error) {
	get := func(n string) string { s, _ := fs.GetString(n); return s }
	var cfg plan.Config
	var err error
	if get("index") != "" {
		if cfg.PoolTokens, err = run.PoolTokens(get("index")); err != nil {
			return cfg, err
		}
	} else if cfg.PoolTokens, err = budget.ParseCount(get("pool-tokens")); err != nil {
		return cfg, usagef("--pool-tokens: %v", err)
	}
	if cfg.TrainParams, err = budget.ParseCount(get("train-params")); err != nil {
		return cfg, usagef("--train-params: %v", err)
	}
	cfg.Epochs, _ = fs.GetFloat64("epochs")
	if !(cfg.Epochs > 0) {
		return cfg, usagef("--epochs %v: must be greater than zero", cfg.Epochs)
	}
	cfg.Points, _ = fs.GetInt("points")
	if cfg.Points < 2 {
		return cfg, usagef("--points %d: must be 2 or more", cfg.Points)
	}
	if cfg.Points > maxPlanPoints {
		return cfg, usagef("--points %d: give at most %d (a chart cannot show more)", cfg.Points, maxPlanPoints)
	}
	if b := get("budgets"); b != "" {
		lo, hi, ok := strings.Cut(b, ":")
		if !ok {
			return cfg, usagef("--budgets %q: want LO:HI", b)
		}
		if cfg.Lo, err = budget.ParseFLOPs(lo); err != nil {
			return cfg, usagef("--budgets: %v", err)
		}
		if cfg.Hi, err = budget.ParseFLOPs(hi); err != nil {
			return cfg, usagef("--budgets: %v", err)
		}
		if cfg.Hi <= cfg.Lo {
			return cfg, usagef("--budgets %q: HI must be greater than LO", b)
		}
	}
	return cfg, nil
}

// planCurves are the --simulate curves, or else the curves fitted to the --pilots file.
func planCurves(fs *pflag.FlagSet, sims []string, trainParams float64) ([]plan.Curve, error) {
	get := func(n string) string { s, _ := fs.GetString(n); return s }
	if len(sims) > 0 {
		p0, err := strconv.ParseFloat(get("p0"), 64)
		if err != nil || math.IsNaN(p0) || math.IsInf(p0, 0) {
			return nil, usagef("--simulate needs --p0, the base model's score")
		}
		var curves []plan.Curve
		for _, s := range sims {
			c, err := plan.ParseCurve(s, p0, trainParams)
			if err != nil {
				return nil, usagef("--simulate %q: %v", s, err)
			}
			curves = append(curves, c)
		}
		return curves, nil
	}
	free, _ := fs.GetBool("free-p0")
	f, err := os.Open(get("pilots"))
	if err != nil {
		return nil, err
	}
	pilots, err := plan.ReadPilots(f, get("pilots"))
	f.Close()
	if err != nil {
		return nil, err
	}
	return plan.Fit(pilots, plan.FitOptions{FreeP0: free})
}

// writePlan writes plan.json and the charts into out, residuals.svg only when
// there are pilots to show, then prints the plan.
func writePlan(e *env, out string, p *plan.Plan, residuals bool) error {
	names, err := p.WriteFolder(out, residuals)
	if err != nil {
		return err
	}
	wrote := strings.Join(names[:len(names)-1], ", ") + " and " + names[len(names)-1]
	w := bufio.NewWriter(e.stdout)
	if err := p.WriteText(w); err != nil {
		return err
	}
	fmt.Fprint(w, p.PickCommand())
	for _, n := range p.Notes {
		fmt.Fprintf(w, "note: %s\n", n)
	}
	fmt.Fprintf(w, "wrote %s to %s\n", wrote, out)
	return w.Flush()
}
