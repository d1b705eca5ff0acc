package main

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
	"html"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/spf13/pflag"

	"sluice/budget"
	"sluice/budget/plan"
)

type planCmd struct{}

func (*planCmd) name() string { return "plan" }
func (*planCmd) summary() string {
	return "fit pilot runs and say which method and how many tokens each budget affords"
}

func (*planCmd) flags() *pflag.FlagSet {
	fs := newFlags("plan", "sluice plan (--pilots FILE | --simulate CURVE... --p0 P) --pool-tokens T --train-params N --out DIR [flags]",
		`Fits P(k) = P̄ - (P̄ - P0)·exp(-λ·k) to pilot fine-tunes, one curve per method and base model,
by nonlinear least squares; methods of one base model share P0 unless --free-p0. Then, over a log
grid of budgets, works out for each method the tokens it can train on once it has scored the whole
pool, (budget - selection) / (6 x train-params x epochs), its predicted metric with a ±2 standard
error band, the best method, and the budgets where the best method changes.

Pilots are CSV with a header row, or JSONL; columns method, cost (lexical, forward,
forward+backward or a number of forward passes), selector_params (0 for lexical), trained_params,
tokens (or rows and tokens_per_row) and metric. Selection costs passes x 2 x selector params x pool
tokens; lexical scoring is charged 8 FLOPs per pool token. Each method needs pilots at 3 or more
data sizes, spread over where its metric bends and levels off.

With --simulate no pilots are fitted: each curve is given as METHOD=COST,SELECTOR,PBAR,LAMBDA
(λ per 1B tokens) with one --p0 for all, to explore, say, a selector ten times smaller.

Writes into DIR: plan.json (fits, residuals, every budget's options, changes), plan.svg (predicted
metric against total FLOPs, one line per method, the best-method envelope, pilots and changes
marked) and, from pilots, residuals.svg (each pilot's metric minus its fitted curve).
Predictions beyond the largest pilot are extrapolations of the curve.`,
		`  sluice plan --pilots pilots.csv --pool-tokens 4B --train-params 1B --out plan1
  sluice plan --pilots pilots.jsonl --pool-tokens 20B --train-params 7B --epochs 2 \
      --budgets 1e19:1e22 --points 40 --free-p0 --out plan2
  # what if the gradient selector were 10x smaller?
  sluice plan --simulate bm25=lexical,0,0.547,10.2 --simulate grad=forward+backward,100M,0.657,4.0 \
      --p0 0.421 --pool-tokens 4B --train-params 1B --out what-if`)
	fs.String("pilots", "", "CSV or JSONL file of pilot runs (required unless --simulate)")
	fs.String("pool-tokens", "", "tokens in the whole pool, e.g. 4B (required)")
	fs.String("train-params", "", "parameters of the model to be trained, e.g. 1B (required)")
	fs.Float64("epochs", 1, "passes over the kept tokens")
	fs.String("budgets", "", "budget grid LO:HI in FLOPs, e.g. 1e18:1e21 (default: from the pilots and pool)")
	fs.Int("points", 25, "budgets in the grid, log-spaced")
	fs.String("budget", "", "the budget you have, in FLOPs: also plan for exactly it and print a pick command")
	fs.Bool("free-p0", false, "fit a base score P0 per method instead of one per base model")
	fs.StringArray("simulate", nil, "instead of --pilots, a curve METHOD=COST,SELECTOR,PBAR,LAMBDA (λ per 1B tokens); repeatable")
	fs.String("p0", "", "the base model's score P0 for --simulate")
	fs.String("out", "", "folder to write plan.json and the charts to (required)")
	return fs
}

func (c *planCmd) run(ctx context.Context, e *env, fs *pflag.FlagSet) error {
	get := func(n string) string { s, _ := fs.GetString(n); return s }
	if fs.NArg() > 0 {
		return usagef("unexpected argument %q", fs.Arg(0))
	}
	sims, _ := fs.GetStringArray("simulate")
	switch {
	case get("pilots") == "" && len(sims) == 0:
		return usagef("--pilots is required (or --simulate curves)")
	case get("pilots") != "" && len(sims) > 0:
		return usagef("give --pilots or --simulate, not both")
	}
	for _, n := range []string{"pool-tokens", "train-params", "out"} {
		if get(n) == "" {
			return usagef("--%s is required", n)
		}
	}
	var cfg plan.Config
	var err error
	if cfg.PoolTokens, err = budget.ParseCount(get("pool-tokens")); err != nil {
		return usagef("--pool-tokens: %v", err)
	}
	if cfg.TrainParams, err = budget.ParseCount(get("train-params")); err != nil {
		return usagef("--train-params: %v", err)
	}
	cfg.Epochs, _ = fs.GetFloat64("epochs")
	if !(cfg.Epochs > 0) {
		return usagef("--epochs %v: must be greater than zero", cfg.Epochs)
	}
	cfg.Points, _ = fs.GetInt("points")
	if cfg.Points < 2 {
		return usagef("--points %d: must be 2 or more", cfg.Points)
	}
	if b := get("budgets"); b != "" {
		lo, hi, ok := strings.Cut(b, ":")
		if !ok {
			return usagef("--budgets %q: want LO:HI", b)
		}
		if cfg.Lo, err = budget.ParseFLOPs(lo); err != nil {
			return usagef("--budgets: %v", err)
		}
		if cfg.Hi, err = budget.ParseFLOPs(hi); err != nil {
			return usagef("--budgets: %v", err)
		}
		if cfg.Hi <= cfg.Lo {
			return usagef("--budgets %q: HI must be greater than LO", b)
		}
	}
	var curves []plan.Curve
	if len(sims) > 0 {
		p0, err := strconv.ParseFloat(get("p0"), 64)
		if err != nil || math.IsNaN(p0) || math.IsInf(p0, 0) {
			return usagef("--simulate needs --p0, the base model's score")
		}
		for _, s := range sims {
			c, err := simulated(s, p0, cfg.TrainParams)
			if err != nil {
				return usagef("--simulate %q: %v", s, err)
			}
			curves = append(curves, c)
		}
	} else {
		free, _ := fs.GetBool("free-p0")
		f, err := os.Open(get("pilots"))
		if err != nil {
			return err
		}
		pilots, err := plan.ReadPilots(f, get("pilots"))
		f.Close()
		if err != nil {
			return err
		}
		if curves, err = plan.Fit(pilots, plan.FitOptions{FreeP0: free}); err != nil {
			return err
		}
	}
	p, err := plan.Make(curves, cfg)
	if err != nil {
		return err
	}
	if bs := get("budget"); bs != "" {
		f, err := budget.ParseFLOPs(bs)
		if err != nil {
			return usagef("--budget: %v", err)
		}
		s := p.StepAt(f)
		p.Asked = &s
	}
	b, err := json.MarshalIndent(p, "", "  ")
	if err != nil {
		return err
	}
	out := get("out")
	if err := os.MkdirAll(out, 0o755); err != nil {
		return err
	}
	if err := writeFileBytes(filepath.Join(out, "plan.json"), append(b, '\n')); err != nil {
		return err
	}
	if err := writeFileBytes(filepath.Join(out, "plan.svg"), planSVG(p)); err != nil {
		return err
	}
	wrote := "plan.json and plan.svg"
	if len(sims) == 0 {
		if err := writeFileBytes(filepath.Join(out, "residuals.svg"), residualSVG(p)); err != nil {
			return err
		}
		wrote = "plan.json, plan.svg and residuals.svg"
	}
	w := bufio.NewWriter(e.stdout)
	printPlan(w, p)
	fmt.Fprintf(w, "wrote %s to %s\n", wrote, out)
	return w.Flush()
}

// printRatios shows, at a few budgets, how small each model-based selector would have to be to match
// the cheapest method, as trained/selector parameters; "now" is what the pilots' selectors have.
func printRatios(w io.Writer, p *plan.Plan) {
	var model []int
	for i, c := range p.Curves {
		if c.Passes > 0 {
			model = append(model, i)
		}
	}
	if len(model) == 0 || len(p.Steps) == 0 {
		return
	}
	cheap := p.Curves[0]
	for _, c := range p.Curves {
		if plan.SelectionFLOPs(&c, p.Config.PoolTokens) < plan.SelectionFLOPs(&cheap, p.Config.PoolTokens) {
			cheap = c
		}
	}
	base := cheap.Method
	fmt.Fprintf(w, "\ntrained/selector size ratio at and above which a method matches %s (its curve held fixed):\n", base)
	fmt.Fprintf(w, "  %-10s ", "budget")
	for _, i := range model {
		c := p.Curves[i]
		if c.Method == base {
			continue
		}
		fmt.Fprintf(w, " %20s", fmt.Sprintf("%.10s (now %.3g)", c.Method, p.Config.TrainParams/c.SelectorParams))
	}
	fmt.Fprintln(w)
	for j, s := range p.Steps {
		if j%6 != 0 && j != len(p.Steps)-1 {
			continue
		}
		fmt.Fprintf(w, "  %-10s ", fmtFLOPs(s.Budget))
		for _, i := range model {
			if p.Curves[i].Method == base {
				continue
			}
			v := "never"
			if r := s.Options[i].OvertakeRatio; r > 0 {
				v = strconv.FormatFloat(r, 'g', 3, 64)
			}
			fmt.Fprintf(w, " %20s", v)
		}
		fmt.Fprintln(w)
	}
}

// simulated builds an exact curve, with no uncertainty, from METHOD=COST,SELECTOR,PBAR,LAMBDA.
func simulated(s string, p0, trained float64) (plan.Curve, error) {
	name, spec, ok := strings.Cut(s, "=")
	f := strings.Split(spec, ",")
	if !ok || strings.TrimSpace(name) == "" || len(f) != 4 {
		return plan.Curve{}, fmt.Errorf("want METHOD=COST,SELECTOR,PBAR,LAMBDA")
	}
	c := plan.Curve{Method: strings.TrimSpace(name), Cost: strings.TrimSpace(f[0]), TrainedParams: trained, P0: p0}
	var err error
	if c.Passes, err = plan.ParseCost(f[0]); err != nil {
		return c, err
	}
	if t := strings.TrimSpace(f[1]); t != "0" {
		if c.SelectorParams, err = budget.ParseCount(t); err != nil {
			return c, err
		}
	}
	if c.Passes > 0 && c.SelectorParams == 0 {
		return c, fmt.Errorf("selector size 0 for a model-based cost")
	}
	if c.Pbar, err = strconv.ParseFloat(strings.TrimSpace(f[2]), 64); err != nil || math.IsInf(c.Pbar, 0) {
		return c, fmt.Errorf("PBAR %q: want a number", f[2])
	}
	l, err := strconv.ParseFloat(strings.TrimSpace(f[3]), 64)
	if err != nil || !(l > 0) || math.IsInf(l, 0) {
		return c, fmt.Errorf("LAMBDA %q: want a rate per 1B tokens greater than zero", f[3])
	}
	c.Lambda = l / 1e9
	return c, nil
}

// printAsked says what to do with the budget asked about and, for the methods sluice has itself,
// the pick command that does it.
func printAsked(w io.Writer, p *plan.Plan, s *plan.Step) {
	fmt.Fprintf(w, "\nat your budget of %s FLOPs: ", fmtFLOPs(s.Budget))
	for _, o := range s.Options {
		if o.Method != s.Best || s.Best == "" {
			continue
		}
		fmt.Fprintf(w, "use %s, keep %s tokens (%s FLOPs of training after %s of selection), predicted %s (%.3f-%.3f)\n",
			o.Method, fmtCount(o.Tokens), fmtFLOPs(o.TrainingFLOPs), fmtFLOPs(o.SelectionFLOPs), fmtP(o.P), o.Low, o.High)
		if m := strings.ToLower(o.Method); m == "bm25" || m == "tfidf" {
			fmt.Fprintf(w, "  sluice pick --index POOL.idx --target TARGET.jsonl --method %s --budget %s --train-params %s --epochs %g --out RUN\n",
				m, strconv.FormatFloat(s.Budget, 'g', -1, 64), strconv.FormatFloat(p.Config.TrainParams, 'g', -1, 64), p.Config.Epochs)
		}
		return
	}
	fmt.Fprintf(w, "no method affords any training\n")
}

func fmtP(v float64) string { return strconv.FormatFloat(v, 'f', 4, 64) }

func printPlan(w io.Writer, p *plan.Plan) {
	fmt.Fprintf(w, "fits (P(k) = P̄ - (P̄ - P0)·exp(-λ·k), k in tokens; ± one standard error):\n")
	fmt.Fprintf(w, "  %-14s %-17s %8s  %-17s %-17s %-21s %6s\n", "method", "cost", "selector", "P0", "Pbar", "lambda per 1B tok", "R2")
	for _, c := range p.Curves {
		fmt.Fprintf(w, "  %-14s %-17s %8s  %-17s %-17s %-21s %6.4f\n", c.Method, c.Cost, fmtCount(c.SelectorParams),
			fmtP(c.P0)+" ± "+fmtP(c.P0SE), fmtP(c.Pbar)+" ± "+fmtP(c.PbarSE),
			strconv.FormatFloat(c.Lambda*1e9, 'f', 3, 64)+" ± "+strconv.FormatFloat(c.LambdaSE*1e9, 'f', 3, 64), c.R2)
	}
	fmt.Fprintf(w, "\nplan for a %s-parameter model, %s pool tokens, %g epoch(s); predicted metric per method\n", fmtCount(p.Config.TrainParams), fmtCount(p.Config.PoolTokens), p.Config.Epochs)
	fmt.Fprintf(w, "  %-10s  %-14s %9s  %-13s", "budget", "best", "tokens", "P ±2 SE")
	for _, c := range p.Curves {
		fmt.Fprintf(w, " %10.10s", c.Method)
	}
	fmt.Fprintln(w)
	for _, s := range p.Steps {
		bestName, tok, pr := "none", "-", "-"
		for _, o := range s.Options {
			if o.Method == s.Best && s.Best != "" {
				bestName, tok = o.Method, fmtCount(o.Tokens)
				pr = fmt.Sprintf("%.3f-%.3f", o.Low, o.High)
				break
			}
		}
		fmt.Fprintf(w, "  %-10s  %-14s %9s  %-13s", fmtFLOPs(s.Budget), bestName, tok, pr)
		for _, o := range s.Options {
			v := "-"
			if o.Affordable {
				v = fmtP(o.P)
			}
			fmt.Fprintf(w, " %10s", v)
		}
		fmt.Fprintln(w)
	}
	if len(p.Changes) > 0 {
		fmt.Fprintf(w, "\nbest method changes:\n")
		for _, ch := range p.Changes {
			from := ch.From
			if from == "" {
				from = "none affordable"
			}
			fmt.Fprintf(w, "  at %s FLOPs: %s -> %s\n", fmtFLOPs(ch.Budget), from, ch.To)
		}
	}
	printRatios(w, p)
	if s := p.Asked; s != nil {
		printAsked(w, p, s)
	}
	for _, n := range p.Notes {
		fmt.Fprintf(w, "note: %s\n", n)
	}
}

// Series styles differ in dash and marker as well as colour, so the charts read in grey print.
var planStyles = []struct{ color, dash, marker string }{
	{"#1f5f99", "", "circle"},
	{"#c2561a", "7 4", "square"},
	{"#2b8a3e", "2 3", "triangle"},
	{"#7a3b8f", "10 3 2 3", "diamond"},
	{"#8c6d1f", "4 2", "circle"},
}

// niceTick is a step of 1, 2 or 5 times a power of ten giving about n ticks over span.
func niceTick(span float64, n int) float64 {
	raw := span / float64(n)
	p := math.Pow(10, math.Floor(math.Log10(raw)))
	for _, m := range []float64{1, 2, 5} {
		if m*p >= raw {
			return m * p
		}
	}
	return 10 * p
}

func marker(b *strings.Builder, kind string, x, y float64, color string) {
	switch kind {
	case "square":
		fmt.Fprintf(b, `<rect x="%.1f" y="%.1f" width="7" height="7" fill="white" stroke="%s" stroke-width="1.5"/>`, x-3.5, y-3.5, color)
	case "triangle":
		fmt.Fprintf(b, `<path d="M%.1f %.1fl4 7h-8z" fill="white" stroke="%s" stroke-width="1.5"/>`, x, y-4.5, color)
	case "diamond":
		fmt.Fprintf(b, `<path d="M%.1f %.1fl4 4.5-4 4.5-4-4.5z" fill="white" stroke="%s" stroke-width="1.5"/>`, x, y-4.5, color)
	default:
		fmt.Fprintf(b, `<circle cx="%.1f" cy="%.1f" r="3.8" fill="white" stroke="%s" stroke-width="1.5"/>`, x, y, color)
	}
	b.WriteByte('\n')
}

// chart maps data to a plot area and draws the frame, ticks and labels.
type chart struct {
	b                  strings.Builder
	w, h, l, r, t, bot float64
	x0, x1, y0, y1     float64
	logX               bool
}

func (c *chart) px(x float64) float64 {
	if c.logX {
		x = math.Log10(x)
	}
	return c.l + (x-c.x0)/(c.x1-c.x0)*(c.w-c.l-c.r)
}

func (c *chart) py(y float64) float64 { return c.h - c.bot - (y-c.y0)/(c.y1-c.y0)*(c.h-c.t-c.bot) }

func (c *chart) frame(title, xlabel, ylabel string, yfmt string) {
	fmt.Fprintf(&c.b, `<svg xmlns="http://www.w3.org/2000/svg" width="%.0f" height="%.0f" viewBox="0 0 %.0f %.0f" font-family="Helvetica, Arial, sans-serif" font-size="12">`+"\n", c.w, c.h, c.w, c.h)
	fmt.Fprintf(&c.b, `<rect width="100%%" height="100%%" fill="white"/>`+"\n")
	fmt.Fprintf(&c.b, `<text x="%.0f" y="20" font-size="15" font-weight="bold">%s</text>`+"\n", c.l, html.EscapeString(title))
	step := niceTick(c.y1-c.y0, 6)
	for v := math.Ceil(c.y0/step) * step; v <= c.y1+step/1e6; v += step {
		y := c.py(v)
		fmt.Fprintf(&c.b, `<line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="#ddd"/><text x="%.1f" y="%.1f" text-anchor="end">`+yfmt+`</text>`+"\n", c.l, c.w-c.r, y, y, c.l-6, y+4, v)
	}
	if c.logX {
		for d := math.Ceil(c.x0); d <= c.x1; d++ {
			x := c.l + (d-c.x0)/(c.x1-c.x0)*(c.w-c.l-c.r)
			fmt.Fprintf(&c.b, `<line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="#ddd"/><text x="%.1f" y="%.1f" text-anchor="middle">1e%.0f</text>`+"\n", x, x, c.t, c.h-c.bot, x, c.h-c.bot+16, d)
		}
	} else {
		xs := niceTick(c.x1-c.x0, 6)
		for v := math.Ceil(c.x0/xs) * xs; v <= c.x1+xs/1e6; v += xs {
			x := c.px(v)
			fmt.Fprintf(&c.b, `<line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="#ddd"/><text x="%.1f" y="%.1f" text-anchor="middle">%s</text>`+"\n", x, x, c.t, c.h-c.bot, x, c.h-c.bot+16, fmtCount(v))
		}
	}
	fmt.Fprintf(&c.b, `<rect x="%.1f" y="%.1f" width="%.1f" height="%.1f" fill="none" stroke="#333"/>`+"\n", c.l, c.t, c.w-c.l-c.r, c.h-c.t-c.bot)
	fmt.Fprintf(&c.b, `<text x="%.1f" y="%.1f" text-anchor="middle">%s</text>`+"\n", (c.l+c.w-c.r)/2, c.h-8, html.EscapeString(xlabel))
	fmt.Fprintf(&c.b, `<text transform="translate(16 %.1f) rotate(-90)" text-anchor="middle">%s</text>`+"\n", (c.t+c.h-c.bot)/2, html.EscapeString(ylabel))
}

func (c *chart) legend(curves []plan.Curve, extra string) {
	y := c.t + 16
	for i, cv := range curves {
		st := planStyles[i%len(planStyles)]
		x := c.w - c.r + 14
		fmt.Fprintf(&c.b, `<line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="%s" stroke-width="2" stroke-dasharray="%s"/>`, x, x+26, y, y, st.color, st.dash)
		marker(&c.b, st.marker, x+13, y, st.color)
		fmt.Fprintf(&c.b, `<text x="%.1f" y="%.1f">%s</text>`+"\n", x+32, y+4, html.EscapeString(cv.Method))
		y += 20
	}
	if extra != "" {
		x := c.w - c.r + 14
		fmt.Fprintf(&c.b, `<line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="#111" stroke-width="5" stroke-opacity="0.25"/><text x="%.1f" y="%.1f">%s</text>`+"\n", x, x+26, y, y, x+32, y+4, extra)
	}
}

func polyline(b *strings.Builder, pts [][2]float64, attrs string) {
	if len(pts) < 2 {
		return
	}
	b.WriteString(`<polyline fill="none" ` + attrs + ` points="`)
	for i, p := range pts {
		if i > 0 {
			b.WriteByte(' ')
		}
		fmt.Fprintf(b, "%.1f,%.1f", p[0], p[1])
	}
	b.WriteString("\"/>\n")
}

// planSVG draws each method's predicted metric against the total budget, the
// ±2 SE band, the best-method envelope, the pilots at what their data size
// would cost under this plan, and the budgets where the answer changes.
func planSVG(p *plan.Plan) []byte {
	cfg := p.Config
	c := &chart{w: 860, h: 440, l: 60, r: 190, t: 34, bot: 44, logX: true,
		x0: math.Log10(cfg.Lo), x1: math.Log10(cfg.Hi)}
	const samples = 240
	type pt struct{ x, p, lo, hi float64 }
	lines := make([][]pt, len(p.Curves))
	var env [][2]float64
	c.y0, c.y1 = math.Inf(1), math.Inf(-1)
	see := func(v float64) { c.y0, c.y1 = math.Min(c.y0, v), math.Max(c.y1, v) }
	for i := range samples + 1 {
		f := math.Pow(10, c.x0+(c.x1-c.x0)*float64(i)/samples)
		bestP, any := math.Inf(-1), false
		for j := range p.Curves {
			o := plan.At(&p.Curves[j], f, cfg)
			if !o.Affordable {
				continue
			}
			lines[j] = append(lines[j], pt{f, o.P, o.Low, o.High})
			see(o.Low)
			see(o.High)
			if o.P > bestP {
				bestP, any = o.P, true
			}
		}
		if any {
			env = append(env, [2]float64{f, bestP})
		}
	}
	var pil [][]pt
	for j := range p.Curves {
		var ps []pt
		sel := plan.SelectionFLOPs(&p.Curves[j], cfg.PoolTokens)
		for _, r := range p.Curves[j].Residuals {
			f := sel + budget.TrainFLOPs(cfg.TrainParams, r.Tokens, cfg.Epochs)
			if math.Log10(f) >= c.x0 && math.Log10(f) <= c.x1 {
				ps = append(ps, pt{x: f, p: r.Metric})
				see(r.Metric)
			}
		}
		pil = append(pil, ps)
	}
	if math.IsInf(c.y0, 0) {
		c.y0, c.y1 = 0, 1
	}
	pad := (c.y1 - c.y0) * 0.06
	if pad == 0 {
		pad = 0.01
	}
	c.y0, c.y1 = c.y0-pad, c.y1+pad
	c.frame("Predicted metric by budget, "+fmtCount(cfg.TrainParams)+" model, "+fmtCount(cfg.PoolTokens)+" pool tokens",
		"total FLOPs (selection over the pool + training)", "predicted metric", "%.3g")
	for j, ln := range lines {
		st := planStyles[j%len(planStyles)]
		if len(ln) > 1 {
			c.b.WriteString(`<path fill="` + st.color + `" fill-opacity="0.10" stroke="none" d="`)
			for i, q := range ln {
				fmt.Fprintf(&c.b, "%s%.1f %.1f", map[bool]string{true: "M", false: "L"}[i == 0], c.px(q.x), c.py(q.hi))
			}
			for i := len(ln) - 1; i >= 0; i-- {
				fmt.Fprintf(&c.b, "L%.1f %.1f", c.px(ln[i].x), c.py(ln[i].lo))
			}
			c.b.WriteString("Z\"/>\n")
		}
	}
	var e [][2]float64
	for _, q := range env {
		e = append(e, [2]float64{c.px(q[0]), c.py(q[1])})
	}
	polyline(&c.b, e, `stroke="#111" stroke-width="7" stroke-opacity="0.25" stroke-linejoin="round"`)
	for j, ln := range lines {
		st := planStyles[j%len(planStyles)]
		var xy [][2]float64
		for _, q := range ln {
			xy = append(xy, [2]float64{c.px(q.x), c.py(q.p)})
		}
		polyline(&c.b, xy, fmt.Sprintf(`stroke="%s" stroke-width="2" stroke-dasharray="%s"`, st.color, st.dash))
		for _, q := range pil[j] {
			marker(&c.b, st.marker, c.px(q.x), c.py(q.p), st.color)
		}
	}
	// Changes are numbered on the chart and spelled out beside it, so labels never cover the curves.
	for i, ch := range p.Changes {
		x := c.px(ch.Budget)
		fmt.Fprintf(&c.b, `<line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="#555" stroke-dasharray="3 3"/>`, x, x, c.t, c.h-c.bot)
		fmt.Fprintf(&c.b, `<circle cx="%.1f" cy="%.1f" r="8" fill="white" stroke="#555"/><text x="%.1f" y="%.1f" font-size="11" text-anchor="middle">%d</text>`+"\n", x, c.t+12, x, c.t+16, i+1)
	}
	c.legend(p.Curves, "best")
	y := c.t + 16 + 20*float64(len(p.Curves)+1)
	lx := c.w - c.r + 14
	for _, t := range []string{"bands: ±2 SE", "markers: pilots"} {
		fmt.Fprintf(&c.b, `<text x="%.1f" y="%.1f" font-size="11" fill="#444">%s</text>`+"\n", lx, y, t)
		y += 15
	}
	y += 10
	for i, ch := range p.Changes {
		fmt.Fprintf(&c.b, `<text x="%.1f" y="%.1f" font-size="11">%d: %s → %s</text><text x="%.1f" y="%.1f" font-size="11" fill="#444">   at %s FLOPs</text>`+"\n",
			lx, y, i+1, html.EscapeString(orNone(ch.From)), html.EscapeString(ch.To), lx, y+14, fmtFLOPs(ch.Budget))
		y += 34
	}
	c.b.WriteString("</svg>\n")
	return []byte(c.b.String())
}

func orNone(s string) string {
	if s == "" {
		return "none"
	}
	return s
}

// residualSVG draws every pilot's metric minus its fitted curve against its tokens.
func residualSVG(p *plan.Plan) []byte {
	c := &chart{w: 860, h: 300, l: 60, r: 190, t: 34, bot: 44}
	c.x1, c.y0, c.y1 = 1, -1e-9, 1e-9
	for _, cv := range p.Curves {
		for _, r := range cv.Residuals {
			c.x1 = math.Max(c.x1, r.Tokens)
			c.y0, c.y1 = math.Min(c.y0, r.Residual), math.Max(c.y1, r.Residual)
		}
	}
	m := math.Max(-c.y0, c.y1) * 1.15
	c.y0, c.y1, c.x1 = -m, m, c.x1*1.04
	c.frame("Fit residuals (metric − fitted curve)", "pilot tokens", "residual", "%.2g")
	fmt.Fprintf(&c.b, `<line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="#333"/>`+"\n", c.l, c.w-c.r, c.py(0), c.py(0))
	for j, cv := range p.Curves {
		st := planStyles[j%len(planStyles)]
		var xy [][2]float64
		for _, r := range cv.Residuals {
			xy = append(xy, [2]float64{c.px(r.Tokens), c.py(r.Residual)})
		}
		for _, q := range xy {
			marker(&c.b, st.marker, q[0], q[1], st.color)
		}
	}
	c.legend(p.Curves, "")
	c.b.WriteString("</svg>\n")
	return []byte(c.b.String())
}
