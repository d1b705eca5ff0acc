package plan

import (
	"bufio"
	"fmt"
	"io"
	"strconv"
	"strings"

	"sluice/budget"
)

// WriteText writes p for people: the fits, the table of budgets, the
// changes of best method, the selector size ratios and, when p.Asked is set,
// the answer at that budget. It leaves out p.Notes, which go last, after
// whatever the caller adds about the asked budget (a command to run, say).
func (p *Plan) WriteText(w io.Writer) error {
	var b strings.Builder
	p.writeFits(&b)
	p.writeTrends(&b)
	p.writeTable(&b)
	if len(p.Changes) > 0 {
		fmt.Fprintf(&b, "\nbest method changes:\n")
		for _, ch := range p.Changes {
			from := ch.From
			if from == "" {
				from = "none affordable"
			}
			fmt.Fprintf(&b, "  at %s FLOPs: %s -> %s\n", budget.FormatFLOPs(ch.Budget), from, ch.To)
		}
	}
	p.writeRatios(&b)
	if s := p.Asked; s != nil {
		writeAsked(&b, s)
	}
	_, err := io.WriteString(w, b.String())
	return err
}

func (p *Plan) writeFits(b *strings.Builder) {
	fmt.Fprintf(b, "fits (P(k) = P̄ - (P̄ - P0)·exp(-λ·k), k in tokens; ± one standard error):\n")
	scale, unit := lambdaUnit(p.Curves)
	fmt.Fprintf(b, "  %-14s %-17s %8s  %-17s %-17s %-21s %6s\n", "method", "cost", "selector", "P0", "Pbar", "lambda per "+unit+" tok", "R2")
	for _, c := range p.Curves {
		cost := c.Cost
		if c.FlopsPerPoolToken > 0 {
			cost = strconv.FormatFloat(c.FlopsPerPoolToken, 'g', 4, 64) + " FLOPs/tok"
		}
		r2 := fmt.Sprintf("%6.4f", c.R2)
		if c.Trend != FromPilots {
			r2 = c.Trend + " from " + sizeList(c.FromSizes)
		}
		fmt.Fprintf(b, "  %-14s %-17s %8s  %-17s %-17s %-21s %6s\n", c.Method, cost, budget.FormatCount(c.SelectorParams),
			metric(c.P0)+" ± "+metric(c.P0SE), metric(c.Pbar)+" ± "+metric(c.PbarSE),
			strconv.FormatFloat(c.Lambda*scale, 'f', 3, 64)+" ± "+strconv.FormatFloat(c.LambdaSE*scale, 'f', 3, 64), r2)
	}
}

// lambdaUnit is the count of tokens the fits' rates are shown per: 1B, as pools of billions of
// tokens read best, or less where a rate per 1B would run to thousands (a small pool's curves
// bend within a few million tokens).
func lambdaUnit(curves []Curve) (float64, string) {
	top := 0.0
	for _, c := range curves {
		top = max(top, c.Lambda)
	}
	for _, u := range []struct {
		scale float64
		name  string
	}{{1e9, "1B"}, {1e6, "1M"}, {1e3, "1k"}} {
		if top*u.scale < 1000 {
			return u.scale, u.name
		}
	}
	return 1, "1"
}

// writeTrends shows how each method's curve moves with the trained size, where pilots cover two
// or more sizes.
func (p *Plan) writeTrends(b *strings.Builder) {
	if len(p.Trends) == 0 {
		return
	}
	fmt.Fprintf(b, "\nacross trained sizes N (P0, P̄ + slope·ln N; λ ∝ N^exponent; ± one standard error):\n")
	fmt.Fprintf(b, "  %-14s %-22s %-19s %-19s %-17s\n", "method", "sizes", "P0 per e-fold", "Pbar per e-fold", "lambda exponent")
	for _, t := range p.Trends {
		fmt.Fprintf(b, "  %-14s %-22s %-19s %-19s %-17s\n", t.Method, sizeList(t.Sizes),
			metric(t.P0Slope)+" ± "+metric(t.P0SlopeSE), metric(t.PbarSlope)+" ± "+metric(t.PbarSlopeSE),
			strconv.FormatFloat(t.LambdaExp, 'f', 3, 64)+" ± "+strconv.FormatFloat(t.LambdaExpSE, 'f', 3, 64))
	}
}

// writeTable writes a row per budget of the grid: the best method, its
// tokens and band, and every method's prediction where it affords training.
func (p *Plan) writeTable(b *strings.Builder) {
	fmt.Fprintf(b, "\nplan for a %s-parameter model, %s pool tokens, %g epoch(s); predicted metric per method\n",
		budget.FormatCount(p.Config.TrainParams), budget.FormatCount(p.Config.PoolTokens), p.Config.Epochs)
	if p.carried() {
		fmt.Fprintf(b, "  (methods marked * have no pilots on this size: their curves are carried from other sizes)\n")
	}
	fmt.Fprintf(b, "  %-10s  %-14s %9s  %-13s", "budget", "best", "tokens", "P ±2 SE")
	for _, c := range p.Curves {
		name := c.Method
		if c.Trend != FromPilots {
			name = "*" + name
		}
		fmt.Fprintf(b, " %10.10s", name)
	}
	b.WriteString("\n")
	for _, s := range p.Steps {
		bestName, tok, pr := "none", "-", "-"
		if o, ok := s.best(); ok {
			bestName, tok = o.Method, budget.FormatCount(o.Tokens)
			pr = fmt.Sprintf("%.3f-%.3f", o.Low, o.High)
		}
		fmt.Fprintf(b, "  %-10s  %-14s %9s  %-13s", budget.FormatFLOPs(s.Budget), bestName, tok, pr)
		for _, o := range s.Options {
			v := "-"
			if o.Affordable {
				v = metric(o.P)
			}
			fmt.Fprintf(b, " %10s", v)
		}
		b.WriteString("\n")
	}
}

// best is the option of the best method, false when none is affordable.
func (s *Step) best() (Option, bool) {
	for _, o := range s.Options {
		if o.Method == s.Best && s.Best != "" {
			return o, true
		}
	}
	return Option{}, false
}

// writeRatios shows, at a few budgets, how small each model-based selector would have to be to match
// the cheapest method, as trained/selector parameters; "now" is what the pilots' selectors have.
func (p *Plan) writeRatios(b *strings.Builder) {
	var model []int
	for i, c := range p.Curves {
		if c.Passes > 0 {
			model = append(model, i)
		}
	}
	if len(model) == 0 || len(p.Steps) == 0 {
		return
	}
	base := p.Curves[cheapest(p.Curves, p.Config)].Method
	fmt.Fprintf(b, "\ntrained/selector size ratio at and above which a method matches %s (its curve held fixed;\n", base)
	fmt.Fprintf(b, "in brackets, from where it could to where it surely does, by the fits' ±2 SE):\n")
	fmt.Fprintf(b, "  %-10s ", "budget")
	for _, i := range model {
		if c := p.Curves[i]; c.Method != base {
			fmt.Fprintf(b, " %24s", fmt.Sprintf("%.10s (now %.3g)", c.Method, p.Config.TrainParams/c.SelectorParams))
		}
	}
	b.WriteString("\n")
	for j, s := range p.Steps {
		if j%6 != 0 && j != len(p.Steps)-1 {
			continue
		}
		fmt.Fprintf(b, "  %-10s ", budget.FormatFLOPs(s.Budget))
		for _, i := range model {
			if p.Curves[i].Method == base {
				continue
			}
			o := s.Options[i]
			v := "never"
			if o.OvertakeRatio > 0 {
				v = ratio(o.OvertakeRatio)
			}
			if o.OvertakeLow > 0 {
				v += " (" + ratio(o.OvertakeLow) + "-" + ratio(o.OvertakeHigh) + ")"
			}
			fmt.Fprintf(b, " %24s", v)
		}
		b.WriteString("\n")
	}
}

// ratio writes a size ratio to three figures; 0, no ratio at all, as "never".
func ratio(r float64) string {
	if r <= 0 {
		return "never"
	}
	return strconv.FormatFloat(r, 'g', 3, 64)
}

// writeAsked says what to do with the budget asked about.
func writeAsked(b *strings.Builder, s *Step) {
	fmt.Fprintf(b, "\nat your budget of %s FLOPs: ", budget.FormatFLOPs(s.Budget))
	o, ok := s.best()
	if !ok {
		b.WriteString("no method affords any training\n")
		return
	}
	fmt.Fprintf(b, "use %s, keep %s tokens (%s FLOPs of training after %s of selection), predicted %s (%.3f-%.3f)\n",
		o.Method, budget.FormatCount(o.Tokens), budget.FormatFLOPs(o.TrainingFLOPs), budget.FormatFLOPs(o.SelectionFLOPs), metric(o.P), o.Low, o.High)
}

// metric writes a predicted metric to four places, enough to tell methods
// apart that differ in the third.
func metric(v float64) string { return strconv.FormatFloat(v, 'f', 4, 64) }

// PickCommand is the pick that carries out the plan at the asked budget, with the flags its best
// method needs: lexical methods and n-gram models run in sluice, model-based methods bring their
// scores, charged at the selector's declared size and passes.
func (p *Plan) PickCommand() string {
	s := p.Asked
	if s == nil || s.Best == "" {
		return ""
	}
	var c *Curve
	for i := range p.Curves {
		if p.Curves[i].Method == s.Best {
			c = &p.Curves[i]
		}
	}
	if c == nil {
		return ""
	}
	var method string
	switch m := strings.ToLower(c.Method); {
	case m == "bm25" || m == "tfidf" || m == "ngram":
		method = "--method " + m
	case c.SelectorParams == 0:
		method = "--method bm25  # " + c.Method + " is lexical; bm25 is sluice's nearest"
	default:
		method = fmt.Sprintf("--method scores --scores %s-SCORES.jsonl --selector-params %s --passes %g",
			strings.ToUpper(c.Method), strconv.FormatFloat(c.SelectorParams, 'g', -1, 64), c.Passes)
	}
	idx := "POOL.idx"
	if p.Config.Index != "" {
		idx = p.Config.Index
	}
	return fmt.Sprintf("  sluice pick --index %s --target TARGET.jsonl %s --budget %s --train-params %s --epochs %g --out RUN\n",
		idx, method, strconv.FormatFloat(s.Budget, 'g', -1, 64), strconv.FormatFloat(p.Config.TrainParams, 'g', -1, 64), p.Config.Epochs)
}

// WriteSummary writes what a plan command prints once the folder out is written with names: the
// plan (WriteText), the pick command at the asked budget, the notes and the files written.
func (p *Plan) WriteSummary(w io.Writer, out string, names []string) error {
	bw := bufio.NewWriter(w)
	if err := p.WriteText(bw); err != nil {
		return err
	}
	fmt.Fprint(bw, p.PickCommand())
	for _, n := range p.Notes {
		fmt.Fprintf(bw, "note: %s\n", n)
	}
	wrote := strings.Join(names[:len(names)-1], ", ") + " and " + names[len(names)-1]
	fmt.Fprintf(bw, "wrote %s to %s\n", wrote, out)
	return bw.Flush()
}
