package pilots

import (
	"bufio"
	"cmp"
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"sluice/budget"
	"sluice/budget/plan"
	"sluice/index"
	"sluice/index/atomicdir"
	"sluice/score"
	"sluice/select/run"
)

// ErrBadOptions reports pilot settings that cannot make pilots.
var ErrBadOptions = errors.New("bad pilot settings")

// File is the pilots file of a pilots folder: CSV in the form the plan reads.
const File = "pilots.csv"

// header opens File: its first line marks the folder as sluice's; the rest say what to do.
const header = `# pilot subsets written by sluice pilots
# Train a model of trained_params parameters on each file, measure your metric, write it in the
# metric column, then: sluice plan --pilots pilots.csv ...
# Selection was charged once per method (selection_flops); training_flops is 6 x params x tokens.
`

// Options are the pilots to make.
type Options struct {
	// Pick is the pick each method runs: its index, target, guards and method settings are used;
	// Method, Out, Budget, TrainParams and the stops but MinScore are set here.
	Pick    run.Options
	Methods []string  // each once
	Sizes   []float64 // tokens of the subsets; sorted here
	Trained []float64 // parameters of the pilot models to be trained, for the pilots file
	Out     string    // the pilots folder
	// PoolTokens is the pool's tokens as a pick charges them, when the caller has counted them
	// (run.PoolTokens); 0 has Make count them.
	PoolTokens float64
	// Started, when not nil, is called as each method's pick starts, for progress.
	Started func(method string)
}

// A Subset is one file of kept rows: a method's ranking cut at a size.
type Subset struct {
	Method string
	Size   float64 // tokens asked for
	Tokens int64   // tokens it holds: the most rows from the top that stay within Size
	Rows   int
	File   string // in the pilots folder
}

// Result is what Make wrote.
type Result struct {
	Methods    []string
	Subsets    []Subset
	Selection  map[string]float64 // FLOPs charged once per method
	PoolTokens float64
	Out        string
}

// Ladder is n token sizes from lo to hi spaced evenly in log, each rounded to two significant
// figures so file names read well.
func Ladder(lo, hi float64, n int) []float64 {
	if n < 2 {
		return []float64{hi}
	}
	var out []float64
	for i := range n {
		v := math.Exp(math.Log(lo) + (math.Log(hi)-math.Log(lo))*float64(i)/float64(n-1))
		p := math.Pow(10, math.Floor(math.Log10(v))-1)
		out = append(out, math.Round(v/p)*p)
	}
	return slices.Compact(out)
}

// ParseSizes reads subset sizes in tokens: a list (1M,3M,10M), a ladder LO:HI:N, or, for "",
// the default ladder: 5 sizes from 0.3 % to 30 % of the pool's tokens, which pool gives.
func ParseSizes(s string, pool func() (float64, error)) ([]float64, error) {
	if s == "" {
		t, err := pool()
		if err != nil {
			return nil, err
		}
		return Ladder(t*0.003, t*0.3, 5), nil
	}
	if parts := strings.Split(s, ":"); len(parts) == 3 {
		lo, err1 := budget.ParseCount(parts[0])
		hi, err2 := budget.ParseCount(parts[1])
		n, err3 := strconv.Atoi(parts[2])
		if err1 != nil || err2 != nil || err3 != nil || !(hi > lo) || n < 2 || n > 50 {
			return nil, fmt.Errorf("sizes %q: want LO:HI:N with LO < HI token counts and N from 2 to 50: %w", s, ErrBadOptions)
		}
		return Ladder(lo, hi, n), nil
	}
	var out []float64
	for _, p := range strings.Split(s, ",") {
		v, err := budget.ParseCount(p)
		if err != nil {
			return nil, fmt.Errorf("sizes %q: %w (%w)", p, err, ErrBadOptions)
		}
		out = append(out, v)
	}
	return out, nil
}

// WriteSummary writes what r holds for people: each subset, each method's selection charged
// once, and what to do next.
func (r *Result) WriteSummary(w io.Writer) error {
	var b strings.Builder
	for _, s := range r.Subsets {
		fmt.Fprintf(&b, "%-8s %8s tokens asked, %8s kept in %6d rows  %s\n", s.Method, budget.FormatCount(s.Size),
			budget.FormatCount(float64(s.Tokens)), s.Rows, s.File)
	}
	for _, m := range r.Methods {
		fmt.Fprintf(&b, "%s: selection %s FLOPs, charged once\n", m, budget.FormatFLOPs(r.Selection[m]))
	}
	fmt.Fprintf(&b, "wrote %d subsets and %s to %s; fill in the metric column, then run sluice plan --pilots %s\n",
		len(r.Subsets), File, r.Out, filepath.Join(r.Out, File))
	_, err := io.WriteString(w, b.String())
	return err
}

// Folder describes a pilots folder for atomicdir's checks: pilots.csv with its first line, the
// methods' run folders (METHOD.run) and the subsets (METHOD-SIZE.jsonl).
func Folder() atomicdir.Kind {
	first, _, _ := strings.Cut(header, "\n")
	return atomicdir.Kind{Name: "pilots", Mark: File,
		IsOur: func(b []byte) bool { return strings.HasPrefix(string(b), first+"\n") },
		// Only the names Make writes: a user's notes.jsonl beside them makes the folder not ours.
		Holds: func(name string) bool {
			if name == File {
				return true
			}
			if m, ok := strings.CutSuffix(name, ".run"); ok {
				return slices.Contains(run.Methods(), m)
			}
			stem, ok := strings.CutSuffix(name, ".jsonl")
			m, size, cut := strings.Cut(stem, "-")
			return ok && cut && slices.Contains(run.Methods(), m) && size != ""
		},
	}
}

// check refuses settings that cannot make pilots, before any work.
func (o *Options) check() error {
	if len(o.Methods) == 0 {
		return fmt.Errorf("pilots: no methods: %w", ErrBadOptions)
	}
	for i, m := range o.Methods {
		if !slices.Contains(run.Methods(), m) {
			return fmt.Errorf("pilots: method %q: give %s: %w", m, strings.Join(run.Methods(), ", "), ErrBadOptions)
		}
		if slices.Contains(o.Methods[:i], m) {
			return fmt.Errorf("pilots: method %s named twice: %w", m, ErrBadOptions)
		}
	}
	if len(o.Sizes) == 0 || len(o.Trained) == 0 {
		return fmt.Errorf("pilots: need token sizes and pilot model sizes: %w", ErrBadOptions)
	}
	for _, v := range append(slices.Clone(o.Sizes), o.Trained...) {
		if !(v >= 1) || math.IsInf(v, 0) {
			return fmt.Errorf("pilots: size %g: must be 1 or more: %w", v, ErrBadOptions)
		}
	}
	if f := o.Pick.KeptFormat; f != "" && f != run.KeptRows {
		return fmt.Errorf("pilots: the subsets are the rows as they stand; --kept-format %s does not apply: %w", f, ErrBadOptions)
	}
	if o.Pick.Target == "-" {
		return fmt.Errorf("pilots: the target is read once per method: give a file, not -: %w", ErrBadOptions)
	}
	if o.Pick.Select.Fill || o.Pick.Select.MaxRows > 0 || o.Pick.Select.MaxCount > 0 || len(o.Pick.Guards.MaxShare) > 0 {
		return fmt.Errorf("pilots: the subsets are cut by --sizes alone, so they nest; --fill, --max-rows, --max-tokens and --max-share do not apply: %w", ErrBadOptions)
	}
	return nil
}

// inputs are every file the methods read.
func (o *Options) inputs() []string {
	in := []string{o.Pick.Index, o.Pick.Target}
	for _, m := range o.Methods {
		po := o.Pick
		po.Method = m
		in = append(in, po.Inputs()...)
	}
	return in
}

// Make runs each method's pick once, with no budget and a stop at the largest size, and cuts its
// ranking at every size: the rows from the top while their tokens stay within the size, which is
// what 'pick --max-tokens SIZE' keeps. Each subset is written byte for byte, in input order, as
// METHOD-SIZE.jsonl; each method's pick stays beside them as METHOD.run, for why and report; and
// pilots.csv lists every subset for every pilot model size, its metric left to fill in. The folder
// is published only when complete.
func Make(ctx context.Context, opt Options) (*Result, error) {
	if opt.Pick.Epochs == 0 {
		opt.Pick.Epochs = 1
	}
	opt.Sizes = slices.Clone(opt.Sizes)
	slices.Sort(opt.Sizes)
	opt.Sizes = slices.Compact(opt.Sizes)
	if err := opt.check(); err != nil {
		return nil, err
	}
	if err := atomicdir.CheckOut(opt.Out, Folder(), opt.inputs(), index.Folder(), run.Folder(), plan.Folder(), Folder()); err != nil {
		return nil, err
	}
	ix, err := index.Open(opt.Pick.Index)
	if err != nil {
		return nil, err
	}
	defer ix.Close()
	pool := opt.PoolTokens
	if pool == 0 {
		if pool, err = run.IndexTokens(ix); err != nil {
			return nil, err
		}
	}
	tmp, err := atomicdir.Temp(opt.Out)
	if err != nil {
		return nil, err
	}
	defer atomicdir.Discard(tmp) // gone already once published
	res := &Result{Methods: opt.Methods, Selection: map[string]float64{}, PoolTokens: pool, Out: opt.Out}
	var lines []line
	for _, m := range opt.Methods {
		if opt.Started != nil {
			opt.Started(m)
		}
		subs, l, err := opt.method(ctx, ix, m, tmp)
		if err != nil {
			return nil, err
		}
		res.Subsets = append(res.Subsets, subs...)
		res.Selection[m] = l.Selection
		lines = append(lines, csvLines(&opt, m, l, pool, subs)...)
	}
	if err := writeCSV(filepath.Join(tmp, File), lines); err != nil {
		return nil, fmt.Errorf("write %s: %w", filepath.Join(opt.Out, File), err)
	}
	if err := ix.Err(); err != nil { // a part of the index that failed its check as it was read answered zeros
		return nil, err
	}
	if err := atomicdir.Publish(tmp, opt.Out); err != nil {
		return nil, err
	}
	return res, nil
}

// method runs method m's pick into tmp/m.run and cuts its ranking at every size.
func (o *Options) method(ctx context.Context, ix *index.Index, m, tmp string) ([]Subset, *run.Ledger, error) {
	po := o.Pick
	po.Method = m
	if lm, err := score.ParseMethod(m); err == nil {
		// A lexical method scores from the index: it takes its parameters' method, and no
		// prefilter, which goes before the model-based methods only.
		po.Params.Method, po.Prefilter = lm, run.Prefilter{}
	}
	po.Out = filepath.Join(tmp, m+".run")
	// No budget: the sizes stop the pick. The largest pilot model is charged, an upper bound.
	po.Budget, po.BudgetHow = math.MaxFloat64, "none: pilot subsets, cut at --sizes"
	po.TrainParams = slices.Max(o.Trained)
	po.Select.MaxCount = o.Sizes[len(o.Sizes)-1]
	if _, err := run.Pick(ctx, po); err != nil {
		return nil, nil, fmt.Errorf("pilots, method %s: %w", m, err)
	}
	led, err := run.ReadLedger(po.Out)
	if err != nil {
		return nil, nil, err
	}
	type kept struct {
		row, rank int
		tokens    int64
	}
	var ks []kept
	err = run.EachScore(po.Out, func(s run.Score) error {
		if s.Kept {
			ks = append(ks, kept{s.Row, s.Rank, s.Tokens})
		}
		return nil
	})
	if err != nil {
		return nil, nil, err
	}
	slices.SortFunc(ks, func(a, b kept) int { return cmp.Compare(a.rank, b.rank) })
	var subs []Subset
	var rows []int
	var tokens int64
	i := 0
	for _, size := range o.Sizes {
		for i < len(ks) && float64(tokens+ks[i].tokens) <= size {
			rows = append(rows, ks[i].row)
			tokens += ks[i].tokens
			i++
		}
		name := m + "-" + sizeName(size) + ".jsonl"
		if err := copyRows(ix, filepath.Join(tmp, name), rows); err != nil {
			return nil, nil, fmt.Errorf("write %s: %w", filepath.Join(o.Out, name), err)
		}
		subs = append(subs, Subset{Method: m, Size: size, Tokens: tokens, Rows: len(rows), File: name})
	}
	return subs, led, nil
}

// sizeName writes a size for a file name: 2.5M as 2.5M, never with a slash or a space.
func sizeName(v float64) string { return strings.ReplaceAll(budget.FormatCount(v), " ", "") }

func copyRows(ix *index.Index, path string, rows []int) error {
	return atomicdir.WriteFile(path, func(w *bufio.Writer) error { return ix.CopyRows(w, rows) })
}

type line []string

var columns = line{"method", "cost", "selector_params", "flops_per_pool_token", "trained_params", "tokens", "rows", "file", "selection_flops", "training_flops", "metric"}

// csvLines are method m's lines of the pilots file: one per subset and pilot model size. Lexical
// and n-gram methods are charged what sluice's ledger counted, per pool token; methods whose
// scores were made elsewhere keep their declared selector and passes, so the plan can ask what a
// smaller selector would do.
func csvLines(o *Options, m string, l *run.Ledger, pool float64, subs []Subset) []line {
	cost, selector, perToken := "0", "0", strconv.FormatFloat(l.Selection/pool, 'g', 6, 64)
	var d run.Declared
	switch m {
	case run.MethodScores:
		d = o.Pick.Scores.Cost
	case run.MethodVectors:
		d = o.Pick.Vectors.Cost
	}
	if d.SelectorParams > 0 {
		cost, selector, perToken = passesName(d.Passes), strconv.FormatFloat(d.SelectorParams, 'g', -1, 64), ""
	}
	var out []line
	for _, n := range o.Trained {
		for _, s := range subs {
			out = append(out, line{m, cost, selector, perToken, strconv.FormatFloat(n, 'g', -1, 64),
				strconv.FormatInt(s.Tokens, 10), strconv.Itoa(s.Rows), s.File,
				strconv.FormatFloat(l.Selection, 'g', 6, 64),
				strconv.FormatFloat(budget.TrainFLOPs(n, float64(s.Tokens), o.Pick.Epochs), 'g', 6, 64), ""})
		}
	}
	return out
}

func passesName(p float64) string {
	switch p {
	case 1:
		return plan.CostForward
	case 3:
		return plan.CostForwardBackward
	}
	return strconv.FormatFloat(p, 'g', -1, 64)
}

func writeCSV(path string, lines []line) error {
	return atomicdir.WriteFile(path, func(w *bufio.Writer) error {
		w.WriteString(header)
		cw := csv.NewWriter(w)
		cw.Write(columns)
		for _, l := range lines {
			cw.Write(l)
		}
		cw.Flush()
		return cw.Error()
	})
}
