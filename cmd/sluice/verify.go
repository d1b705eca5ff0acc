package main

import (
	"context"
	"fmt"
	"strings"

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
	var bad []string
	for _, dir := range fs.Args() {
		m, err := run.ReadManifest(dir)
		if err != nil {
			return err
		}
		movedFrom(fs).Apply(m)
		diffs := run.Verify(dir, m)
		for _, d := range diffs {
			bad = append(bad, dir+": "+d)
		}
		if len(diffs) == 0 {
			fmt.Fprintf(e.stdout, "%s: ok (%d files, target and index as used)\n", dir, len(m.Files))
		}
	}
	if len(bad) > 0 {
		return fmt.Errorf("%d difference(s):\n  %s", len(bad), strings.Join(bad, "\n  "))
	}
	return nil
}
