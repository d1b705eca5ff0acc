package main

import (
	"strings"

	"github.com/spf13/pflag"

	"sluice/budget"
)

// addBudgetFlags declares the ways a budget can be given: FLOPs, or time on accelerators.
func addBudgetFlags(fs *pflag.FlagSet) {
	var names []string
	for _, a := range budget.Accelerators() {
		names = append(names, a.Name)
	}
	fs.String("budget", "", "total FLOPs for selection plus training, e.g. 2.5e18 or 400P")
	fs.Float64("gpu-hours", 0, "budget as GPU-hours in total, over all GPUs (with --gpu-flops and --mfu)")
	fs.Int("gpus", 0, "budget as --hours of wall-clock time on this many GPUs (with --gpu-flops and --mfu)")
	fs.Float64("hours", 0, "wall-clock hours on --gpus GPUs")
	fs.String("gpu-flops", "", "peak FLOP/s of one GPU for your precision, e.g. 989T, or a name: "+strings.Join(names, ", "))
	fs.Float64("mfu", 0, "model FLOPs utilisation, a fraction in (0,1]; 0.3-0.5 is common for dense training")
}

// hoursGiven reports whether any flag giving the budget as time on accelerators was given.
func hoursGiven(fs *pflag.FlagSet) bool {
	return fs.Changed("gpu-hours") || fs.Changed("gpus") || fs.Changed("hours") || fs.Changed("gpu-flops") || fs.Changed("mfu")
}

// budgetGiven reports whether any budget flag was given.
func budgetGiven(fs *pflag.FlagSet) bool { return fs.Changed("budget") || hoursGiven(fs) }

// budgetFlags resolves --budget, or time on accelerators (--gpu-hours, or --gpus with --hours)
// with --gpu-flops and --mfu, to FLOPs, and says how the budget was given.
func budgetFlags(fs *pflag.FlagSet) (float64, string, error) {
	if fs.Changed("budget") {
		if hoursGiven(fs) {
			return 0, "", usagef("give either --budget or GPU time (--gpu-hours, or --gpus and --hours, with --gpu-flops and --mfu), not both")
		}
		b, _ := fs.GetString("budget")
		v, err := budget.ParseFLOPs(b)
		if err != nil {
			return 0, "", usagef("--budget: %v", err)
		}
		return v, "--budget " + b, nil
	}
	if !budgetGiven(fs) {
		return 0, "", usagef("a budget is required: --budget FLOPS, or --gpu-hours with --gpu-flops and --mfu")
	}
	var g budget.GPUTime
	g.GPUHours, _ = fs.GetFloat64("gpu-hours")
	g.GPUs, _ = fs.GetInt("gpus")
	g.Hours, _ = fs.GetFloat64("hours")
	g.Rate, _ = fs.GetString("gpu-flops")
	g.MFU, _ = fs.GetFloat64("mfu")
	// Changed, not the values, says what was given: --mfu 0 is a bad MFU, not a missing one.
	if err := g.CheckGiven(fs.Changed); err != nil {
		return 0, "", usagef("%v", err)
	}
	if _, _, err := budget.ParseRate(g.Rate); err != nil {
		return 0, "", usagef("--gpu-flops: %v", err)
	}
	v, how, err := g.FLOPs()
	if err != nil {
		return 0, "", usagef("%v", err)
	}
	return v, how, nil
}
