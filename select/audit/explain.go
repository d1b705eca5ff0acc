package audit

import (
	"bufio"
	"bytes"
	"cmp"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"slices"
	"sort"
	"strings"
	"text/tabwriter"
	"unicode/utf8"

	"sluice/budget"
	"sluice/index"
	"sluice/score"
	"sluice/score/ngram"
	"sluice/select/run"
)

// Row is what is known of one row of a run: its score, rank and fate, the terms that made its
// score, and the target rows that matched it best.
type Row struct {
	ID     string  `json:"id"`
	Row    int     `json:"row"`
	Source string  `json:"source"`
	Score  float64 `json:"score"`
	Rank   int     `json:"rank"`
	Rows   int     `json:"rows"`
	Kept   bool    `json:"kept"`
	Reason string  `json:"reason,omitempty"`
	Why    string  `json:"why"`
	// DuplicateOf, Contaminated and NGram are as in scores.jsonl: the row kept instead of a
	// duplicate; the evaluation row (file:line) and n-gram a contaminated row shares.
	DuplicateOf  string  `json:"duplicate_of,omitempty"`
	Contaminated string  `json:"contaminated,omitempty"`
	NGram        string  `json:"ngram,omitempty"`
	Tokens       int64   `json:"tokens"`
	Ledger       float64 `json:"ledger"`
	Budget       float64 `json:"budget"`
	Method       string  `json:"method"`
	// Set is, in a run for several target sets, the set whose score, rank and fate these are.
	Set       string       `json:"set,omitempty"`
	SetWeight float64      `json:"set_weight,omitempty"`
	Text      string       `json:"text"`            // the row as it stands in its file, cut at textBytes
	Parts     []score.Part `json:"parts"`           // lexical methods: the terms that made the score
	Words     []Word       `json:"words,omitempty"` // n-gram: the tokens that moved the score most
	Targets   []Target     `json:"targets"`
}

// MarshalJSON writes the row; a row barred before its method scored it has "score": null, as in
// scores.jsonl.
func (r Row) MarshalJSON() ([]byte, error) {
	type plain Row
	v := struct {
		plain
		Score *float64 `json:"score"`
	}{plain: plain(r)}
	if !math.IsNaN(r.Score) {
		v.Score = &r.Score
	}
	return json.Marshal(v)
}

// Word is one token's share of an n-gram score: its log-probability under the target model and
// under the pool model (natural logs), the longest n-gram each model held for it, and its part of
// the score, which is (Target − Pool) / (tokens + 1).
type Word struct {
	Token       string  `json:"token"`
	Pos         int     `json:"pos"`
	Target      float64 `json:"target_logprob"`
	Pool        float64 `json:"pool_logprob"`
	TargetOrder int     `json:"target_order"`
	PoolOrder   int     `json:"pool_order"`
	Part        float64 `json:"part"`
}

// textBytes caps the row text an explanation carries: enough to recognise the row.
const textBytes = 2000

// rowText reads a row's line from its pool file, cut at textBytes on a character boundary.
func (x *Explainer) rowText(row int) string {
	var b bytes.Buffer
	if err := x.ix.CopyRows(&b, []int{row}); err != nil {
		return "(the row could not be read again: " + err.Error() + ")"
	}
	t := bytes.TrimRight(b.Bytes(), "\r\n")
	if len(t) > textBytes {
		cut := textBytes
		for cut > 0 && !utf8.RuneStart(t[cut]) {
			cut--
		}
		return string(t[:cut]) + " …"
	}
	return string(t)
}

// words is how many of a row's tokens an n-gram explanation lists, largest part (either sign)
// first.
const words = 12

// Target is a target row that matched a pool row, with its score and the terms they share.
type Target struct {
	ID     string   `json:"id"`
	Score  float64  `json:"score"`
	Shared []string `json:"shared"`
}

// Explainer explains rows of one run from its index and target. Open one with NewExplainer and
// Close it when done.
type Explainer struct {
	dir     string
	m       *run.Manifest
	stop    string
	ix      *index.Index
	targets []index.Target
	qs      []score.Query
	sets    []explainSet // a run for several target sets: each set's rows and queries
	p       score.Params
	nm      *run.NgramModels // for an n-gram run
	scores  []float64        // for a run whose scores come from files, recomputed
	best    []int32
	ctx     context.Context
}

// explainSet is one target set of a run for several.
type explainSet struct {
	ref     run.SetRef
	targets []index.Target
	qs      []score.Query
}

// NewExplainer opens the run folder dir and its inputs (at the manifest's paths, or where in says),
// checking that they are the ones the run used.
func NewExplainer(ctx context.Context, dir string, in run.Inputs) (*Explainer, error) {
	m, err := run.ReadManifest(dir)
	if err != nil {
		return nil, err
	}
	in.Apply(m)
	if err := run.CheckInputs("explain", dir, m); err != nil {
		return nil, err
	}
	ix, err := index.Open(m.Index.Path)
	if err != nil {
		return nil, err
	}
	x := &Explainer{dir: dir, m: m, ix: ix, ctx: ctx}
	if err := x.readTargets(); err != nil {
		ix.Close()
		return nil, err
	}
	if err := x.method(); err != nil {
		ix.Close()
		return nil, err
	}
	if l, err := run.ReadLedger(dir); err == nil {
		x.stop = l.Stop
	}
	return x, nil
}

// method readies what explaining the run's method needs: its lexical parameters, or its n-gram
// models trained again exactly as the pick trained them.
func (x *Explainer) method() error {
	st := x.m.Settings
	if st.Method == run.MethodNgram {
		if st.Ngram == nil {
			return fmt.Errorf("explain %s: the manifest names the ngram method without its options", x.dir)
		}
		var err error
		x.nm, err = run.TrainNgram(x.ctx, x.ix, x.targets, *st.Ngram)
		return err
	}
	if st.Method == run.MethodScores || st.Method == run.MethodVectors {
		var err error
		x.scores, x.best, err = run.Recompute(x.ctx, x.ix, x.targets, x.m)
		return err
	}
	var err error
	x.p = score.DefaultParams()
	if x.p.Method, err = score.ParseMethod(st.Method); err != nil {
		return fmt.Errorf("explain %s: %w", x.dir, err)
	}
	if x.p.Aggregate, err = score.ParseAggregate(st.Aggregate); err != nil {
		return fmt.Errorf("explain %s: %w", x.dir, err)
	}
	x.p.K1, x.p.B = st.K1, st.B
	return nil
}

func (x *Explainer) readTargets() error {
	an, err := x.ix.NewAnalyzer()
	if err != nil {
		return err
	}
	st := x.m.Settings
	read := func(path string) ([]index.Target, []score.Query, error) {
		ts, _, err := index.ReadTargets(path, st.TargetText, st.TargetID, an, x.ix.Meta().MaxRowBytes)
		qs := make([]score.Query, len(ts))
		for i, t := range ts {
			qs[i] = score.Query{ID: t.ID, Terms: t.Terms}
		}
		return ts, qs, err
	}
	if len(x.m.Sets) == 0 {
		x.targets, x.qs, err = read(x.m.Target.Path)
		return err
	}
	for _, ref := range x.m.Sets {
		ts, qs, err := read(ref.Path)
		if err != nil {
			return err
		}
		x.sets = append(x.sets, explainSet{ref: ref, targets: ts, qs: qs})
		x.targets = append(x.targets, ts...)
	}
	return nil
}

// Close releases the index.
func (x *Explainer) Close() error { return x.ix.Close() }

// Manifest is the run's manifest, with the inputs' paths as opened.
func (x *Explainer) Manifest() *run.Manifest { return x.m }

// Index is the run's index, open.
func (x *Explainer) Index() *index.Index { return x.ix }

// Targets are the run's target rows, analysed; every set's, in order, for a run for several.
func (x *Explainer) Targets() []index.Target { return x.targets }

// Explain explains the row of scores.jsonl s, showing the top best-matching target rows. The score
// is recomputed from the index (and, for an n-gram run, the row's text) and must agree with
// s.Score to the last bit.
func (x *Explainer) Explain(s run.Score, top int) (Row, error) {
	r, err := x.explain(s, top)
	if err == nil {
		err = x.ix.Err() // a part of the index that failed its check as it was read answered zeros
	}
	return r, err
}

func (x *Explainer) explain(s run.Score, top int) (Row, error) {
	st := x.m.Settings
	loc := x.ix.RowLocation(s.Row)
	r := Row{ID: s.ID, Row: s.Row, Source: fmt.Sprintf("%s:%d", loc.File, loc.Line), Score: s.Score, Rank: s.Rank,
		Rows: x.ix.NumRows(), Kept: s.Kept, Reason: s.Reason, Tokens: s.Tokens, Ledger: s.Ledger,
		Budget: st.Budget, Method: st.MethodName(), Text: x.rowText(s.Row),
		DuplicateOf: s.DuplicateOf, Contaminated: s.Contaminated, NGram: s.NGram}
	targets, qs := x.targets, x.qs
	if len(x.sets) > 0 {
		i := slices.IndexFunc(x.sets, func(e explainSet) bool { return e.ref.Name == s.Set })
		if i < 0 {
			return Row{}, fmt.Errorf("explain %s: row %q: scores.jsonl names the target set %q, which the manifest does not", x.dir, s.ID, s.Set)
		}
		targets, qs, r.Set, r.SetWeight = x.sets[i].targets, x.sets[i].qs, s.Set, x.sets[i].ref.Weight
		st.MinScore = x.sets[i].ref.MinScore
	}
	var got float64
	switch {
	case math.IsNaN(s.Score):
		// Barred before the method scored it: nothing to recompute.
		r.Why = x.fate(r, st)
		return r, nil
	case x.scores != nil:
		got = x.scores[s.Row]
		if x.best != nil && x.best[s.Row] >= 0 {
			b := x.best[s.Row]
			r.Targets = []Target{{ID: x.targets[b].ID, Score: got}}
		}
	case x.nm != nil:
		terms, err := run.RowTerms(x.ctx, x.ix, s.Row)
		if err != nil {
			return Row{}, err
		}
		got = x.nm.Score(terms)
		r.Words = topWords(x.nm.Explain(terms))
	default:
		ex, err := score.Explain(x.ix, qs, x.p, s.Row, top)
		if err != nil {
			return Row{}, err
		}
		got, r.Parts = ex.Score, ex.Parts
		for _, tm := range ex.Targets {
			r.Targets = append(r.Targets, Target{ID: targets[tm.Index].ID, Score: tm.Score, Shared: tm.Shared})
		}
	}
	if math.Float64bits(got) != math.Float64bits(s.Score) {
		return Row{}, fmt.Errorf("explain %s: row %q: recomputed score %v disagrees with scores.jsonl's %v", x.dir, s.ID, got, s.Score)
	}
	r.Why = x.fate(r, st)
	return r, nil
}

// fate says in words why a row was or was not kept, and for a run for several target sets, for
// which set.
func (x *Explainer) fate(r Row, st run.Settings) string {
	if r.Set == "" {
		return fate(r, st, x.stop)
	}
	ref, _ := x.m.SetNamed(r.Set)
	switch r.Reason {
	case "":
		return fmt.Sprintf("kept for target set %s (weight %.3g): ranked %d of %d against that set, and its training cost of %s FLOPs fitted in what was left of the set's share; the ledger stood at %s FLOPs (%.1f%% of the budget) after it",
			r.Set, r.SetWeight, r.Rank, r.Rows, budget.FormatFLOPs(budget.TrainFLOPs(st.TrainParams, float64(r.Tokens), st.Epochs)), budget.FormatFLOPs(r.Ledger), 100*r.Ledger/st.Budget)
	case "budget":
		return fmt.Sprintf("not kept for target set %s, against which it ranked %d of %d: its training cost of %s FLOPs did not fit in what was left of the set's share (%g tokens, %g given by sets that ran out)",
			r.Set, r.Rank, r.Rows, budget.FormatFLOPs(budget.TrainFLOPs(st.TrainParams, float64(r.Tokens), st.Epochs)), ref.Share, ref.Given)
	case "below-cut":
		return fmt.Sprintf("not kept for target set %s, against which it ranked %d of %d, after the set's walk had stopped (%s)", r.Set, r.Rank, r.Rows, ref.Stop)
	case "duplicate":
		return fmt.Sprintf("duplicate: it is an exact or near duplicate of %s, which stands for their cluster (the row kept for some set, or else the one set %s scores higher); ranked %d of %d against set %s",
			r.DuplicateOf, r.Set, r.Rank, r.Rows, r.Set)
	}
	return fmt.Sprintf("%s (its best rank, %d of %d, was against target set %s)", fate(r, st, x.stop), r.Rank, r.Rows, r.Set)
}

// topWords keeps the tokens whose parts moved the score most, largest magnitude first (ties in
// text order).
func topWords(parts []ngram.TokenPart) []Word {
	ws := make([]Word, len(parts))
	for i, p := range parts {
		ws[i] = Word{Token: p.Token, Pos: p.Pos, Target: p.Target, Pool: p.Pool, TargetOrder: p.TargetOrder, PoolOrder: p.PoolOrder, Part: p.Part}
	}
	sort.SliceStable(ws, func(i, j int) bool { return math.Abs(ws[i].Part) > math.Abs(ws[j].Part) })
	return ws[:min(len(ws), words)]
}

// Explain explains the rows of the run folder dir with the given ids (every row with that id, if
// ids repeat), showing the top best-matching target rows of each.
func Explain(ctx context.Context, dir string, in run.Inputs, ids []string, top int) ([]Row, error) {
	x, err := NewExplainer(ctx, dir, in)
	if err != nil {
		return nil, err
	}
	defer x.Close()
	lines, err := run.FindScores(dir, ids)
	if err != nil {
		return nil, err
	}
	var out []Row
	for _, id := range ids {
		found := lines[id]
		if len(found) == 0 {
			return nil, fmt.Errorf("explain %s: no row %q in scores.jsonl", dir, id)
		}
		for _, s := range found {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			r, err := x.Explain(s, top)
			if err != nil {
				return nil, err
			}
			out = append(out, r)
		}
	}
	return out, nil
}

// fate says in words why a row was or was not kept.
func fate(r Row, st run.Settings, stop string) string {
	share := func(v float64) string {
		return fmt.Sprintf("%s FLOPs, %.1f%% of the budget", budget.FormatFLOPs(v), 100*v/st.Budget)
	}
	cost := budget.TrainFLOPs(st.TrainParams, float64(r.Tokens), st.Epochs)
	switch r.Reason {
	case "":
		return fmt.Sprintf("kept: ranked %d of %d, and its training cost of %s FLOPs fitted; the ledger stood at %s after it", r.Rank, r.Rows, budget.FormatFLOPs(cost), share(r.Ledger))
	case "below-cut":
		return fmt.Sprintf("below the cut: ranked %d of %d, after the pick had stopped (%s)", r.Rank, r.Rows, stop)
	case "budget":
		return fmt.Sprintf("budget reached: its training cost of %s FLOPs did not fit in the %s FLOPs left at rank %d", budget.FormatFLOPs(cost), budget.FormatFLOPs(st.Budget-r.Ledger), r.Rank)
	case "max-rows":
		return fmt.Sprintf("max-rows: %d rows had been kept before rank %d", st.MaxRows, r.Rank)
	case "min-score":
		return fmt.Sprintf("min-score: its score %g is below --min-score %g", r.Score, st.MinScore)
	case "no-match":
		return "no match: it shares no term with any target row"
	case "prefilter":
		return fmt.Sprintf("fell at the prefilter (%s): the cheap first stage did not rank it high enough to be scored by %s", st.Prefilter, st.Method)
	case "no-score":
		return "no score: the scores brought in have none for it"
	case "duplicate":
		return fmt.Sprintf("duplicate: it is an exact or near duplicate of %s, which scored higher (or as high, and comes first) and stands for their cluster", r.DuplicateOf)
	case "contaminated":
		return fmt.Sprintf("contaminated: it shares the %d-word run \"%s\" with the evaluation row %s, so it is never kept", len(strings.Fields(r.NGram)), r.NGram, r.Contaminated)
	case "max-tokens":
		return "max-tokens: the rows kept before it held as many tokens as --max-tokens allows"
	case "source-cap":
		return "source cap: its pool file had reached its --max-share of the training budget"
	}
	return r.Reason
}

// WriteRows writes rows for people (WriteText) or, with asJSON, as one JSON object a line.
func WriteRows(w io.Writer, rows []Row, asJSON bool) error {
	bw := bufio.NewWriter(w)
	for _, r := range rows {
		if !asJSON {
			r.WriteText(bw)
			continue
		}
		b, err := json.Marshal(r)
		if err != nil {
			return err
		}
		bw.Write(append(b, '\n'))
	}
	return bw.Flush()
}

// WriteText writes the explanation for people: score, fate, ledger, the row's text, and the
// terms or tokens that made its score, largest first, and the target rows it matched best.
func (r Row) WriteText(w io.Writer) {
	fmt.Fprintf(w, "row %s (%s)\n", r.ID, r.Source)
	if r.Set != "" {
		fmt.Fprintf(w, "  set     %s (weight %.3g): the score, rank and target rows below are against this set alone\n", r.Set, r.SetWeight)
	}
	fmt.Fprintf(w, "  score   %v (%s), rank %d of %d\n", r.Score, r.Method, r.Rank, r.Rows)
	fmt.Fprintf(w, "  fate    %s\n", r.Why)
	fmt.Fprintf(w, "  ledger  %s of %s FLOPs after it; its %d tokens\n", budget.FormatFLOPs(r.Ledger), budget.FormatFLOPs(r.Budget), r.Tokens)
	fmt.Fprintf(w, "  text    %s\n", r.Text)
	switch {
	case len(r.Parts) > 0:
		fmt.Fprintf(w, "  terms   largest contribution first (they add up to the score)\n")
		tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintf(tw, "\tterm\ttf\tdf\tidf\ttf part\tweight\tcontribution\t\n")
		parts := slices.Clone(r.Parts)
		slices.SortStableFunc(parts, func(a, b score.Part) int { return cmp.Compare(b.Contribution, a.Contribution) })
		for _, p := range parts {
			fmt.Fprintf(tw, "\t%s\t%d\t%d\t%.4f\t%.4f\t%.4g\t%.6g\t\n", p.Term, p.TF, p.DF, p.IDF, p.TFPart, p.QueryWeight, p.Contribution)
		}
		tw.Flush()
	case len(r.Words) == 0 && !math.IsNaN(r.Score) && (strings.HasPrefix(r.Method, "bm25") || strings.HasPrefix(r.Method, "tfidf")):
		fmt.Fprintf(w, "  terms   none: this row shares no term with any target row, so its score is 0\n")
	}
	if len(r.Words) > 0 {
		fmt.Fprintf(w, "  tokens  that moved the score most (part = (target - pool log-probability) / symbols)\n")
		tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintf(tw, "\ttoken\tat\ttarget ln p\tn\tpool ln p\tn\tpart\t\n")
		for _, x := range r.Words {
			fmt.Fprintf(tw, "\t%s\t%d\t%.4f\t%d\t%.4f\t%d\t%+.5g\t\n", x.Token, x.Pos, x.Target, x.TargetOrder, x.Pool, x.PoolOrder, x.Part)
		}
		tw.Flush()
	}
	if len(r.Targets) > 0 {
		fmt.Fprintf(w, "  best target rows\n")
		for _, t := range r.Targets {
			fmt.Fprintf(w, "    %-20s %.6g  shares: %s\n", t.ID, t.Score, strings.Join(t.Shared, ", "))
		}
	}
	fmt.Fprintln(w)
}
