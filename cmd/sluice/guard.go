package main

import (
	"github.com/spf13/pflag"

	"sluice/select/run"
)

// guardFlags resolves the flags that guard a pick against duplicates, evaluation rows and one
// source taking the budget.
func guardFlags(fs *pflag.FlagSet, g *run.Guards) error {
	g.KeepDuplicates, _ = fs.GetBool("keep-duplicates")
	g.NearDup, _ = fs.GetFloat64("near-dup")
	g.Exclude, _ = fs.GetStringArray("exclude")
	g.ExcludeN, _ = fs.GetInt("exclude-ngram")
	if err := g.Check(fs.Changed("near-dup")); err != nil {
		return usagef("%v", err)
	}
	shares, _ := fs.GetStringArray("max-share")
	var err error
	if g.MaxShare, err = run.ParseShares(shares); err != nil {
		return usagef("--max-share %v", err)
	}
	return nil
}
