package plan

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"sluice/budget"
)

// ErrBadConfig reports planning inputs that cannot make a plan.
var ErrBadConfig = errors.New("bad plan settings")

// Config is what a plan is made for.
type Config struct {
	PoolTokens  float64 `json:"pool_tokens"`
	Index       string  `json:"index,omitempty"` // the index the pool's tokens were read from, if any
	TrainParams float64 `json:"train_params"`    // the base model to be trained; curves of other sizes are ignored
	Epochs      float64 `json:"epochs"`
	Lo          float64 `json:"budget_lo"` // budget grid in FLOPs; both 0 picks a grid from the curves
	Hi          float64 `json:"budget_hi"`
	Points      int     `json:"points"` // grid points, log-spaced; 0 means 25
}

// An Option is what one method makes of one budget.
type Option struct {
	Method         string  `json:"method"`
	SelectionFLOPs float64 `json:"selection_flops"`
	TrainingFLOPs  float64 `json:"training_flops"`
	// Tokens is how many tokens to keep: all the budget affords after
	// selection (at most the pool), or 0 when the curve falls with data.
	Tokens     float64 `json:"tokens"`
	Affordable bool    `json:"affordable"` // the budget pays for selection and at least some training
	P          float64 `json:"p"`
	SE         float64 `json:"se"`
	Low        float64 `json:"low"` // P ± 2 SE
	High       float64 `json:"high"`
	// OvertakeRatio is, for a model-based method, the ratio of trained to
	// selector parameters at and above which its prediction at this budget
	// reaches the cheapest method's, its fitted curve held fixed; 0 when no
	// selector size gets there, or for the cheapest method itself.
	OvertakeRatio float64 `json:"overtake_ratio,omitempty"`
	// OvertakeLow and OvertakeHigh bound OvertakeRatio by the fits' errors
	// (OvertakeInterval); 0 where no selector size gets there.
	OvertakeLow  float64 `json:"overtake_ratio_low,omitempty"`
	OvertakeHigh float64 `json:"overtake_ratio_high,omitempty"`
}

// A Step is the plan at one budget.
type Step struct {
	Budget  float64  `json:"budget_flops"`
	Options []Option `json:"options"`
	Best    string   `json:"best"` // "" when no method is affordable
	BestP   float64  `json:"best_p"`
}

// A Change is a budget at which the best method changes.
type Change struct {
	Budget float64 `json:"budget_flops"`
	From   string  `json:"from"`
	To     string  `json:"to"`
}

// A Plan is the best method and data size over a grid of budgets.
type Plan struct {
	Config Config  `json:"config"`
	Curves []Curve `json:"curves"`
	// Trends are the methods' curves across trained sizes, where pilots cover two or more.
	Trends  []Trend  `json:"trends,omitempty"`
	Steps   []Step   `json:"steps"`
	Changes []Change `json:"changes"`
	Notes   []string `json:"notes"`
	// Asked is the plan at one budget of the caller's, off the grid; see StepAt.
	Asked *Step `json:"asked,omitempty"`
}

// StepAt is the plan at budget flops, which need not be on the grid.
func (p *Plan) StepAt(flops float64) Step { return best(p.Curves, flops, p.Config, true) }

// SelectionFLOPs is the cost of scoring the whole pool with c's method.
// Model-based methods cost passes·2·selector params·pool tokens
// (budget.SelectorFLOPs); lexical ones are charged budget.FLOPsPerToken for
// each pool token analysed once, the convention of sluice's ledger. A cost
// measured per pool token (FlopsPerPoolToken) takes the place of either.
func SelectionFLOPs(c *Curve, poolTokens float64) float64 {
	if c.FlopsPerPoolToken > 0 {
		return c.FlopsPerPoolToken * poolTokens
	}
	if c.Passes == 0 {
		return budget.FLOPsPerToken * poolTokens
	}
	return budget.SelectorFLOPs(c.Passes, c.SelectorParams, poolTokens)
}

// At is what method c makes of budget flops under cfg.
func At(c *Curve, flops float64, cfg Config) Option {
	o := Option{Method: c.Method, SelectionFLOPs: SelectionFLOPs(c, cfg.PoolTokens)}
	perToken := budget.TrainFLOPs(cfg.TrainParams, 1, cfg.Epochs)
	k := math.Min((flops-o.SelectionFLOPs)/perToken, cfg.PoolTokens)
	if k > 0 {
		o.Affordable = true
		if c.Pbar >= c.P0 {
			o.Tokens = k
		}
	}
	o.TrainingFLOPs = budget.TrainFLOPs(cfg.TrainParams, o.Tokens, cfg.Epochs)
	o.P, o.SE = c.Predict(o.Tokens)
	o.Low, o.High = o.P-2*o.SE, o.P+2*o.SE
	return o
}

// OvertakeRatio is the ratio of trained to selector parameters at and above
// which model-based curve c, with its fitted curve held fixed, predicts at
// least what base predicts at budget flops. It is false when no selector
// size gets there, when base affords no training, or when c is lexical.
func OvertakeRatio(c, base *Curve, flops float64, cfg Config) (float64, bool) {
	r := overtake(c, base, flops, cfg, 0)
	return r, r > 0
}

// OvertakeInterval is the range of OvertakeRatio the fits' errors allow: lo
// is the ratio at which c's prediction could match base's (their difference
// plus two standard errors reaches zero), hi the ratio at which it surely
// does (the difference less two standard errors). The two predictions' errors
// are added as if independent; methods fitted with a shared P0 are in truth
// positively correlated, so the interval is if anything too wide. Either is 0
// when no selector size gets there.
func OvertakeInterval(c, base *Curve, flops float64, cfg Config) (lo, hi float64) {
	return overtake(c, base, flops, cfg, -2), overtake(c, base, flops, cfg, 2)
}

// overtake is the ratio at which c's prediction less z standard errors of
// the difference reaches base's, or 0.
func overtake(c, base *Curve, flops float64, cfg Config, z float64) float64 {
	b := At(base, flops, cfg)
	if c.Passes == 0 || !b.Affordable || c.Pbar < c.P0 {
		return 0
	}
	ahead := func(s float64) bool {
		d := *c
		d.SelectorParams, d.FlopsPerPoolToken = s, 0
		o := At(&d, flops, cfg)
		return o.P-z*math.Hypot(o.SE, b.SE) >= b.P
	}
	if !ahead(0) {
		return 0
	}
	// P falls as the selector grows and eats the training budget; a
	// selector costing the whole budget leaves P0.
	lo, hi := 0.0, flops/budget.SelectorFLOPs(c.Passes, 1, cfg.PoolTokens)
	if ahead(hi) {
		return cfg.TrainParams / hi
	}
	for range 200 {
		mid := (lo + hi) / 2
		if ahead(mid) {
			lo = mid
		} else {
			hi = mid
		}
	}
	if lo == 0 {
		return 0
	}
	return cfg.TrainParams / lo
}

// cheapest is the index of the curve with the lowest selection cost.
func cheapest(curves []Curve, cfg Config) int {
	j := 0
	for i := range curves {
		if SelectionFLOPs(&curves[i], cfg.PoolTokens) < SelectionFLOPs(&curves[j], cfg.PoolTokens) {
			j = i
		}
	}
	return j
}

// best is the plan at one budget; ratios asks for the overtake ratios,
// which the bisection for change budgets does not need.
func best(curves []Curve, flops float64, cfg Config, ratios bool) Step {
	s := Step{Budget: flops}
	base := cheapest(curves, cfg)
	for i := range curves {
		o := At(&curves[i], flops, cfg)
		if ratios && i != base {
			o.OvertakeRatio, _ = OvertakeRatio(&curves[i], &curves[base], flops, cfg)
			o.OvertakeLow, o.OvertakeHigh = OvertakeInterval(&curves[i], &curves[base], flops, cfg)
		}
		s.Options = append(s.Options, o)
		// Ties go to the earlier curve, so the answer is stable.
		if o.Affordable && (s.Best == "" || o.P > s.BestP) {
			s.Best, s.BestP = o.Method, o.P
		}
	}
	return s
}

// Make plans over a log grid of budgets with the curves fitted for
// cfg.TrainParams.
func Make(curves []Curve, cfg Config) (*Plan, error) {
	if !(cfg.PoolTokens > 0) || !(cfg.TrainParams > 0) || math.IsInf(cfg.PoolTokens, 0) || math.IsInf(cfg.TrainParams, 0) {
		return nil, fmt.Errorf("plan: pool tokens %g and trained params %g must be finite and greater than zero: %w", cfg.PoolTokens, cfg.TrainParams, ErrBadConfig)
	}
	if cfg.Epochs == 0 {
		cfg.Epochs = 1
	}
	if !(cfg.Epochs > 0) {
		return nil, fmt.Errorf("plan: epochs %g: must be greater than zero: %w", cfg.Epochs, ErrBadConfig)
	}
	if cfg.Points == 0 {
		cfg.Points = 25
	}
	if cfg.Points < 2 {
		return nil, fmt.Errorf("plan: %d grid points: need at least 2: %w", cfg.Points, ErrBadConfig)
	}
	p := &Plan{Config: cfg}
	if err := p.useCurves(curves); err != nil {
		return nil, err
	}
	minTok := math.Inf(1)
	for _, c := range p.Curves {
		for _, r := range c.Residuals {
			if r.Tokens > 0 {
				minTok = math.Min(minTok, r.Tokens)
			}
		}
	}
	if cfg.Lo == 0 && cfg.Hi == 0 {
		lo, hi := math.Inf(1), 0.0
		if math.IsInf(minTok, 1) {
			minTok = cfg.PoolTokens / 1000
		}
		for i := range p.Curves {
			s := SelectionFLOPs(&p.Curves[i], cfg.PoolTokens)
			lo = math.Min(lo, s+budget.TrainFLOPs(cfg.TrainParams, math.Min(minTok, cfg.PoolTokens), cfg.Epochs))
			hi = math.Max(hi, s+budget.TrainFLOPs(cfg.TrainParams, cfg.PoolTokens, cfg.Epochs))
		}
		if lo >= hi {
			lo = hi / 100
		}
		cfg.Lo, cfg.Hi = lo, hi
		p.Config = cfg
	}
	if !(cfg.Lo > 0) || !(cfg.Hi > cfg.Lo) || math.IsInf(cfg.Hi, 0) {
		return nil, fmt.Errorf("plan: budgets %g:%g: want 0 < LO < HI: %w", cfg.Lo, cfg.Hi, ErrBadConfig)
	}
	ll, lh := math.Log(cfg.Lo), math.Log(cfg.Hi)
	for i := range cfg.Points {
		c := math.Exp(ll + (lh-ll)*float64(i)/float64(cfg.Points-1))
		if i == 0 {
			c = cfg.Lo
		} else if i == cfg.Points-1 {
			c = cfg.Hi
		}
		s := best(p.Curves, c, cfg, true)
		if i > 0 {
			if prev := p.Steps[i-1]; prev.Best != s.Best {
				p.Changes = append(p.Changes, change(p.Curves, prev, s, cfg))
			}
		}
		p.Steps = append(p.Steps, s)
	}
	return p, nil
}

// useCurves sets p.Curves to a curve per method for the trained size: the one fitted to pilots on
// that size, else the method's trend across two or more other sizes carried to it.
func (p *Plan) useCurves(curves []Curve) error {
	n := p.Config.TrainParams
	trends, err := Trends(curves)
	if err != nil {
		return err
	}
	p.Trends = trends
	var methods []string
	of := map[string][]Curve{}
	for _, c := range curves {
		if _, ok := of[c.Method]; !ok {
			methods = append(methods, c.Method)
		}
		of[c.Method] = append(of[c.Method], c)
	}
	for _, m := range methods {
		var use *Curve
		for i, c := range of[m] {
			if c.TrainedParams == n {
				use = &of[m][i]
			}
		}
		if use == nil {
			for i := range trends {
				if t := &trends[i]; t.Method == m {
					c := t.At(n, of[m][0])
					use = &c
					p.Notes = append(p.Notes, fmt.Sprintf("%s: no pilots on a %s-parameter model; its curve is %s from pilots on %s parameters (P0 and P̄ linear in ln N, λ a power law in N)",
						m, budget.FormatCount(n), c.Trend, sizeList(t.Sizes)))
				}
			}
		}
		if use == nil {
			p.Notes = append(p.Notes, fmt.Sprintf("%s: pilots on a %s-parameter model only; a %s-parameter plan needs pilots on that size, or on two or more sizes to carry the curve across",
				m, budget.FormatCount(of[m][0].TrainedParams), budget.FormatCount(n)))
			continue
		}
		if use.Pbar < use.P0 {
			p.Notes = append(p.Notes, fmt.Sprintf("%s: the fitted curve falls with more data (P̄ %.4g < P0 %.4g); it keeps no rows", m, use.Pbar, use.P0))
		}
		p.Curves = append(p.Curves, *use)
	}
	if len(p.Curves) == 0 {
		var sizes []float64
		for _, c := range curves {
			if !slices.Contains(sizes, c.TrainedParams) {
				sizes = append(sizes, c.TrainedParams)
			}
		}
		slices.Sort(sizes)
		return fmt.Errorf("plan: no pilots on a %s-parameter model, and no method has pilots on two or more sizes to carry its curve there; the pilots trained %s parameters: %w",
			budget.FormatCount(n), sizeList(sizes), ErrBadConfig)
	}
	return nil
}

func sizeList(sizes []float64) string {
	var s []string
	for _, v := range sizes {
		s = append(s, budget.FormatCount(v))
	}
	return strings.Join(s, ", ")
}

// change finds, by bisection in log budget, where the best method stops
// being a's: the first grid step can hide more than one change, so the
// change is reported as from a's best to whatever is best just past it.
func change(curves []Curve, a, b Step, cfg Config) Change {
	lo, hi := math.Log(a.Budget), math.Log(b.Budget)
	for range 60 {
		mid := (lo + hi) / 2
		if best(curves, math.Exp(mid), cfg, false).Best == a.Best {
			lo = mid
		} else {
			hi = mid
		}
	}
	c := math.Exp(hi)
	return Change{Budget: c, From: a.Best, To: best(curves, c, cfg, false).Best}
}
