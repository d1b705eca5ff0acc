package run

import (
	"context"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"sluice/budget"
	"sluice/index"
	"sluice/index/tokens"
	"sluice/score"
	selection "sluice/select"
)

// Methods a pick scores rows by. The lexical ones read the index alone; the others read the pool's
// rows again or bring scores from elsewhere.
const (
	MethodBM25  = "bm25"
	MethodTFIDF = "tfidf"
	MethodNgram = "ngram"
)

// Methods lists the methods a pick can run, for help and errors.
func Methods() []string {
	return []string{MethodBM25, MethodTFIDF, MethodNgram, MethodVectors, MethodScores}
}

// lexical reports whether method scores from the index's postings.
func lexical(method string) bool { return method == MethodBM25 || method == MethodTFIDF }

// Prefilter is the cheap first stage of a cascade: a lexical method scores every row, and only the
// best-ranked rows go on to the pick's method. Share is the fraction of indexed rows that go on
// (0 < Share <= 1); Tokens, if not zero, lets rows go on from the top until their tokens reach it
// instead. Rows that share no term with the target never go on.
type Prefilter struct {
	Method score.Method
	Share  float64
	Tokens int64
}

// active reports whether the prefilter is asked for.
func (f Prefilter) active() bool { return f.Share > 0 || f.Tokens > 0 }

// String is the prefilter as the manifest records it: METHOD:SHARE% or METHOD:TOKENS.
func (f Prefilter) String() string {
	if !f.active() {
		return ""
	}
	if f.Tokens > 0 {
		return fmt.Sprintf("%s:%d", f.Method, f.Tokens)
	}
	return fmt.Sprintf("%s:%g%%", f.Method, 100*f.Share)
}

// method is the pick's method, defaulting to the lexical one its score parameters name.
func (o *Options) method() string {
	if o.Method != "" {
		return o.Method
	}
	return o.Params.Method.String()
}

// score scores every row by the pick's method, after the prefilter if there is one, and charges
// the work to the ledger it starts.
func (p *picked) score(ctx context.Context) error {
	opt := p.opt
	p.startLedger()
	p.chargeTargets(p.targets, "analyse target rows")
	method := opt.method()
	var rows []int // the rows the method scores; nil for all
	switch {
	case lexical(method) && opt.Prefilter.active():
		return fmt.Errorf("a prefilter goes before a model-based method, not before %s", method)
	case lexical(method):
		res, err := p.lexical(ctx, opt.Params, "")
		if err != nil {
			return err
		}
		p.ix.ReleasePages() // read once; the arrays the pick makes next need the room
		p.scores, p.best = res.Scores, res.Best
		return checkFinite(p.scores, nil)
	case opt.Prefilter.active():
		var err error
		if rows, err = p.prefilter(ctx); err != nil {
			return err
		}
	}
	switch method {
	case MethodNgram:
		nm, err := TrainNgram(ctx, p.ix, p.targets, opt.Ngram)
		if err != nil {
			return err
		}
		if p.scores, err = ngramScores(ctx, p.ix, nm, rows, p.led); err != nil {
			return err
		}
	case MethodScores:
		if err := p.broughtScores(rows); err != nil {
			return err
		}
	case MethodVectors:
		if err := p.vectorScores(ctx, rows); err != nil {
			return err
		}
	default:
		return fmt.Errorf("method %q: give one of %v", method, Methods())
	}
	if rows != nil {
		for r := range p.scores {
			if p.barred[r] != selection.Kept {
				p.scores[r] = math.NaN() // fell at the prefilter: the method's score does not count
			}
		}
	}
	return checkFinite(p.scores, p.barred)
}

// startLedger starts the pick's ledger with the index build's work, which every pick of the index
// is charged in full.
func (p *picked) startLedger() {
	m := p.ix.Meta()
	p.led = &budget.Ledger{Budget: p.opt.Budget}
	p.led.AddSelection("analyse pool rows (index build)", "term", float64(m.TotalLen), budget.FLOPsPerToken,
		fmt.Sprintf("%d FLOPs x %d pool terms", budget.FLOPsPerToken, m.TotalLen))
	if m.Tokenizer != "" {
		p.led.AddSelection("count pool tokens with the tokenizer (index build)", "byte", float64(m.TextBytes), tokens.FLOPsPerByte,
			fmt.Sprintf("%d FLOPs x %d text bytes", tokens.FLOPsPerByte, m.TextBytes))
	}
}

// chargeTargets charges the analysis of target rows to the ledger under the line what.
func (p *picked) chargeTargets(targets []index.Target, what string) {
	var terms int64
	for _, t := range targets {
		terms += int64(len(t.Terms))
	}
	p.led.AddSelection(what, "term", float64(terms), budget.FLOPsPerToken,
		fmt.Sprintf("%d FLOPs x %d target terms", budget.FLOPsPerToken, terms))
}

// lexical scores every row by a lexical method and charges the postings it visits; stage names
// the cascade's stage in the ledger ("" outside a cascade).
func (p *picked) lexical(ctx context.Context, prm score.Params, stage string) (*score.Result, error) {
	qs := make([]score.Query, len(p.targets))
	for i, t := range p.targets {
		qs[i] = score.Query{ID: t.ID, Terms: t.Terms}
	}
	res, err := score.Score(ctx, corpus{p.ix}, qs, prm)
	if err != nil {
		return nil, err
	}
	p.work = res.Work
	p.chargeLexical(prm, stage, res.Work)
	return res, nil
}

// chargeLexical charges lexical scoring's work to the ledger.
func (p *picked) chargeLexical(prm score.Params, stage string, w score.Work) {
	p.led.AddSelection(fmt.Sprintf("%sscore pool (%s, %s): postings visited", stage, prm.Method, prm.Aggregate), "posting", float64(w.Postings), budget.FLOPsPerPosting,
		fmt.Sprintf("%d FLOPs x %d postings in %d passes", budget.FLOPsPerPosting, w.Postings, w.Passes))
}

// prefilter scores every row lexically and returns the rows, ascending, that go on to the pick's
// method; the others are barred as having fallen at the first stage.
func (p *picked) prefilter(ctx context.Context) ([]int, error) {
	f := p.opt.Prefilter
	prm := p.opt.Params
	prm.Method, prm.Aggregate, prm.SkipBest = f.Method, score.Sum, true
	res, err := p.lexical(ctx, prm, "prefilter: ")
	if err != nil {
		return nil, err
	}
	p.ix.ReleasePages()
	n := p.ix.NumRows()
	want := int(math.Ceil(f.Share * float64(n)))
	var rows []int
	var tokens int64
	for _, r := range selection.Order(res.Scores) {
		if res.Scores[r] <= 0 || (f.Tokens == 0 && len(rows) == want) || (f.Tokens > 0 && tokens >= f.Tokens) {
			break
		}
		rows = append(rows, r)
		tokens += p.tokens(r)
	}
	slices.Sort(rows)
	p.barred = make([]selection.Reason, n)
	for i := range p.barred {
		p.barred[i] = selection.Prefilter
	}
	for _, r := range rows {
		p.barred[r] = selection.Kept
	}
	p.survivors = len(rows)
	return rows, nil
}

// checkFinite refuses a score that is not a finite number on a row that may be kept: it would rank
// nowhere sensible, and JSON cannot hold it.
func checkFinite(scores []float64, barred []selection.Reason) error {
	for r, s := range scores {
		if (barred == nil || barred[r] == selection.Kept) && (math.IsNaN(s) || math.IsInf(s, 0)) {
			return fmt.Errorf("score row %d: %v is not a finite number (are --k1 and --b sensible?); nothing was written", r, s)
		}
	}
	return nil
}

// ParsePrefilter reads a prefilter as METHOD:SHARE% (bm25:20%) or METHOD:TOKENS (tfidf:50M).
func ParsePrefilter(s string) (Prefilter, error) {
	var f Prefilter
	m, amount, ok := strings.Cut(s, ":")
	var err error
	if f.Method, err = score.ParseMethod(m); !ok || err != nil {
		return f, fmt.Errorf("%q: give METHOD:SHARE%% or METHOD:TOKENS, METHOD bm25 or tfidf", s)
	}
	if share, isShare := strings.CutSuffix(amount, "%"); isShare {
		v, err := strconv.ParseFloat(share, 64)
		if err != nil || !(v > 0 && v <= 100) {
			return f, fmt.Errorf("%q: the share must be above 0%% and at most 100%%", s)
		}
		f.Share = v / 100
		return f, nil
	}
	v, err := budget.ParseCount(amount)
	if err != nil || v < 1 || v > math.MaxInt64/2 {
		return f, fmt.Errorf("%q: give a share (20%%) or a token count (50M)", s)
	}
	f.Tokens = int64(v)
	return f, nil
}
