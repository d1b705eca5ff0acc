package main

import (
	"context"
	"fmt"

	"github.com/spf13/pflag"

	"sluice/index"
	"sluice/select/run"
)

type segmentsCmd struct{}

func (*segmentsCmd) name() string { return "segments" }
func (*segmentsCmd) summary() string {
	return "name several indexes as one (an index set) for pick, why and report"
}

func (*segmentsCmd) flags() *pflag.FlagSet {
	fs := newFlags("segments")
	fs.StringP("out", "o", "", "the index-set file to write (required)")
	fs.Bool("allow-overlap", false, "let two segments hold the same pool file (its rows then count twice)")
	return fs
}

func (*segmentsCmd) run(_ context.Context, e *env, fs *pflag.FlagSet) error {
	out, _ := fs.GetString("out")
	if err := required(unset(fs, "out"), noArgs(fs, "at least one index folder")); err != nil {
		return err
	}
	overlap, _ := fs.GetBool("allow-overlap")
	m, err := index.WriteSet(out, fs.Args(), overlap, run.Folder())
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "wrote %s: %d segments, %d rows, %d sources, %d terms\n", out, fs.NArg(), m.Rows, len(m.Sources), m.Terms)
	return nil
}
