package plan

import (
	"fmt"
	"math"
	"strconv"

	"sluice/budget"
	"sluice/budget/chart"
)

// svgSamples is how many budgets each line is drawn through: enough that the
// bend of a curve looks smooth on a log axis 610 pixels wide.
const svgSamples = 240

// sample is one method's prediction at one budget, with its ±2 SE band;
// past says it lies beyond what the method's pilots measured.
type sample struct {
	x, p, lo, hi float64
	past         bool
}

// SVG draws each method's predicted metric against the total budget, the
// ±2 SE band, the best-method envelope, the pilots at what their data size
// would cost under this plan, and the budgets where the answer changes.
func (p *Plan) SVG() []byte {
	cfg := p.Config
	x0, x1 := math.Log10(cfg.Lo), math.Log10(cfg.Hi)
	lines, best := p.sampleLines(x0, x1)
	pilots := p.pilotPoints(x0, x1)
	y0, y1 := math.Inf(1), math.Inf(-1)
	see := func(v float64) { y0, y1 = math.Min(y0, v), math.Max(y1, v) }
	for _, ln := range lines {
		for _, q := range ln {
			see(q.lo)
			see(q.hi)
		}
	}
	for _, ps := range pilots {
		for _, q := range ps {
			see(q.Y)
		}
	}
	if math.IsInf(y0, 0) {
		y0, y1 = 0, 1
	}
	pad := (y1 - y0) * 0.06
	if pad == 0 {
		pad = 0.01
	}
	// Both charts are sized for a page and keep a wide right margin for the legend.
	title := "Predicted metric by budget, " + budget.FormatCount(cfg.TrainParams) + " model, " + budget.FormatCount(cfg.PoolTokens) + " pool tokens"
	if p.carried() {
		title += " (curves carried from other model sizes)"
	}
	c := chart.New(chart.Box{W: 860, H: 440, L: 60, R: 190, T: 34, B: 44}, title,
		chart.Axis{Scale: chart.Log10(cfg.Lo, cfg.Hi), Title: "total FLOPs (selection over the pool + training)"},
		chart.Axis{Scale: chart.Linear(y0-pad, y1+pad), Title: "predicted metric", Tick: format("%.3g")})
	for j, ln := range lines {
		var hi, lo []chart.Point
		for _, q := range ln {
			hi, lo = append(hi, chart.Point{X: q.x, Y: q.hi}), append(lo, chart.Point{X: q.x, Y: q.lo})
		}
		c.Band(j, hi, lo)
	}
	c.Highlight(best)
	for j, ln := range lines {
		// The fitted stretch is drawn full, the stretch past the pilots faded; they share the
		// sample where one turns into the other, so the line stays joined.
		var fit, past []chart.Point
		for _, q := range ln {
			pt := chart.Point{X: q.x, Y: q.p}
			if q.past {
				if len(past) == 0 && len(fit) > 0 {
					past = append(past, fit[len(fit)-1])
				}
				past = append(past, pt)
			} else {
				fit = append(fit, pt)
			}
		}
		c.Series(j, fit)
		c.Faded(j, past)
		for _, q := range pilots[j] {
			c.Mark(j, q)
		}
	}
	// Changes are numbered on the chart and spelled out beside it, so labels never cover the curves.
	l := chart.Legend{Series: p.methods(), Highlight: "best", Notes: []string{"bands: ±2 SE", "markers: pilots", "faded: past the pilots"}}
	for i, ch := range p.Changes {
		c.Rule(ch.Budget, strconv.Itoa(i+1))
		l.Keys = append(l.Keys, chart.Key{Head: fmt.Sprintf("%d: %s → %s", i+1, orNone(ch.From), ch.To),
			Detail: "   at " + budget.FormatFLOPs(ch.Budget) + " FLOPs"})
	}
	c.Legend(l)
	return c.SVG()
}

// sampleLines is each method's prediction at svgSamples+1 budgets, log10 x0
// to x1, where it affords training, and the best of them at each budget.
func (p *Plan) sampleLines(x0, x1 float64) (lines [][]sample, best []chart.Point) {
	lines = make([][]sample, len(p.Curves))
	measured := make([]float64, len(p.Curves))
	for j, c := range p.Curves {
		// A curve carried from other sizes measured nothing on this one.
		for _, r := range c.Residuals {
			measured[j] = math.Max(measured[j], r.Tokens)
		}
	}
	for i := range svgSamples + 1 {
		f := math.Pow(10, x0+(x1-x0)*float64(i)/svgSamples)
		bestP, any := math.Inf(-1), false
		for j := range p.Curves {
			o := At(&p.Curves[j], f, p.Config)
			if !o.Affordable {
				continue
			}
			lines[j] = append(lines[j], sample{f, o.P, o.Low, o.High, o.Tokens > measured[j]})
			if o.P > bestP {
				bestP, any = o.P, true
			}
		}
		if any {
			best = append(best, chart.Point{X: f, Y: bestP})
		}
	}
	return lines, best
}

// pilotPoints places each curve's pilots at what their data size would cost
// under this plan, keeping those inside the budgets drawn (log10 x0 to x1).
func (p *Plan) pilotPoints(x0, x1 float64) [][]chart.Point {
	cfg := p.Config
	var pil [][]chart.Point
	for j := range p.Curves {
		var ps []chart.Point
		sel := SelectionFLOPs(&p.Curves[j], cfg.PoolTokens)
		for _, r := range p.Curves[j].Residuals {
			f := sel + budget.TrainFLOPs(cfg.TrainParams, r.Tokens, cfg.Epochs)
			if math.Log10(f) >= x0 && math.Log10(f) <= x1 {
				ps = append(ps, chart.Point{X: f, Y: r.Metric})
			}
		}
		pil = append(pil, ps)
	}
	return pil
}

// ResidualSVG draws every pilot's metric minus its fitted curve against its
// tokens, on a y axis symmetric about zero so the sign of a miss reads at a glance.
func (p *Plan) ResidualSVG() []byte {
	x1, y0, y1 := 1.0, -1e-9, 1e-9
	for _, cv := range p.Curves {
		for _, r := range cv.Residuals {
			x1 = math.Max(x1, r.Tokens)
			y0, y1 = math.Min(y0, r.Residual), math.Max(y1, r.Residual)
		}
	}
	m := math.Max(-y0, y1) * 1.15
	c := chart.New(chart.Box{W: 860, H: 300, L: 60, R: 190, T: 34, B: 44}, "Fit residuals (metric − fitted curve)",
		chart.Axis{Scale: chart.Linear(0, x1*1.04), Title: "pilot tokens", Tick: budget.FormatCount},
		chart.Axis{Scale: chart.Linear(-m, m), Title: "residual", Tick: format("%.2g")})
	c.Level(0)
	for j, cv := range p.Curves {
		for _, r := range cv.Residuals {
			c.Mark(j, chart.Point{X: r.Tokens, Y: r.Residual})
		}
	}
	c.Legend(chart.Legend{Series: p.methods()})
	return c.SVG()
}

// carried says some curve of p was carried from other trained sizes.
func (p *Plan) carried() bool {
	for _, c := range p.Curves {
		if c.Trend != FromPilots {
			return true
		}
	}
	return false
}

func (p *Plan) methods() []string {
	var ms []string
	for _, c := range p.Curves {
		ms = append(ms, c.Method)
	}
	return ms
}

func format(verb string) func(float64) string {
	return func(v float64) string { return fmt.Sprintf(verb, v) }
}

func orNone(s string) string {
	if s == "" {
		return "none"
	}
	return s
}
