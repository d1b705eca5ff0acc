package main

import (
	"context"
	"errors"
	"fmt"
	"strings"

	"github.com/spf13/pflag"

	"sluice/budget"
	"sluice/select/pilots"
	"sluice/select/run"
)

type pilotsCmd struct{}

func (*pilotsCmd) name() string { return "pilots" }
func (*pilotsCmd) summary() string {
	return "write nested training subsets for pilot fine-tunes, and the pilots file plan reads"
}

func (*pilotsCmd) flags() *pflag.FlagSet {
	fs := newFlags("pilots")
	addPickInputFlags(fs)
	addMethodFlags(fs)
	addPickStopFlags(fs)
	fs.Lookup("method").Usage = "methods to make pilots for, comma-separated: " + strings.Join(run.Methods(), ", ")
	fs.Lookup("train-params").Usage = "parameters of the pilot models, comma-separated, e.g. 125M,350M (required)"
	fs.Lookup("out").Usage = "pilots folder to write (required)"
	fs.String("sizes", "", "subset sizes in tokens: a list (1M,3M,10M) or LO:HI:N, N sizes log-spaced (default: 0.3%:30% of the pool, 5)")
	return fs
}

func (c *pilotsCmd) run(ctx context.Context, e *env, fs *pflag.FlagSet) error {
	if fs.NArg() > 0 {
		return usagef("unexpected argument %q", fs.Arg(0))
	}
	po, err := pickOptions(fs, true)
	if err != nil {
		return err
	}
	po.Command, po.Stdin, po.Version = append([]string{"sluice"}, e.args...), e.stdin, version()
	opt := pilots.Options{Pick: po, Methods: strings.Split(po.Method, ","), Out: po.Out}
	tp, _ := fs.GetString("train-params")
	if opt.Trained, err = budget.ParseCounts(tp); err != nil {
		return usagef("--train-params: %v", err)
	}
	sizes, _ := fs.GetString("sizes")
	count := func() (float64, error) { opt.PoolTokens, err = run.PoolTokens(po.Index); return opt.PoolTokens, err }
	if opt.Sizes, err = pilots.ParseSizes(sizes, count); errors.Is(err, pilots.ErrBadOptions) {
		return usagef("--%v", err)
	} else if err != nil {
		return err
	}
	quiet, _ := fs.GetBool("quiet")
	if !quiet {
		opt.Started = func(m string) { fmt.Fprintf(e.stderr, "pilots: scoring the pool with %s\n", m) }
	}
	res, err := pilots.Make(ctx, opt)
	if err != nil || quiet {
		return err
	}
	return res.WriteSummary(e.stdout)
}
