package main

import (
	"context"

	"github.com/spf13/pflag"

	"sluice/select/audit"
)

type whyCmd struct{}

func (*whyCmd) name() string    { return "why" }
func (*whyCmd) summary() string { return "explain the score and fate of pool rows in a run" }

func (*whyCmd) flags() *pflag.FlagSet {
	fs := newFlags("why")
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
	if err := required(unset(fs, "run"), noArgs(fs, "at least one row id")); err != nil {
		return err
	}
	if top < 0 {
		return usagef("--targets %d: must be 0 or more", top)
	}
	rows, err := audit.Explain(ctx, dir, movedFrom(fs), fs.Args(), top)
	if err != nil {
		return err
	}
	return audit.WriteRows(e.stdout, rows, asJSON)
}
