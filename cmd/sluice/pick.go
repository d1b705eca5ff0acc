package main

import (
	"cmp"
	"context"
	"errors"
	"math"
	"runtime/debug"
	"slices"
	"strings"
	"time"

	"github.com/spf13/pflag"

	"sluice/budget"
	"sluice/index/analysis"
	"sluice/score"
	"sluice/select/run"
)

type pickCmd struct{}

func (*pickCmd) name() string { return "pick" }
func (*pickCmd) summary() string {
	return "score an index against target rows and keep the best under a FLOP budget"
}

func (*pickCmd) flags() *pflag.FlagSet {
	return addPickFlags(newFlags("pick"))
}

// addPickFlags declares every flag of a pick.
func addPickFlags(fs *pflag.FlagSet) *pflag.FlagSet {
	addPickInputFlags(fs)
	addMethodFlags(fs)
	addBudgetFlags(fs)
	addPickStopFlags(fs)
	return fs
}

func (c *pickCmd) run(ctx context.Context, e *env, fs *pflag.FlagSet) error {
	if fs.NArg() > 0 {
		return usagef("unexpected argument %q", fs.Arg(0))
	}
	opt, err := pickOptions(fs, false)
	if err != nil {
		return err
	}
	opt.Command, opt.Stdin = append([]string{"sluice"}, e.args...), e.stdin
	quiet, _ := fs.GetBool("quiet")
	_, err = pick(ctx, e, opt, quiet)
	return err
}

// pick runs a pick and prints its summary on stderr unless quiet.
func pick(ctx context.Context, e *env, opt run.Options, quiet bool) (*run.Result, error) {
	opt.Version = version()
	started := time.Now()
	if opt.MaxMem > 0 {
		// The collector works harder near the bound rather than pass it; the old limit is restored after.
		defer debug.SetMemoryLimit(debug.SetMemoryLimit(opt.MaxMem))
	}
	bar := newProgress(e, quiet, 0, "scoring rows")
	opt.Params.Progress = bar.rows
	res, err := run.Pick(ctx, opt)
	bar.done()
	if errors.Is(err, run.ErrMemory) || errors.Is(err, run.ErrSets) {
		return nil, usagef("%v", err)
	}
	if err == nil && !quiet {
		err = res.WriteSummary(e.stdout, time.Since(started))
	}
	return res, err
}

// addPickInputFlags declares where a pick reads its index and target, and how.
func addPickInputFlags(fs *pflag.FlagSet) {
	fs.String("index", "", "index folder made by 'sluice index' (required)")
	fs.StringArray("target", nil, "JSONL file of target-task rows (required); repeat it to pick for several target sets at once")
	fs.String("weights", "", "with several --target, each set's part of the training budget, in their order: 0.7,0.3 (default: equal parts)")
	fs.String("target-text", "", "JSON paths of the target's text fields (default: the index's; another spec needs --other-target-text)")
	fs.Bool("other-target-text", false, "accept a --target-text that differs from the index's text spec")
	fs.Bool("index-settings", false, "take the index's text spec and analyzer whatever --target-text and --analyzer say")
	fs.String("target-id", "", "field holding each target row's id (default: the index's id field, else file:line)")
	fs.String("analyzer", "", "refuse an index built with another analyzer ("+strings.Join(analysis.Names(), " or ")+"; default: take the index's)")
}

// addMethodFlags declares how rows are scored, guarded and charged.
func addMethodFlags(fs *pflag.FlagSet) {
	fs.String("method", "bm25", "scoring: bm25 or tfidf (lexical, from the index), ngram (n-gram language models),\nvectors (cosine of embeddings) or scores (made elsewhere)")
	fs.String("aggregate", "sum", "over target rows: sum (the set as one query) or max (nearest target row)")
	fs.Bool("attribute", true, "name, for every row, the target row that contributed most; with --aggregate sum\nthis is most of the scoring's work (half a large pick's CPU), and --attribute=false skips it")
	fs.Int("order", run.DefaultNgramOrder, "ngram: n-gram order, 3 to 5")
	fs.String("ngram-score", "difference", "ngram: difference (target model against a pool-sample model, per token) or target (target model alone)")
	fs.Uint64("ngram-seed", 1, "ngram: seed of the pool sample the pool model is trained on")
	fs.String("scores", "", "scores: JSONL {\"id\"|\"row\", \"score\"} or CSV (id or row, score) of scores made elsewhere")
	fs.String("join", "auto", "scores: join the file to pool rows by id, row (0-based) or auto (by the key the file has)")
	fs.String("missing", "error", "scores: a pool row without a score is an error, lowest (below every score) or skip (never kept)")
	fs.String("pool-vectors", "", "vectors: .npy (float32/float16) or JSONL {\"id\",\"vector\"} of one vector per pool row, in input order")
	fs.String("target-vectors", "", "vectors: the same for the target rows, in file order")
	fs.String("word-vectors", "", "vectors: instead, a word-vector text file (\"count dim\", then \"word v1 ... vdim\") averaged over each row's words")
	fs.Bool("idf", false, "vectors: weight words by their idf over the pool")
	fs.String("selector-params", "", "scores, vectors: parameters of the model that made them, for the ledger (declared)")
	fs.Float64("passes", 1, "scores: forward-pass equivalents per pool token: 1 forward, 3 forward and backward (declared)")
	fs.Float64("target-passes", 0, "scores: the same per target token, when the method ran the target rows too (declared)")
	fs.String("selection-flops", "", "scores, vectors: the whole cost of making them, instead of --selector-params (declared)")
	fs.Bool("keep-duplicates", false, "keep every copy; by default only the best-scored row of each cluster of exact or near duplicates is kept")
	fs.Float64("near-dup", run.DefaultNearDup, "Jaccard similarity of word 5-gram shingles at which rows are near duplicates, in (0,1]")
	fs.StringArray("exclude", nil, "an evaluation file (JSONL or text): pool rows sharing a word n-gram with any of its rows are never kept; repeatable")
	fs.Int("exclude-ngram", run.DefaultExcludeN, "words in the n-grams --exclude compares (13 is common practice for benchmark decontamination)")
	fs.StringArray("max-share", nil, "cap a pool file's kept rows at a share of the training budget: FILE=0.3 (the file as indexed), or 0.3 for every file; repeatable")
	fs.String("prefilter", "", "before a model-based method, keep only the best rows by a lexical method:\nMETHOD:SHARE% (bm25:20%) or METHOD:TOKENS (tfidf:50M); the rest are never scored")
	fs.Float64("k1", 1.2, "BM25 term-frequency saturation")
	fs.Float64("b", 1, "BM25 length normalisation (1 measured best with sum; 0.75 is the textbook value)")
}

// addPickStopFlags declares the trained model, the stops and the output.
func addPickStopFlags(fs *pflag.FlagSet) {
	fs.String("train-params", "", "parameters of the model to be trained, e.g. 7B or 1.3e9 (required)")
	fs.Float64("epochs", 1, "training epochs over the kept rows")
	fs.Bool("fill", false, "after the first row that does not fit, keep scanning for rows that do")
	fs.Int("max-rows", 0, "keep at most this many rows (0: no limit)")
	fs.String("min-score", "", "keep only rows scoring at least this: a score, a share of the best score (50%),\na percentile of the scored rows (p90: the best tenth), or knee (where the sorted scores stop falling steeply);\nlexical rows sharing no term are never kept")
	fs.String("max-tokens", "", "keep rows only until they hold this many tokens (e.g. 50M), whatever budget is left")
	fs.String("out", "", "run folder to write (required)")
	fs.String("kept-format", run.KeptRows, "kept rows as they stand (rows), or in one schema with source, id, score and rank:\ntext ({\"text\"}) or chat ({\"messages\": user turn, assistant turn})")
	fs.String("compress", "none", "write the kept rows as kept.jsonl (none), kept.jsonl.gz (gzip) or kept.jsonl.zst (zstd)")
	fs.String("mem", "64MiB", "memory for the postings of one span of pool rows; lists are read a span at a time")
	fs.String("max-mem", "", "refuse, before scoring, a pick its estimate says needs more memory (e.g. 8GiB), and hold the heap to it")
	fs.BoolP("quiet", "q", false, "print nothing but errors")
}

// pickOptions resolves a pick's flags, refusing any mistake before work starts. For pilots, which
// have no budget and a list of model sizes, --method may name several methods, comma-separated.
func pickOptions(fs *pflag.FlagSet, pilots bool) (run.Options, error) {
	opt, err := pickInputs(fs, pilots)
	if err != nil {
		return opt, err
	}
	if opt.Params, err = scoreParams(fs); err != nil {
		return opt, err
	}
	if err := methodFlags(fs, &opt); err != nil {
		return opt, err
	}
	if !pilots {
		if opt.Budget, opt.BudgetHow, err = budgetFlags(fs); err != nil {
			return opt, err
		}
	}
	return opt, trainingFlags(fs, &opt, pilots)
}

// pickInputs resolves where a pick reads and writes, and how it reads the target.
func pickInputs(fs *pflag.FlagSet, pilots bool) (run.Options, error) {
	opt := run.Options{Index: flagStr(fs, "index"), TargetText: flagStr(fs, "target-text"),
		TargetID: flagStr(fs, "target-id"), Analyzer: flagStr(fs, "analyzer"), Out: flagStr(fs, "out"), Compress: flagStr(fs, "compress"), KeptFormat: flagStr(fs, "kept-format")}
	if targets, _ := fs.GetStringArray("target"); len(targets) > 0 {
		opt.Target, opt.ExtraTargets = targets[0], targets[1:]
	}
	opt.OtherText, _ = fs.GetBool("other-target-text")
	if is, _ := fs.GetBool("index-settings"); is {
		opt.TargetText, opt.Analyzer = "", ""
	}
	if err := run.CheckFormats(opt.Compress, opt.KeptFormat); err != nil {
		return opt, usagef("%v", err)
	}
	noBudget := ""
	if !budgetGiven(fs) && !pilots {
		noBudget = "a budget"
	}
	if err := required(unset(fs, "index"), unset(fs, "target"), unset(fs, "out"), unset(fs, "train-params"), noBudget); err != nil {
		if noBudget != "" {
			return opt, usagef("%v (give --budget FLOPS, or --gpu-hours with --gpu-flops and --mfu)", err)
		}
		return opt, err
	}
	var err error
	if opt.Weights, err = run.ParseWeights(flagStr(fs, "weights"), 1+len(opt.ExtraTargets)); err != nil {
		return opt, usagef("--weights %v", err)
	} else if pilots && opt.Weights != nil {
		return opt, usagef("pilots take one --target")
	}
	if err := run.CheckTargetFlags(opt); err != nil {
		return opt, usagef("%v", err)
	}
	return opt, nil
}

// scoreParams resolves the scoring flags.
func scoreParams(fs *pflag.FlagSet) (score.Params, error) {
	var err error
	p := score.DefaultParams()
	for _, m := range strings.Split(flagStr(fs, "method"), ",") {
		if !slices.Contains(run.Methods(), m) {
			return p, usagef("--method %q: give %s", m, strings.Join(run.Methods(), ", "))
		}
		if lm, err := score.ParseMethod(m); err == nil {
			p.Method = lm
		}
	}
	if p.Aggregate, err = score.ParseAggregate(flagStr(fs, "aggregate")); err != nil {
		return p, usagef("--aggregate: %v", err)
	}
	p.K1, _ = fs.GetFloat64("k1")
	p.B, _ = fs.GetFloat64("b")
	if attr, _ := fs.GetBool("attribute"); !attr && p.Aggregate == score.Sum {
		p.SkipBest = true
	}
	if err := p.CheckK1B(); err != nil {
		return p, usagef("--%v", err)
	}
	if p.CacheBytes, err = budget.ParseBound(flagStr(fs, "mem"), 1<<20); err != nil {
		return p, usagef("--mem: %v", err)
	}
	return p, nil
}

// methodFlags resolves the method and the flags of the model-based methods and the cascade.
func methodFlags(fs *pflag.FlagSet, opt *run.Options) error {
	opt.Method, _ = fs.GetString("method")
	opt.Ngram.Order, _ = fs.GetInt("order")
	opt.Ngram.Seed, _ = fs.GetUint64("ngram-seed")
	ns, ok := flagStr(fs, "ngram-score"), false
	if opt.Ngram.TargetOnly, ok = run.ParseNgramScore(ns); !ok {
		return usagef("--ngram-score %q: give difference or target", ns)
	}
	if opt.Ngram.Order < 3 || opt.Ngram.Order > 5 {
		return usagef("--order %d: give 3, 4 or 5", opt.Ngram.Order)
	}
	for _, f := range []string{"order", "ngram-score", "ngram-seed"} {
		if fs.Changed(f) && !named(opt.Method, run.MethodNgram) {
			return usagef("--%s is for --method ngram", f)
		}
	}
	if err := cmp.Or(broughtFlags(fs, opt), guardFlags(fs, &opt.Guards)); err != nil {
		return err
	}
	pf, _ := fs.GetString("prefilter")
	if pf == "" {
		return nil
	}
	if !named(opt.Method, run.MethodNgram) && !named(opt.Method, run.MethodVectors) && !named(opt.Method, run.MethodScores) {
		return usagef("--prefilter goes before a model-based method (--method ngram), not before %s", opt.Method)
	}
	var err error
	if opt.Prefilter, err = run.ParsePrefilter(pf); err != nil {
		return usagef("--prefilter %v", err)
	}
	return nil
}

// named says whether the --method value list, comma-separated, names method m.
func named(list, m string) bool { return slices.Contains(strings.Split(list, ","), m) }

// trainingFlags resolves the trained model's size, the epochs and the stops of the pick.
func trainingFlags(fs *pflag.FlagSet, opt *run.Options, pilots bool) error {
	tp, _ := fs.GetString("train-params")
	if tp == "" {
		return usagef("--train-params is required (parameters of the model you will train, e.g. 7B)")
	}
	var err error
	if pilots {
		// Pilots take a list of model sizes, which they read themselves.
	} else if opt.TrainParams, err = budget.ParseCount(tp); err != nil {
		return usagef("--train-params: %v", err)
	}
	opt.Epochs, _ = fs.GetFloat64("epochs")
	if !(opt.Epochs > 0 && !math.IsInf(opt.Epochs, 0)) {
		return usagef("--epochs %v: must be a finite number above 0", opt.Epochs)
	}
	opt.Select.Fill, _ = fs.GetBool("fill")
	opt.Select.MaxRows, _ = fs.GetInt("max-rows")
	if opt.Select.MaxRows < 0 {
		return usagef("--max-rows %d: must be 0 or more", opt.Select.MaxRows)
	}
	ms, _ := fs.GetString("min-score")
	opt.MinScoreSet = fs.Changed("min-score")
	if opt.MinScore, err = run.ParseMinScore(ms); err != nil {
		return usagef("--min-score %v", err)
	}
	opt.Select.MinScore = opt.MinScore.Plain
	if mt, _ := fs.GetString("max-tokens"); mt != "" {
		if opt.Select.MaxCount, err = budget.ParseCount(mt); err != nil {
			return usagef("--max-tokens: %v", err)
		}
	}
	if mm, _ := fs.GetString("max-mem"); mm != "" {
		if opt.MaxMem, err = budget.ParseBound(mm, 64<<20); err != nil {
			return usagef("--max-mem: %v", err)
		}
	}
	return nil
}
