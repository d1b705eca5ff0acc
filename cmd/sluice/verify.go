package main

import (
	"context"

	"github.com/spf13/pflag"

	"sluice/select/run"
)

type verifyCmd struct{}

func (*verifyCmd) name() string { return "verify" }
func (*verifyCmd) summary() string {
	return "check that a run's files, target and index are as the run left them"
}

func (*verifyCmd) flags() *pflag.FlagSet {
	fs := newFlags("verify")
	addMovedFlags(fs)
	return fs
}

func (c *verifyCmd) run(ctx context.Context, e *env, fs *pflag.FlagSet) error {
	if fs.NArg() == 0 {
		return usagef("name at least one run folder")
	}
	return run.VerifyRuns(e.stdout, fs.Args(), movedFrom(fs))
}
