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
	fs := newFlags("verify", "sluice verify RUN...",
		`Rechecks the SHA-256 of every file of each run folder against its manifest.json, and that the
target file and the index (its meta.json, which holds the checksum of every other index file) are
the ones the run used. Exit 0 when all agree, 1 with a line per difference otherwise.`,
		`  sluice verify run1
  sluice verify runs/*
  sluice verify copied/run1 --index /data/pool.idx --target /data/support.jsonl`)
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
