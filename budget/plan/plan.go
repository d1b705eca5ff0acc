package plan

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"sluice/budget"
)

// ErrBadConfig reports planning inputs that cannot make a plan.
var ErrBadConfig = errors.New("bad plan settings")

// Config is what a plan is made for.
type Config struct {
	PoolTokens  float64 `json:"pool_tokens"`
	TrainParams float64 `json:"train_params"` // the base model to be trained; curves of other sizes are ignored
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
	Config  Config   `json:"config"`
	Curves  []Curve  `json:"curves"`
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
// each pool token analysed once, the convention of sluice's ledger.
func SelectionFLOPs(c *Curve, poolTokens float64) float64 {
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
	b := At(base, flops, cfg)
	if c.Passes == 0 || !b.Affordable || c.Pbar < c.P0 {
		return 0, false
	}
	sized := func(s float64) float64 {
		d := *c
		d.SelectorParams = s
		return At(&d, flops, cfg).P
	}
	if sized(0) < b.P {
		return 0, false
	}
	// P falls as the selector grows and eats the training budget; a
	// selector costing the whole budget leaves P0.
	lo, hi := 0.0, flops/budget.SelectorFLOPs(c.Passes, 1, cfg.PoolTokens)
	if sized(hi) >= b.P {
		return cfg.TrainParams / hi, true
	}
	for range 200 {
		mid := (lo + hi) / 2
		if sized(mid) >= b.P {
			lo = mid
		} else {
			hi = mid
		}
	}
	if lo == 0 {
		return 0, false
	}
	return cfg.TrainParams / lo, true
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
	minTok := math.Inf(1)
	for _, c := range curves {
		if c.TrainedParams != cfg.TrainParams {
			p.Notes = append(p.Notes, fmt.Sprintf("%s: pilots on a %g-parameter model are not used for a %g-parameter plan", c.Method, c.TrainedParams, cfg.TrainParams))
			continue
		}
		if c.Pbar < c.P0 {
			p.Notes = append(p.Notes, fmt.Sprintf("%s: the fitted curve falls with more data (P̄ %.4g < P0 %.4g); it keeps no rows", c.Method, c.Pbar, c.P0))
		}
		p.Curves = append(p.Curves, c)
		for _, r := range c.Residuals {
			if r.Tokens > 0 {
				minTok = math.Min(minTok, r.Tokens)
			}
		}
	}
	if len(p.Curves) == 0 {
		var sizes []string
		seen := map[float64]bool{}
		for _, c := range curves {
			if !seen[c.TrainedParams] {
				seen[c.TrainedParams] = true
				sizes = append(sizes, fmt.Sprintf("%g", c.TrainedParams))
			}
		}
		return nil, fmt.Errorf("plan: no pilots on a %g-parameter model; the pilots trained %s parameters: %w", cfg.TrainParams, strings.Join(sizes, ", "), ErrBadConfig)
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
