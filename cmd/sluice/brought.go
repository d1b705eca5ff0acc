package main

import (
	"github.com/spf13/pflag"

	"sluice/budget"
	"sluice/score/external"
	"sluice/select/run"
)

// broughtFlags resolves the flags of the methods whose scores or vectors are made elsewhere, and
// of the static word vectors.
func broughtFlags(fs *pflag.FlagSet, opt *run.Options) error {
	for _, f := range []struct{ flag, method string }{
		{"scores", run.MethodScores}, {"join", run.MethodScores}, {"missing", run.MethodScores},
		{"passes", run.MethodScores}, {"target-passes", run.MethodScores},
		{"pool-vectors", run.MethodVectors}, {"target-vectors", run.MethodVectors},
		{"word-vectors", run.MethodVectors}, {"idf", run.MethodVectors},
	} {
		if fs.Changed(f.flag) && !named(opt.Method, f.method) {
			return usagef("--%s is for --method %s", f.flag, f.method)
		}
	}
	if named(opt.Method, run.MethodScores) {
		if err := scoresFlags(fs, opt); err != nil || !named(opt.Method, run.MethodVectors) {
			return err
		}
	}
	if named(opt.Method, run.MethodVectors) {
		v := &opt.Vectors
		v.Pool, v.Target, v.Words = flagStr(fs, "pool-vectors"), flagStr(fs, "target-vectors"), flagStr(fs, "word-vectors")
		v.IDF, _ = fs.GetBool("idf")
		switch {
		case v.Words != "" && (v.Pool != "" || v.Target != ""):
			return usagef("give --word-vectors, or --pool-vectors with --target-vectors, not both")
		case v.Words != "":
			return nil
		case v.Pool == "" || v.Target == "":
			return usagef("--method vectors needs --pool-vectors and --target-vectors (made elsewhere), or --word-vectors")
		case v.IDF:
			return usagef("--idf weighs words of --word-vectors")
		}
		v.Cost.Passes, v.Cost.TargetPasses = 1, 1 // one forward pass over each row embedded
		return declaredFlags(fs, &v.Cost)
	}
	if named(opt.Method, run.MethodScores) {
		return nil
	}
	for _, f := range []string{"selector-params", "selection-flops"} {
		if fs.Changed(f) {
			return usagef("--%s is for --method scores or vectors", f)
		}
	}
	return nil
}

func scoresFlags(fs *pflag.FlagSet, opt *run.Options) error {
	s := &opt.Scores
	s.File, _ = fs.GetString("scores")
	if s.File == "" {
		return usagef("--method scores needs --scores FILE")
	}
	j, _ := fs.GetString("join")
	var err error
	if s.Join, err = run.ParseJoin(j); err != nil {
		return usagef("--join %q: give auto, id or row", j)
	}
	m, _ := fs.GetString("missing")
	if s.Missing, err = external.ParseMissing(m); err != nil {
		return usagef("--missing %q: give error, lowest or skip", m)
	}
	s.Cost.Passes, _ = fs.GetFloat64("passes")
	s.Cost.TargetPasses, _ = fs.GetFloat64("target-passes")
	if !(s.Cost.Passes > 0 && s.Cost.Passes <= 100) || !(s.Cost.TargetPasses >= 0 && s.Cost.TargetPasses <= 100) {
		return usagef("--passes and --target-passes: give forward-pass equivalents, 0 to 100 (1 forward, 3 forward and backward)")
	}
	return declaredFlags(fs, &s.Cost)
}

// declaredFlags reads the declared cost: a selector's size, or a literal FLOP count. One is
// required, so that the ledger never leaves out what the scores cost.
func declaredFlags(fs *pflag.FlagSet, d *run.Declared) error {
	sp, _ := fs.GetString("selector-params")
	sf, _ := fs.GetString("selection-flops")
	var err error
	switch {
	case sp != "" && sf != "":
		return usagef("give --selector-params or --selection-flops, not both")
	case sp != "":
		if d.SelectorParams, err = budget.ParseCount(sp); err != nil {
			return usagef("--selector-params: %v", err)
		}
	case sf != "":
		if d.FLOPs, err = budget.ParseFLOPs(sf); err != nil {
			return usagef("--selection-flops: %v", err)
		}
	default:
		return usagef("declare what making the scores or vectors cost: --selector-params N (with --passes), or --selection-flops F; the ledger charges it")
	}
	return nil
}
