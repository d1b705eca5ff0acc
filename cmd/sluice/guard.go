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
	if !(g.NearDup > 0 && g.NearDup <= 1) {
		return usagef("--near-dup %v: give a Jaccard similarity above 0 and at most 1", g.NearDup)
	}
	if g.KeepDuplicates && fs.Changed("near-dup") {
		return usagef("--near-dup has no use with --keep-duplicates")
	}
	g.Exclude, _ = fs.GetStringArray("exclude")
	g.ExcludeN, _ = fs.GetInt("exclude-ngram")
	if g.ExcludeN < 1 || g.ExcludeN > 1000 {
		return usagef("--exclude-ngram %d: give 1 to 1000 words", g.ExcludeN)
	}
	shares, _ := fs.GetStringArray("max-share")
	var err error
	if g.MaxShare, err = run.ParseShares(shares); err != nil {
		return usagef("--max-share %v", err)
	}
	return nil
}
