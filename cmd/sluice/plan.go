package main

import (
	"context"

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
	fs := newFlags("plan")
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
	if fs.NArg() > 0 {
		return usagef("unexpected argument %q", fs.Arg(0))
	}
	sims, _ := fs.GetStringArray("simulate")
	switch {
	case flagStr(fs, "pilots") == "" && len(sims) == 0:
		return usagef("--pilots is required (or --simulate curves)")
	case flagStr(fs, "pilots") != "" && len(sims) > 0:
		return usagef("give --pilots or --simulate, not both")
	}
	either := ""
	if (flagStr(fs, "pool-tokens") == "") == (flagStr(fs, "index") == "") {
		either = "one of --pool-tokens and --index"
	}
	if err := required(unset(fs, "train-params"), unset(fs, "out"), either); err != nil {
		return err
	}
	cfg, err := planConfig(fs)
	if err != nil {
		return err
	}
	// Checked before any work: the folder must be nothing, empty or an earlier plan, and not hold
	// the pilots.
	if err := atomicdir.CheckOut(flagStr(fs, "out"), plan.Folder(), []string{flagStr(fs, "pilots")}, index.Folder(), run.Folder()); err != nil {
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
	return writePlan(e, flagStr(fs, "out"), p, len(sims) == 0)
}

// planConfig reads the numbers a plan is made for; every fault is a usage error.
func planConfig(fs *pflag.FlagSet) (plan.Config, error) {
	var cfg plan.Config
	var err error
	if flagStr(fs, "index") != "" {
		if cfg.PoolTokens, err = run.PoolTokens(flagStr(fs, "index")); err != nil {
			return cfg, err
		}
		cfg.Index = flagStr(fs, "index")
	} else if cfg.PoolTokens, err = budget.ParseCount(flagStr(fs, "pool-tokens")); err != nil {
		return cfg, usagef("--pool-tokens: %v", err)
	}
	if cfg.TrainParams, err = budget.ParseCount(flagStr(fs, "train-params")); err != nil {
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
	if b := flagStr(fs, "budgets"); b != "" {
		if cfg.Lo, cfg.Hi, err = plan.ParseBudgets(b); err != nil {
			return cfg, usagef("--budgets %v", err)
		}
	}
	return cfg, nil
}

// planCurves are the --simulate curves, or else the curves fitted to the --pilots file.
func planCurves(fs *pflag.FlagSet, sims []string, trainParams float64) ([]plan.Curve, error) {
	if len(sims) > 0 {
		if flagStr(fs, "p0") == "" {
			return nil, usagef("--simulate needs --p0, the base model's score")
		}
		c, err := plan.ParseCurves(sims, flagStr(fs, "p0"), trainParams)
		if err != nil {
			return nil, usagef("--simulate: %v", err)
		}
		return c, nil
	}
	free, _ := fs.GetBool("free-p0")
	return plan.FitFile(flagStr(fs, "pilots"), plan.FitOptions{FreeP0: free})
}

// writePlan writes plan.json and the charts into out, residuals.svg only when
// there are pilots to show, then prints the plan.
func writePlan(e *env, out string, p *plan.Plan, residuals bool) error {
	names, err := p.WriteFolder(out, residuals)
	if err != nil {
		return err
	}
	return p.WriteSummary(e.stdout, out, names)
}
