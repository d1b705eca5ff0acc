package main

import (
	"context"
	"fmt"
	"strings"

	"github.com/spf13/pflag"

	"sluice/budget"
	"sluice/index"
	"sluice/index/analysis"
	"sluice/index/atomicdir"
	"sluice/select/run"
)

type indexCmd struct{}

func (*indexCmd) name() string    { return "index" }
func (*indexCmd) summary() string { return "stream JSONL pool files into a persistent index" }

func (*indexCmd) flags() *pflag.FlagSet {
	fs := newFlags("index")
	fs.String("out", "", "index folder to write (required)")
	fs.String("text", "", "JSON paths of the text fields, comma-separated; [] walks an array; | separates alternatives\n(default: detect each file's)")
	fs.String("id", "", "field holding each row's id (default: file:line)")
	fs.String("tokens", "", "field holding each row's token count for the ledger (default: UTF-8 bytes / 4)")
	fs.String("tokenizer", "", "count each row's tokens for the ledger with this tokenizer file (a tokenizer.json of byte-level\nBPE, or GPT-2's vocab.json/merges.txt), as the model to be trained will; default: UTF-8 bytes / 4")
	fs.String("analyzer", index.DefaultAnalyzer, "text analysis: "+strings.Join(analysis.Names(), " or "))
	fs.String("mem", "512MiB", "memory for postings before sorted runs spill to disk")
	fs.String("max-row-bytes", "64MiB", "longer rows are quarantined without being loaded")
	fs.Int("workers", 0, "goroutines analysing rows (default: one per core)")
	fs.Bool("strict", false, "stop at the first bad row (exit 1) instead of quarantining it")
	fs.Float64("near-dup", index.DefaultNearDup, "find exact and near duplicates at this Jaccard similarity (word 5-gram shingles), for picks\nat the same --near-dup")
	fs.Bool("no-dups", false, "find no duplicates (picks then find them themselves)")
	fs.StringArray("exclude", nil, "an evaluation file (JSONL or text): record the rows sharing a word n-gram with any of its\nrows, so that picks excluding the same files need not read the pool again; repeatable")
	fs.Int("exclude-ngram", run.DefaultExcludeN, "words in the n-grams --exclude compares (13 is common practice for benchmark decontamination)")
	fs.String("from", "", "instead of pool files: the index set (or index) whose segments' files to index again as one,\nwith the settings they were built with")
	fs.Bool("dry-run", false, "read, parse and analyse every row and report, but write no index")
	fs.BoolP("quiet", "q", false, "print nothing but errors")
	return fs
}

func (c *indexCmd) run(ctx context.Context, e *env, fs *pflag.FlagSet) error {
	out, _ := fs.GetString("out")
	dry, _ := fs.GetBool("dry-run")
	if out == "" && !dry {
		return usagef("--out is required")
	}
	pools := fs.Args()
	from, _ := fs.GetString("from")
	if (len(pools) == 0) == (from == "") {
		return usagef("no pool files given, or both pool files and --from: give one")
	}
	opt, err := indexOptions(fs)
	if err != nil {
		return err
	}
	opt.Command = append([]string{"sluice"}, e.args...)
	for _, f := range []string{"text", "id", "tokens", "tokenizer", "analyzer", "max-row-bytes", "near-dup", "no-dups"} {
		if from != "" && fs.Changed(f) {
			return usagef("--%s has no use with --from: the segments' own settings are used", f)
		}
	}
	if from != "" {
		if pools, opt, err = index.RebuildFrom(from, opt); err != nil {
			return err
		}
	}
	pools, total, err := index.Sources(pools)
	if err != nil {
		return err
	}
	quiet, _ := fs.GetBool("quiet")
	before, _ := index.Identity(out) // "" when there is no index there yet
	bar := newProgress(e, quiet, total, "indexing")
	opt.Progress = bar.add
	st, err := index.Build(ctx, out, pools, opt)
	bar.done()
	if err != nil {
		return err
	}
	if dry {
		out = "nothing (--dry-run)"
	}
	if !quiet {
		st.WriteSummary(e.stdout, out)
	}
	st.WriteWarnings(e.stderr)
	if after, _ := index.Identity(out); before != "" && after != before {
		// Every run made on the replaced index names its identity: they no longer verify.
		fmt.Fprintf(e.stderr, "  replaced   an index of other content (identity %.12s, now %.12s): runs made on it no longer verify or explain\n", before, after)
	}
	return nil
}

// indexOptions resolves the index's flags, refusing any mistake before work starts.
func indexOptions(fs *pflag.FlagSet) (index.Options, error) {
	var opt index.Options
	opt.Text, _ = fs.GetString("text")
	opt.ID, _ = fs.GetString("id")
	opt.Tokens, _ = fs.GetString("tokens")
	opt.Tokenizer, _ = fs.GetString("tokenizer")
	opt.Within = []atomicdir.Kind{run.Folder()}
	opt.Analyzer, _ = fs.GetString("analyzer")
	opt.Workers, _ = fs.GetInt("workers")
	opt.Strict, _ = fs.GetBool("strict")
	opt.DryRun, _ = fs.GetBool("dry-run")
	opt.NearDup, _ = fs.GetFloat64("near-dup")
	if opt.NoDups, _ = fs.GetBool("no-dups"); opt.NoDups && fs.Changed("near-dup") {
		return opt, usagef("--near-dup has no use with --no-dups")
	} else if opt.NearDup == 0 {
		return opt, usagef("--near-dup 0: give a Jaccard similarity above 0 and at most 1, or --no-dups")
	}
	opt.Exclude, _ = fs.GetStringArray("exclude")
	if opt.ExcludeN, _ = fs.GetInt("exclude-ngram"); opt.ExcludeN < 1 || opt.ExcludeN > 1000 {
		return opt, usagef("--exclude-ngram %d: give 1 to 1000 words", opt.ExcludeN)
	}
	if err := opt.Check(); err != nil {
		return opt, usagef("%v", err)
	}
	var err error
	if opt.Mem, err = budget.ParseBound(flagStr(fs, "mem"), 16<<20); err != nil {
		return opt, usagef("--mem: %v", err)
	}
	mrS, _ := fs.GetString("max-row-bytes")
	mr, err := budget.ParseSize(mrS)
	if err != nil || mr <= 0 || mr > 1<<31 {
		return opt, usagef("--max-row-bytes %q: give a size from 1 byte to 2GiB", mrS)
	}
	opt.MaxRowBytes = int(mr)
	return opt, nil
}
