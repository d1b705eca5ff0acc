package main

import (
	"bufio"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/klauspost/compress/gzip"
	"github.com/klauspost/compress/zstd"
	"github.com/spf13/pflag"

	"sluice/budget"
	"sluice/index"
	"sluice/index/analysis"
	"sluice/index/atomicdir"
	"sluice/index/jsonl"
	"sluice/score"
	selection "sluice/select"
)

type pickCmd struct{}

func (*pickCmd) name() string { return "pick" }
func (*pickCmd) summary() string {
	return "score an index against target rows and keep the best under a FLOP budget"
}

func (*pickCmd) flags() *pflag.FlagSet {
	fs := newFlags("pick", "sluice pick --index DIR --target FILE --budget FLOPS --train-params N --out RUN [flags]",
		`Scores every indexed row against the target rows (BM25 or TF-IDF cosine, with the pool's
statistics), ranks the rows by score (ties in input order) and keeps them from the top while the
ledger - selection cost over the whole pool, charged first, plus 6 x parameters x tokens x epochs for
each kept row - stays within the budget. The pool is not read again except to copy the kept rows.

Writes, into RUN (published only when complete):
  kept.jsonl    the kept rows, byte for byte as in the pool, in input order
  scores.jsonl  one object per indexed row: id, score, rank, kept, reason, tokens, target, ledger
  ledger.json   every cost line with its count, unit cost and formula; totals, budget, stop reason
  rejected.jsonl  target rows that could not be read: file, line, offset, length, reason, raw bytes

The budget is --budget FLOPS (2.5e18, 400P, 3E) or --gpu-hours with --gpu-flops (the GPU's peak
FLOP/s for your precision) and --mfu (the fraction of peak your training reaches; 0.3-0.5 is common
practice for dense transformer training). There are no defaults for --gpu-flops and --mfu.

Selection narrows what the model sees: rows unlike the target rows are dropped, with whatever they
taught. Lexical scores measure word overlap with the target rows, not quality or safety. Remove your
evaluation sets from the pool before picking, or the pick will find them.`,
		`  sluice pick --index pool.idx --target support.jsonl --budget 2.5e18 --train-params 1.3B --out run1
  sluice pick --index pool.idx --target support.jsonl --method tfidf --aggregate max \
      --gpu-hours 64 --gpu-flops 312T --mfu 0.4 --train-params 7B --epochs 2 --fill --out run2`)
	fs.String("index", "", "index folder made by 'sluice index' (required)")
	fs.String("target", "", "JSONL file of target-task rows (required)")
	fs.String("target-text", "", "JSON paths of the target's text fields (default: the index's; another spec needs --other-target-text)")
	fs.Bool("other-target-text", false, "accept a --target-text that differs from the index's text spec")
	fs.Bool("index-settings", false, "take the index's text spec and analyzer whatever --target-text and --analyzer say")
	fs.String("target-id", "", "field holding each target row's id (default: the index's id field, else file:line)")
	fs.String("analyzer", "", "refuse an index built with another analyzer ("+strings.Join(analysis.Names(), " or ")+"; default: take the index's)")
	fs.String("method", "bm25", "scoring: bm25 or tfidf")
	fs.String("aggregate", "sum", "over target rows: sum (the set as one query) or max (nearest target row)")
	fs.Bool("attribute", true, "name, for every row, the target row that contributed most; with --aggregate sum\nthis costs one pass per target row, and --attribute=false skips it")
	fs.Float64("k1", 1.2, "BM25 term-frequency saturation")
	fs.Float64("b", 0.75, "BM25 length normalisation")
	fs.String("budget", "", "total FLOPs for selection plus training, e.g. 2.5e18 or 400P")
	fs.Float64("gpu-hours", 0, "budget as GPU hours (with --gpu-flops and --mfu)")
	fs.String("gpu-flops", "", "peak FLOP/s of one GPU, e.g. 989T")
	fs.Float64("mfu", 0, "model FLOPs utilisation, a fraction in (0,1]")
	fs.String("train-params", "", "parameters of the model to be trained, e.g. 7B or 1.3e9 (required)")
	fs.Float64("epochs", 1, "training epochs over the kept rows")
	fs.Bool("fill", false, "after the first row that does not fit, keep scanning for rows that do")
	fs.Int("max-rows", 0, "keep at most this many rows (0: no limit)")
	fs.Float64("min-score", 0, "keep only rows scoring at least this; rows sharing no term are never kept")
	fs.String("out", "", "run folder to write (required)")
	fs.String("compress", "none", "write the kept rows as kept.jsonl (none), kept.jsonl.gz (gzip) or kept.jsonl.zst (zstd)")
	fs.String("mem", "64MiB", "memory for the postings of one span of pool rows; lists are read a span at a time")
	fs.BoolP("quiet", "q", false, "print nothing but errors")
	return fs
}

// pickConfig is a pick fully resolved from flags; the demo builds one directly.
type pickConfig struct {
	indexDir   string
	target     string
	targetText string
	targetID   string
	analyzer   string // "" takes the index's; else the index must have been built with it
	otherText  bool   // a targetText unlike the index's spec is meant
	params     score.Params
	budget     float64
	budgetHow  string
	trainN     float64
	epochs     float64
	sel        selection.Options
	out        string
	compress   string
	quiet      bool
	command    []string // the command line, for the manifest
}

func (c *pickCmd) run(ctx context.Context, e *env, fs *pflag.FlagSet) error {
	if fs.NArg() > 0 {
		return usagef("unexpected argument %q", fs.Arg(0))
	}
	cfg, err := pickConfigFrom(fs)
	if err != nil {
		return err
	}
	cfg.command = append([]string{"sluice"}, e.args...)
	_, err = doPick(ctx, e, cfg)
	return err
}

func pickConfigFrom(fs *pflag.FlagSet) (*pickConfig, error) {
	str := func(n string) string { v, _ := fs.GetString(n); return v }
	num := func(n string) float64 { v, _ := fs.GetFloat64(n); return v }
	cfg := &pickConfig{indexDir: str("index"), target: str("target"), targetText: str("target-text"), targetID: str("target-id"), analyzer: str("analyzer"), out: str("out")}
	cfg.otherText, _ = fs.GetBool("other-target-text")
	if is, _ := fs.GetBool("index-settings"); is {
		cfg.targetText, cfg.analyzer = "", ""
	}
	cfg.quiet, _ = fs.GetBool("quiet")
	switch cfg.compress = str("compress"); cfg.compress {
	case "none", "gzip", "zstd":
	default:
		return nil, usagef("--compress %q: give none, gzip or zstd", cfg.compress)
	}
	for _, req := range []struct{ v, name string }{{cfg.indexDir, "--index"}, {cfg.target, "--target"}, {cfg.out, "--out"}} {
		if req.v == "" {
			return nil, usagef("%s is required", req.name)
		}
	}
	if cfg.analyzer != "" && !slices.Contains(analysis.Names(), cfg.analyzer) {
		return nil, usagef("--analyzer %q: give %s", cfg.analyzer, strings.Join(analysis.Names(), " or "))
	}
	if cfg.targetText != "" {
		if _, err := jsonl.ParseSpec(cfg.targetText); err != nil {
			return nil, usagef("--target-text: %v", err)
		}
	}
	if _, err := jsonl.NewExtractor(jsonl.Shapes()[0], cfg.targetID, ""); err != nil {
		return nil, usagef("--target-id: %v", err)
	}
	var err error
	p := score.DefaultParams()
	if p.Method, err = score.ParseMethod(str("method")); err != nil {
		return nil, usagef("--method: %v", err)
	}
	if p.Aggregate, err = score.ParseAggregate(str("aggregate")); err != nil {
		return nil, usagef("--aggregate: %v", err)
	}
	p.K1, p.B = num("k1"), num("b")
	if attr, _ := fs.GetBool("attribute"); !attr && p.Aggregate == score.Sum {
		p.SkipBest = true
	}
	if !(p.K1 >= 0 && !math.IsInf(p.K1, 0)) {
		return nil, usagef("--k1 %v: must be a finite number, 0 or more", p.K1)
	}
	if !(p.B >= 0 && p.B <= 1) {
		return nil, usagef("--b %v: must be between 0 and 1", p.B)
	}
	memS := str("mem")
	mem, err := budget.ParseSize(memS)
	if err != nil {
		return nil, usagef("--mem: %v", err)
	}
	if mem < 1<<20 {
		return nil, usagef("--mem %s: give at least 1MiB", memS)
	}
	p.CacheBytes = mem
	cfg.params = p

	b, gh, gf, mfu := str("budget"), num("gpu-hours"), str("gpu-flops"), num("mfu")
	// Changed, not the values, says what was given: --mfu 0 is a bad MFU, not a missing one.
	ghSet, gfSet, mfuSet := fs.Changed("gpu-hours"), fs.Changed("gpu-flops"), fs.Changed("mfu")
	switch {
	case fs.Changed("budget") && (ghSet || gfSet || mfuSet):
		return nil, usagef("give either --budget or --gpu-hours with --gpu-flops and --mfu, not both")
	case fs.Changed("budget"):
		if cfg.budget, err = budget.ParseFLOPs(b); err != nil {
			return nil, usagef("--budget: %v", err)
		}
		cfg.budgetHow = "--budget " + b
	case ghSet || gfSet || mfuSet:
		if !ghSet || !gfSet || !mfuSet {
			return nil, usagef("--gpu-hours needs --gpu-flops and --mfu too (there are no defaults for them)")
		}
		if !(gh > 0 && !math.IsInf(gh, 0)) {
			return nil, usagef("--gpu-hours %v: must be a finite number above 0", gh)
		}
		if !(mfu > 0 && mfu <= 1) {
			return nil, usagef("--mfu %v: must be a fraction above 0 and at most 1", mfu)
		}
		peak, err := budget.ParseFLOPs(gf)
		if err != nil {
			return nil, usagef("--gpu-flops: %v", err)
		}
		if cfg.budget, err = budget.FromGPUHours(gh, peak, mfu); err != nil {
			return nil, usagef("%v", err)
		}
		cfg.budgetHow = fmt.Sprintf("%g GPU-hours x %s FLOP/s x MFU %g", gh, gf, mfu)
	default:
		return nil, usagef("a budget is required: --budget FLOPS, or --gpu-hours with --gpu-flops and --mfu")
	}
	tp := str("train-params")
	if tp == "" {
		return nil, usagef("--train-params is required (parameters of the model you will train, e.g. 7B)")
	}
	if cfg.trainN, err = budget.ParseCount(tp); err != nil {
		return nil, usagef("--train-params: %v", err)
	}
	cfg.epochs = num("epochs")
	if !(cfg.epochs > 0 && !math.IsInf(cfg.epochs, 0)) {
		return nil, usagef("--epochs %v: must be a finite number above 0", cfg.epochs)
	}
	cfg.sel.Fill, _ = fs.GetBool("fill")
	cfg.sel.MaxRows, _ = fs.GetInt("max-rows")
	if cfg.sel.MaxRows < 0 {
		return nil, usagef("--max-rows %d: must be 0 or more", cfg.sel.MaxRows)
	}
	cfg.sel.MinScore = num("min-score")
	if math.IsNaN(cfg.sel.MinScore) || math.IsInf(cfg.sel.MinScore, 0) {
		return nil, usagef("--min-score %v: must be finite", cfg.sel.MinScore)
	}
	return cfg, nil
}

// pickResult is what a pick did, for the summary and the demo.
type pickResult struct {
	spec     string // the target's text spec, resolved
	targetID string // the target's id field, resolved
	ix       *index.Index
	targets  []index.Target
	// targetsRejected counts the target rows quarantined in the run's rejected.jsonl.
	targetsRejected int
	res             *score.Result
	dec             []selection.Decision
	sum             selection.Summary
	ledger          *budget.Ledger
	tokens          []int64
	kept            []int
}

func doPick(ctx context.Context, e *env, cfg *pickConfig) (*pickResult, error) {
	if err := checkRunTarget(cfg.out); err != nil {
		return nil, err
	}
	started := time.Now()
	ix, err := index.Open(cfg.indexDir)
	if err != nil {
		return nil, err
	}
	defer ix.Close()
	m := ix.Meta()
	if cfg.analyzer != "" && cfg.analyzer != m.Analyzer {
		return nil, fmt.Errorf("index %s was built with the %s analyzer, not %s as --analyzer asks: rebuild it with --analyzer %s, or drop --analyzer to score with %s",
			cfg.indexDir, m.Analyzer, cfg.analyzer, cfg.analyzer, m.Analyzer)
	}
	an, err := ix.NewAnalyzer()
	if err != nil {
		return nil, err
	}
	spec := cfg.targetText
	if spec == "" {
		spec = m.Text
	} else if sp, err := jsonl.ParseSpec(spec); err == nil && sp.String() != m.Text && !cfg.otherText {
		// Target rows read from other fields than the pool's are scored against text of another kind;
		// that is sometimes meant (the target file has other field names), so it must be said.
		return nil, fmt.Errorf("--target-text %s differs from the index's text fields %s: pass --other-target-text if the target's fields really are named otherwise, or --index-settings (or no --target-text) to read it like the pool",
			sp, m.Text)
	}
	tid := cfg.targetID
	if tid == "" {
		tid = m.IDField
	}
	targets, trej, err := index.ReadTargets(cfg.target, spec, tid, an, m.MaxRowBytes)
	if err != nil {
		return nil, err
	}
	switch {
	case len(targets) == 0 && len(trej) == 0:
		return nil, fmt.Errorf("read target %s: the target set is empty: no rows to pick for; nothing was written", cfg.target)
	case len(targets) == 0:
		return nil, fmt.Errorf("read target %s: no usable target rows: all %d quarantined, the first at line %d: %s; nothing was written",
			cfg.target, len(trej), trej[0].Line, trej[0].Reason)
	}
	qs := make([]score.Query, len(targets))
	for i, t := range targets {
		qs[i] = score.Query{ID: t.ID, Terms: t.Terms}
	}
	res, err := score.Score(ctx, corpus{ix}, qs, cfg.params)
	if err != nil {
		return nil, err
	}

	led := &budget.Ledger{Budget: cfg.budget}
	led.AddSelection("analyse pool rows (index build)", "term", float64(m.TotalLen), budget.FLOPsPerToken,
		fmt.Sprintf("%d FLOPs x %d pool terms", budget.FLOPsPerToken, m.TotalLen))
	led.AddSelection("analyse target rows", "term", float64(res.Work.TargetTokens), budget.FLOPsPerToken,
		fmt.Sprintf("%d FLOPs x %d target terms", budget.FLOPsPerToken, res.Work.TargetTokens))
	led.AddSelection(fmt.Sprintf("score pool (%s, %s): postings visited", cfg.params.Method, cfg.params.Aggregate), "posting", float64(res.Work.Postings), budget.FLOPsPerPosting,
		fmt.Sprintf("%d FLOPs x %d postings in %d passes", budget.FLOPsPerPosting, res.Work.Postings, res.Work.Passes))

	if led.Selection() > cfg.budget {
		// Nothing can be kept, and a run folder would show a ledger over its budget: say so instead.
		return nil, fmt.Errorf("the selection cost alone, %s FLOPs (%s), exceeds the budget of %s FLOPs: raise the budget; nothing was written",
			fmtFLOPs(led.Selection()), strings.Join(selectionWords(led), " + "), fmtFLOPs(cfg.budget))
	}
	n := ix.NumRows()
	costs := make([]float64, n)
	tokens := make([]int64, n)
	for r := 0; r < n; r++ {
		t, ok, tb := ix.RowTokens(r)
		if !ok {
			t = int64(budget.EstimateTokens(int(tb)))
		}
		tokens[r] = t
		costs[r] = budget.TrainFLOPs(cfg.trainN, float64(t), cfg.epochs)
	}
	opt := cfg.sel
	opt.Budget = cfg.budget
	opt.Fixed = led.Selection()
	dec, sum, err := selection.Pick(res.Scores, costs, opt)
	if err != nil {
		return nil, err
	}
	var kept []int
	var keptTokens int64
	for r, d := range dec {
		if d.Kept {
			kept = append(kept, r)
			keptTokens += tokens[r]
		}
	}
	led.AddTraining(fmt.Sprintf("train %s-parameter model on kept rows", fmtCount(cfg.trainN)), "token", float64(keptTokens)*cfg.epochs, 6*cfg.trainN,
		fmt.Sprintf("6 x %g parameters x %d tokens x %g epochs", cfg.trainN, keptTokens, cfg.epochs))
	led.Stop = stopText(sum, cfg)
	tokSrc := "UTF-8 bytes of the text fields / 4, rounded up (rule of thumb for English, common practice)"
	if m.TokensField != "" {
		tokSrc = fmt.Sprintf("field %q of each row", m.TokensField)
	}
	led.Notes = append(led.Notes,
		"budget: "+cfg.budgetHow,
		"tokens per row: "+tokSrc,
		"selection cost is charged over the whole pool before any row is kept",
		reconciliation(m, len(targets), len(trej)),
	)
	if m.DuplicateIDs > 0 {
		led.Notes = append(led.Notes, fmt.Sprintf("ids: %d rows repeat an earlier row's id; scores.jsonl is in input order, so its n-th line is the n-th indexed row", m.DuplicateIDs))
	}
	pr := &pickResult{spec: spec, targetID: tid, ix: ix, targets: targets, targetsRejected: len(trej), res: res, dec: dec, sum: sum, ledger: led, tokens: tokens, kept: kept}
	if err := writeRun(cfg, pr, trej); err != nil {
		return nil, err
	}
	if !cfg.quiet {
		printPickSummary(e, cfg, pr, time.Since(started))
	}
	return pr, nil
}

// corpus lets the scorer read an index's posting lists through index cursors, a span of rows at a
// time, when they do not all fit its memory.
type corpus struct{ *index.Index }

func (c corpus) Cursor(term string) (score.PostingCursor, error) { return c.NewCursor(term), nil }

// reconciliation is the line every pick summary and ledger carries, so no row vanishes unseen.
func reconciliation(m index.Meta, targets, targetsRejected int) string {
	return fmt.Sprintf("rows: read %d = indexed %d + quarantined %d; target rows: read %d = used %d + quarantined %d",
		m.RowsRead, m.Rows, m.RowsRejected, targets+targetsRejected, targets, targetsRejected)
}

func selectionWords(l *budget.Ledger) []string {
	var w []string
	for _, line := range l.Lines {
		if line.Kind == budget.KindSelection {
			w = append(w, fmt.Sprintf("%s: %s", line.What, fmtFLOPs(line.FLOPs)))
		}
	}
	return w
}

func stopText(s selection.Summary, cfg *pickConfig) string {
	switch s.Stop {
	case selection.StopBudget:
		return fmt.Sprintf("budget: the row ranked %d did not fit in what was left", s.StopRank)
	case selection.StopExhausted:
		return "every row with a score was considered"
	case selection.StopMaxRows:
		return fmt.Sprintf("max-rows: %d rows kept", cfg.sel.MaxRows)
	case selection.StopMinScore:
		return fmt.Sprintf("min-score: the rows from rank %d on score below %g", s.StopRank, cfg.sel.MinScore)
	case selection.StopNoMatch:
		return fmt.Sprintf("no-match: the rows from rank %d on share no term with the target rows", s.StopRank)
	case selection.StopFixedOverBudget:
		return "fixed-over-budget: the selection cost alone exceeds the budget"
	}
	return s.Stop.String()
}

// checkRunTarget refuses, before any work is done, to replace anything but an earlier run folder
// or an empty one.
func checkRunTarget(dir string) error {
	return atomicdir.CheckReplaceable(dir, func(dir string) bool {
		_, err := os.Stat(filepath.Join(dir, "ledger.json"))
		return err == nil
	})
}

func writeRun(cfg *pickConfig, pr *pickResult, trej []index.Reject) error {
	tmp, err := atomicdir.Temp(cfg.out)
	if err != nil {
		return err
	}
	ok := false
	defer func() {
		if !ok {
			os.RemoveAll(tmp)
		}
	}()
	// The kept rows and the scores are nearly all of a run's bytes. Each is written, hashed and
	// synced on a goroutine of its own, so that one's wait for the disk overlaps the other's work.
	outs := []struct {
		name string
		fill func(w *bufio.Writer) error
	}{
		{keptName(cfg.compress), func(w *bufio.Writer) error { return copyKept(w, pr, cfg.compress) }},
		{"scores.jsonl", func(w *bufio.Writer) error { return writeScores(w, pr) }},
		{"ledger.json", func(w *bufio.Writer) error {
			b, err := json.MarshalIndent(pr.ledger, "", "  ")
			if err != nil {
				return err
			}
			_, err = w.Write(append(b, '\n'))
			return err
		}},
		{"rejected.jsonl", func(w *bufio.Writer) error {
			enc := json.NewEncoder(w)
			for i := range trej {
				if err := enc.Encode(&trej[i]); err != nil {
					return err
				}
			}
			return nil
		}},
	}
	sums := make([]string, len(outs))
	errs := make([]error, len(outs))
	var wg sync.WaitGroup
	for i, o := range outs {
		wg.Go(func() { sums[i], errs[i] = writeHashed(filepath.Join(tmp, o.name), o.fill) })
	}
	wg.Wait()
	hashes := map[string]string{}
	for i, o := range outs {
		if errs[i] != nil {
			return errs[i]
		}
		hashes[o.name] = sums[i]
	}
	if err := writeManifest(tmp, pr.manifest(cfg), hashes); err != nil {
		return err
	}
	if err := atomicdir.Publish(tmp, cfg.out); err != nil {
		return err
	}
	ok = true
	return nil
}

// keptName is the kept file's name for a --compress choice.
func keptName(compress string) string {
	switch compress {
	case "gzip":
		return "kept.jsonl.gz"
	case "zstd":
		return "kept.jsonl.zst"
	}
	return "kept.jsonl"
}

// copyKept copies the kept rows to w, compressed as asked; decompressed, the bytes are the same.
func copyKept(w *bufio.Writer, pr *pickResult, compress string) error {
	switch compress {
	case "gzip":
		zw := gzip.NewWriter(w)
		if err := pr.ix.CopyRows(zw, pr.kept); err != nil {
			return err
		}
		return zw.Close()
	case "zstd":
		zw, err := zstd.NewWriter(w)
		if err != nil {
			return err
		}
		if err := pr.ix.CopyRows(zw, pr.kept); err != nil {
			zw.Close()
			return err
		}
		return zw.Close()
	}
	return pr.ix.CopyRows(w, pr.kept)
}

// writeFileBytes writes b to path and fsyncs it.
func writeFileBytes(path string, b []byte) error {
	return writeFile(path, func(w *bufio.Writer) error { _, err := w.Write(b); return err })
}

// manifest records the pick for the run folder. The hashes of the index's meta.json and of the
// target file tie the run to its inputs.
func (pr *pickResult) manifest(cfg *pickConfig) *manifest {
	m := &manifest{Sluice: version(), Command: cfg.command,
		Index:  fileRef{Path: cfg.indexDir},
		Target: fileRef{Path: cfg.target},
		Settings: runSettings{
			Analyzer: pr.ix.Meta().Analyzer, TargetText: pr.spec, TargetID: pr.targetID,
			Method: cfg.params.Method.String(), Aggregate: cfg.params.Aggregate.String(),
			K1: cfg.params.K1, B: cfg.params.B, Attribute: !cfg.params.SkipBest,
			Budget: cfg.budget, BudgetHow: cfg.budgetHow, TrainParams: cfg.trainN, Epochs: cfg.epochs,
			Fill: cfg.sel.Fill, MaxRows: cfg.sel.MaxRows, MinScore: cfg.sel.MinScore, Kept: keptName(cfg.compress),
		}}
	m.Index.SHA256, _ = sha256File(filepath.Join(cfg.indexDir, "meta.json"))
	m.Target.SHA256, _ = sha256File(cfg.target)
	return m
}

// writeFile creates path, lets fill write it through a buffer, then flushes and fsyncs it.
func writeFile(path string, fill func(w *bufio.Writer) error) error {
	_, err := writeHashed(path, fill)
	return err
}

// writeHashed is writeFile that also returns the SHA-256 of what was written, in hex, so that a
// manifest need not read the file again.
func writeHashed(path string, fill func(w *bufio.Writer) error) (string, error) {
	f, err := os.Create(path)
	if err != nil {
		return "", fmt.Errorf("write %w", err)
	}
	h := sha256.New()
	w := bufio.NewWriterSize(io.MultiWriter(f, h), 1<<20)
	err = fill(w)
	if err == nil {
		err = w.Flush()
	}
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return "", fmt.Errorf("write %s: %w", path, err)
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}

// writeScores writes one line per indexed row in input order. Scores are printed with the fewest
// digits that read back to the same float64, so the file agrees with explanations to the bit.
func writeScores(w *bufio.Writer, pr *pickResult) error {
	// Target ids and reasons repeat on many lines: quote each once.
	targets := make([][]byte, len(pr.targets))
	for i, t := range pr.targets {
		targets[i] = appendJSONString(nil, t.ID)
	}
	reasons := map[selection.Reason][]byte{}
	var plain [256]bool // the bytes that stand in a JSON string as they are
	for c := range plain {
		plain[c] = jsonPlain([]byte{byte(c)})
	}
	var b []byte
	for r, d := range pr.dec {
		b = append(b[:0], `{"id":`...)
		b = appendJSONID(b, pr.ix, r, &plain)
		b = append(b, `,"score":`...)
		b = strconv.AppendFloat(b, pr.res.Scores[r], 'g', -1, 64)
		b = append(b, `,"rank":`...)
		b = strconv.AppendInt(b, int64(d.Rank), 10)
		b = append(b, `,"kept":`...)
		b = strconv.AppendBool(b, d.Kept)
		if !d.Kept {
			q, ok := reasons[d.Reason]
			if !ok {
				q = appendJSONString(nil, d.Reason.String())
				reasons[d.Reason] = q
			}
			b = append(b, `,"reason":`...)
			b = append(b, q...)
		}
		b = append(b, `,"tokens":`...)
		b = strconv.AppendInt(b, pr.tokens[r], 10)
		b = append(b, `,"target":`...)
		if pr.res.Best == nil {
			b = append(b, "null"...) // not asked for (--attribute=false)
		} else if t := pr.res.Best[r]; t >= 0 {
			b = append(b, targets[t]...)
		} else {
			b = append(b, "null"...)
		}
		b = append(b, `,"ledger":`...)
		b = strconv.AppendFloat(b, d.LedgerAfter, 'g', -1, 64)
		b = append(b, "}\n"...)
		if _, err := w.Write(b); err != nil {
			return err
		}
	}
	return nil
}

// appendJSONID appends the id of row r of ix as a JSON string, quoting it in place when all its
// bytes are plain, as ids nearly always are.
func appendJSONID(b []byte, ix *index.Index, r int, plain *[256]bool) []byte {
	start := len(b)
	b = append(b, '"')
	b = ix.AppendRowID(b, r)
	for _, c := range b[start+1:] {
		if !plain[c] {
			id := string(b[start+1:])
			return appendJSONString(b[:start], id)
		}
	}
	return append(b, '"')
}

// jsonPlain reports whether s can stand in a JSON string as it is, as encoding/json would write it.
func jsonPlain[T string | []byte](s T) bool {
	for i := 0; i < len(s); i++ {
		if c := s[i]; c < 0x20 || c >= 0x7f || c == '"' || c == '\\' || c == '<' || c == '>' || c == '&' {
			return false
		}
	}
	return true
}

// appendJSONString appends s as a JSON string. Ids are nearly always plain ASCII, which is copied
// as it is; anything else goes through encoding/json.
func appendJSONString(b []byte, s string) []byte {
	if !jsonPlain(s) {
		q, _ := json.Marshal(s)
		return append(b, q...)
	}
	b = append(b, '"')
	b = append(b, s...)
	return append(b, '"')
}

func fmtCount(v float64) string {
	switch {
	case v >= 1e9:
		return strconv.FormatFloat(v/1e9, 'g', 4, 64) + "B"
	case v >= 1e6:
		return strconv.FormatFloat(v/1e6, 'g', 4, 64) + "M"
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

func fmtFLOPs(v float64) string { return strconv.FormatFloat(v, 'e', 3, 64) }

func printPickSummary(e *env, cfg *pickConfig, pr *pickResult, took time.Duration) {
	l := pr.ledger
	var keptTok int64
	for _, r := range pr.kept {
		keptTok += pr.tokens[r]
	}
	pct := func(v float64) string {
		if l.Budget == 0 {
			return "-"
		}
		return fmt.Sprintf("%.1f%%", 100*v/l.Budget)
	}
	var sb strings.Builder
	fmt.Fprintf(&sb, "picked %d of %d rows (%d tokens) with %s/%s against %d target rows in %s\n",
		len(pr.kept), pr.ix.NumRows(), keptTok, cfg.params.Method, cfg.params.Aggregate, len(pr.targets), took.Round(time.Millisecond))
	fmt.Fprintf(&sb, "  budget     %s FLOPs (%s)\n", fmtFLOPs(l.Budget), cfg.budgetHow)
	fmt.Fprintf(&sb, "  selection  %s FLOPs (%s)\n", fmtFLOPs(l.Selection()), pct(l.Selection()))
	fmt.Fprintf(&sb, "  training   %s FLOPs (%s)\n", fmtFLOPs(l.Training()), pct(l.Training()))
	fmt.Fprintf(&sb, "  left       %s FLOPs (%s)\n", fmtFLOPs(l.Left()), pct(l.Left()))
	fmt.Fprintf(&sb, "  stopped    %s\n", l.Stop)
	if pr.sum.Stop == selection.StopNoMatch && pr.sum.StopRank == 1 {
		fmt.Fprintf(&sb, "  warning    no pool row shares a term with the target rows: check --target-text and that the target is the task you meant\n")
	}
	fmt.Fprintf(&sb, "  %s\n", strings.Replace(reconciliation(pr.ix.Meta(), len(pr.targets), pr.targetsRejected), "rows: ", "rows       ", 1))
	if m := pr.ix.Meta(); m.RowsRejected > 0 {
		fmt.Fprintf(&sb, "  quarantine %s/rejected.jsonl (pool rows)\n", cfg.indexDir)
	}
	if pr.targetsRejected > 0 {
		fmt.Fprintf(&sb, "  quarantine %s/rejected.jsonl (target rows)\n", cfg.out)
	}
	fmt.Fprintf(&sb, "  wrote      %s/{%s,scores.jsonl,ledger.json,rejected.jsonl}\n", cfg.out, keptName(cfg.compress))
	fmt.Fprint(e.stderr, sb.String())
}
