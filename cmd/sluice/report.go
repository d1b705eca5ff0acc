package main

import (
	"context"
	"fmt"

	"github.com/spf13/pflag"

	"sluice/select/report"
)

type reportCmd struct{}

func (*reportCmd) name() string    { return "report" }
func (*reportCmd) summary() string { return "write one self-contained HTML page showing a run" }

func (*reportCmd) flags() *pflag.FlagSet {
	fs := newFlags("report")
	fs.String("out", "", "HTML file to write (required)")
	fs.Int("sample", 5, "rows to show in each of the four samples")
	fs.Int("terms", 20, "target terms to show")
	fs.Int("files", 12, "pool files to show by name; the rest are summed in one line")
	fs.BoolP("quiet", "q", false, "print nothing but errors")
	addMovedFlags(fs)
	return fs
}

func (c *reportCmd) run(ctx context.Context, e *env, fs *pflag.FlagSet) error {
	out, _ := fs.GetString("out")
	quiet, _ := fs.GetBool("quiet")
	var o report.Options
	o.Sample, _ = fs.GetInt("sample")
	o.Terms, _ = fs.GetInt("terms")
	o.Files, _ = fs.GetInt("files")
	o.Inputs = movedFrom(fs)
	switch {
	case fs.NArg() != 1:
		return usagef("name one run folder")
	case out == "":
		return usagef("--out is required")
	case o.Check() != nil:
		return usagef("%v", o.Check())
	}
	if err := report.CheckOut(out, fs.Arg(0), o.Inputs); err != nil {
		return err
	}
	rep, err := report.Build(ctx, fs.Arg(0), o)
	if err != nil {
		return err
	}
	if err := rep.WriteFile(out); err != nil {
		return err
	}
	if !quiet {
		fmt.Fprintf(e.stderr, "wrote %s: %d rows, %d kept, %d sample rows\n", out, rep.Rows, rep.KeptRows, rep.SampleRows())
	}
	return nil
}
