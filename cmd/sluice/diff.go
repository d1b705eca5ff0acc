package main

import (
	"context"

	"github.com/spf13/pflag"

	"sluice/select/audit"
)

type diffCmd struct{}

func (*diffCmd) name() string    { return "diff" }
func (*diffCmd) summary() string { return "compare the kept sets and rankings of two runs" }

func (*diffCmd) flags() *pflag.FlagSet {
	fs := newFlags("diff")
	fs.Bool("json", false, "print one JSON object instead of text")
	fs.Int("top", 10, "how many of the rows that moved most to list")
	fs.Bool("across-indexes", false, "compare runs made on different indexes (rows are still matched by id)")
	return fs
}

func (c *diffCmd) run(ctx context.Context, e *env, fs *pflag.FlagSet) error {
	asJSON, _ := fs.GetBool("json")
	top, _ := fs.GetInt("top")
	if fs.NArg() != 2 {
		return usagef("give two run folders")
	}
	if top < 0 {
		return usagef("--top %d: must be 0 or more", top)
	}
	across, _ := fs.GetBool("across-indexes")
	d, err := audit.Compare(fs.Arg(0), fs.Arg(1), top, across)
	if err != nil {
		return err
	}
	return d.Write(e.stdout, asJSON)
}
