package plan

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"
)

// Errors a fit refuses with; both come wrapped with the method and what
// data would fix it.
var (
	ErrTooFewPoints  = errors.New("too few pilot points")
	ErrNoConvergence = errors.New("fit did not converge")
)

// FitOptions controls Fit.
type FitOptions struct {
	// FreeP0 fits a separate base score P0 for every method instead of one
	// per base model.
	FreeP0 bool
}

// A Residual is one pilot point against its fitted curve.
type Residual struct {
	Tokens    float64 `json:"tokens"`
	Metric    float64 `json:"metric"`
	Predicted float64 `json:"predicted"`
	Residual  float64 `json:"residual"` // Metric − Predicted
}

// A Curve is the fitted saturation curve P(k) = Pbar − (Pbar − P0)·exp(−Lambda·k)
// of one method on one base model, k in tokens.
type Curve struct {
	Method         string  `json:"method"`
	Cost           string  `json:"cost"`
	Passes         float64 `json:"passes"`
	SelectorParams float64 `json:"selector_params"`
	// FlopsPerPoolToken, when not 0, is the selection's cost per pool token as measured, in
	// place of the cost class's.
	FlopsPerPoolToken float64 `json:"flops_per_pool_token,omitempty"`
	TrainedParams     float64 `json:"trained_params"`
	// Trend is FromPilots for a curve fitted to pilots on its size, else Interpolated or
	// Extrapolated from the pilots on FromSizes.
	Trend     string    `json:"trend,omitempty"`
	FromSizes []float64 `json:"from_sizes,omitempty"`

	P0       float64 `json:"p0"`
	Pbar     float64 `json:"pbar"`
	Lambda   float64 `json:"lambda"` // per token
	P0SE     float64 `json:"p0_se"`
	PbarSE   float64 `json:"pbar_se"`
	LambdaSE float64 `json:"lambda_se"`
	// Cov is the covariance of (P0, Pbar, Lambda), from the joint fit.
	Cov [3][3]float64 `json:"cov"`

	R2        float64    `json:"r2"`
	RSS       float64    `json:"rss"`
	DOF       int        `json:"dof"` // points minus parameters of the joint fit
	Residuals []Residual `json:"residuals"`
}

// Predict is the curve's metric after k tokens and its standard error by
// the delta method from the parameter covariance.
func (c *Curve) Predict(k float64) (p, se float64) {
	e := math.Exp(-c.Lambda * k)
	p = c.Pbar - (c.Pbar-c.P0)*e
	g := [3]float64{e, 1 - e, (c.Pbar - c.P0) * k * e}
	var v float64
	for i := range g {
		for j := range g {
			v += g[i] * c.Cov[i][j] * g[j]
		}
	}
	return p, math.Sqrt(math.Max(v, 0))
}

type point struct{ x, y float64 }

type group struct {
	curve Curve
	pts   []point
	p0    int // index of this curve's P0 in the parameter vector
	at    int // index of its Pbar; its scaled lambda follows
}

// Fit fits one saturation curve per method and base model by nonlinear
// least squares (Levenberg–Marquardt), jointly so that methods of one base
// model share P0 unless opt.FreeP0. Standard errors come from the Jacobian
// at the optimum: sqrt(diag((JᵀJ)⁻¹)·s²), s² = RSS/(n−p).
func Fit(pilots []Pilot, opt FitOptions) ([]Curve, error) {
	type key struct {
		method string
		n      float64
	}
	var order []key
	idx := map[key]*group{}
	var scale float64
	for _, p := range pilots {
		k := key{p.Method, p.TrainedParams}
		g, ok := idx[k]
		if !ok {
			g = &group{curve: Curve{Method: p.Method, Cost: p.Cost, Passes: p.Passes,
				SelectorParams: p.SelectorParams, FlopsPerPoolToken: p.FlopsPerPoolToken, TrainedParams: p.TrainedParams}}
			idx[k] = g
			order = append(order, k)
		} else if g.curve.Passes != p.Passes || g.curve.SelectorParams != p.SelectorParams || g.curve.FlopsPerPoolToken != p.FlopsPerPoolToken {
			return nil, fmt.Errorf("fit %s: pilots disagree on cost or selector_params: %w", p.Method, ErrBadPilots)
		}
		g.pts = append(g.pts, point{p.Tokens, p.Metric})
		scale = math.Max(scale, p.Tokens)
	}
	if len(order) == 0 {
		return nil, fmt.Errorf("fit: no pilots: %w", ErrTooFewPoints)
	}
	groups := make([]*group, len(order))
	for i, k := range order {
		g := idx[k]
		distinct := map[float64]bool{}
		for _, p := range g.pts {
			distinct[p.x] = true
		}
		if len(distinct) < 3 {
			return nil, fmt.Errorf("fit %s (trained %g params): %d distinct token counts: need at least 3, e.g. a run at a small, a middle and a large data size: %w",
				k.method, k.n, len(distinct), ErrTooFewPoints)
		}
		for j := range g.pts {
			g.pts[j].x /= scale // conditioning: k in units of the largest pilot
		}
		groups[i] = g
	}

	// Parameter layout: the P0s first, then (Pbar, scaled lambda) per curve.
	p0of := map[float64]int{}
	var theta []float64
	var p0n []float64
	for _, g := range groups {
		b0, bbar, bl := initial(g.pts)
		j, ok := p0of[g.curve.TrainedParams]
		if opt.FreeP0 || !ok {
			j = len(theta)
			theta = append(theta, 0)
			p0n = append(p0n, 0)
			if !opt.FreeP0 {
				p0of[g.curve.TrainedParams] = j
			}
		}
		g.p0 = j
		theta[j] += b0
		p0n[j]++
		g.curve.Pbar, g.curve.Lambda = bbar, bl
	}
	for j := range theta {
		theta[j] /= p0n[j]
	}
	for _, g := range groups {
		g.at = len(theta)
		theta = append(theta, g.curve.Pbar, g.curve.Lambda)
	}
	n := 0
	for _, g := range groups {
		n += len(g.pts)
	}
	np := len(theta)
	if n <= np {
		return nil, fmt.Errorf("fit: %d points for %d parameters: need more points than parameters to estimate the noise; add a pilot run: %w", n, np, ErrTooFewPoints)
	}
	theta, A, rss, err := marquardt(groups, theta)
	if err != nil {
		return nil, err
	}
	cov, ok := invertSPD(A)
	if !ok {
		for _, g := range groups {
			if fix := advice(g, theta[g.at+1], scale); !strings.HasPrefix(fix, "add pilots near") {
				return nil, fmt.Errorf("fit %s: the pilots do not determine the curve (singular Jacobian): %s: %w", g.curve.Method, fix, ErrNoConvergence)
			}
		}
		return nil, fmt.Errorf("fit: the pilots do not determine all parameters (singular Jacobian): spread the pilot token counts over each curve's bend: %w", ErrNoConvergence)
	}
	s2 := rss / float64(n-np)
	out := make([]Curve, len(groups))
	for i, g := range groups {
		c := g.curve
		c.P0, c.Pbar, c.Lambda = theta[g.p0], theta[g.at], theta[g.at+1]/scale
		if !(c.Lambda > 0) {
			return nil, fmt.Errorf("fit %s: the metric does not level off (fitted rate %g): add pilots at larger token counts: %w", c.Method, c.Lambda, ErrNoConvergence)
		}
		ix := [3]int{g.p0, g.at, g.at + 1}
		sc := [3]float64{1, 1, 1 / scale}
		for a := range 3 {
			for b := range 3 {
				c.Cov[a][b] = cov[ix[a]][ix[b]] * s2 * sc[a] * sc[b]
			}
		}
		c.P0SE, c.PbarSE, c.LambdaSE = math.Sqrt(c.Cov[0][0]), math.Sqrt(c.Cov[1][1]), math.Sqrt(c.Cov[2][2])
		// A fit whose level or rate is less certain than itself would plan on noise.
		if c.LambdaSE > c.Lambda || c.PbarSE > math.Abs(c.Pbar-c.P0) {
			fix := advice(g, theta[g.at+1], scale)
			return nil, fmt.Errorf("fit %s: the curve is not determined (P̄ %.4g ± %.2g, λ %.3g ± %.2g per token): %s: %w",
				c.Method, c.Pbar, c.PbarSE, c.Lambda, c.LambdaSE, fix, ErrNoConvergence)
		}
		var mean, tss float64
		for _, p := range g.pts {
			mean += p.y
		}
		mean /= float64(len(g.pts))
		for _, p := range g.pts {
			k := p.x * scale
			pred, _ := c.Predict(k)
			c.Residuals = append(c.Residuals, Residual{Tokens: k, Metric: p.y, Predicted: pred, Residual: p.y - pred})
			c.RSS += (p.y - pred) * (p.y - pred)
			tss += (p.y - mean) * (p.y - mean)
		}
		sort.Slice(c.Residuals, func(a, b int) bool { return c.Residuals[a].Tokens < c.Residuals[b].Tokens })
		if tss > 0 {
			c.R2 = 1 - c.RSS/tss
		}
		c.DOF = n - np
		out[i] = c
	}
	return out, nil
}

// advice says what pilots would pin down curve g, given its fitted scaled rate.
func advice(g *group, rate, scale float64) string {
	minPos, maxX := math.Inf(1), 0.0
	for _, p := range g.pts {
		if p.x > 0 {
			minPos = math.Min(minPos, p.x)
		}
		maxX = math.Max(maxX, p.x)
	}
	bend := 1 / rate // where the fitted curve has come 63 % of the way
	switch {
	case rate <= 0:
		return "add pilots at larger token counts, past where the metric levels off"
	case bend < minPos:
		return "add pilots at smaller token counts, before the metric levels off"
	case bend > maxX:
		return "add pilots at larger token counts, past where the metric levels off"
	}
	return fmt.Sprintf("add pilots near %.3g tokens, where the curve bends, or repeat runs to average out the noise", bend*scale)
}

// initial finds a starting point for one curve: for a fixed rate the model
// is linear in (P0, Pbar), so scan rates on a log grid and keep the best
// linear fit.
func initial(pts []point) (p0, pbar, lam float64) {
	best := math.Inf(1)
	for i := 0; i <= 120; i++ {
		l := math.Pow(10, -2+4*float64(i)/120)
		// Normal equations for columns e and 1−e.
		var aa, ab, bb, ay, by float64
		for _, p := range pts {
			e := math.Exp(-l * p.x)
			aa += e * e
			ab += e * (1 - e)
			bb += (1 - e) * (1 - e)
			ay += e * p.y
			by += (1 - e) * p.y
		}
		det := aa*bb - ab*ab
		if !(math.Abs(det) > 1e-300) {
			continue
		}
		a := (ay*bb - by*ab) / det
		b := (aa*by - ab*ay) / det
		var rss float64
		for _, p := range pts {
			e := math.Exp(-l * p.x)
			d := p.y - (b - (b-a)*e)
			rss += d * d
		}
		if rss < best {
			best, p0, pbar, lam = rss, a, b, l
		}
	}
	return p0, pbar, lam
}

// eval returns the residuals' sum of squares and, if J is not nil, fills
// JᵀJ and Jᵀr.
func eval(groups []*group, theta []float64, jtj [][]float64, jtr []float64) float64 {
	var rss float64
	for _, g := range groups {
		p0, pbar, l := theta[g.p0], theta[g.at], theta[g.at+1]
		for _, p := range g.pts {
			e := math.Exp(-l * p.x)
			r := p.y - (pbar - (pbar-p0)*e)
			rss += r * r
			if jtj == nil {
				continue
			}
			ix := [3]int{g.p0, g.at, g.at + 1}
			d := [3]float64{e, 1 - e, (pbar - p0) * p.x * e}
			for a := range 3 {
				jtr[ix[a]] += d[a] * r
				for b := range 3 {
					jtj[ix[a]][ix[b]] += d[a] * d[b]
				}
			}
		}
	}
	return rss
}

func square(n int) [][]float64 {
	m := make([][]float64, n)
	for i := range m {
		m[i] = make([]float64, n)
	}
	return m
}

// marquardt minimises the sum of squares from theta with Marquardt's
// diagonal scaling, stopping when a step no longer changes the parameters
// in their twelfth significant digit. It returns the optimum, JᵀJ there and
// the residual sum of squares.
func marquardt(groups []*group, theta []float64) ([]float64, [][]float64, float64, error) {
	np := len(theta)
	mu := 1e-3
	trial := make([]float64, np)
	for iter := 0; iter < 1000; iter++ {
		A, g := square(np), make([]float64, np)
		rss := eval(groups, theta, A, g)
		if math.IsNaN(rss) || math.IsInf(rss, 0) {
			break
		}
		for {
			M := square(np)
			for i := range np {
				copy(M[i], A[i])
				M[i][i] += mu * math.Max(A[i][i], 1e-30)
			}
			delta, ok := solveSPD(M, g)
			if !ok {
				mu *= 10
				if mu > 1e20 {
					return nil, nil, 0, fmt.Errorf("fit: singular system: the pilots do not pin the curves down; spread pilot token counts over the bend of each curve: %w", ErrNoConvergence)
				}
				continue
			}
			small, smallish := true, true
			for i := range np {
				trial[i] = theta[i] + delta[i]
				d := math.Abs(delta[i]) / (math.Abs(theta[i]) + 1e-12)
				small = small && d <= 1e-12
				smallish = smallish && d <= 1e-9
			}
			r2 := eval(groups, trial, nil, nil)
			if r2 <= rss {
				copy(theta, trial)
				mu = math.Max(mu/3, 1e-12)
				if small || (smallish && rss-r2 <= 1e-15*rss) {
					A, g = square(np), make([]float64, np)
					rss = eval(groups, theta, A, g)
					return theta, A, rss, nil
				}
				break
			}
			if small {
				return theta, A, rss, nil
			}
			mu *= 4
			if mu > 1e20 {
				return nil, nil, 0, fmt.Errorf("fit: no downhill step: add pilots that cover where the metric bends and where it levels off: %w", ErrNoConvergence)
			}
		}
	}
	return nil, nil, 0, fmt.Errorf("fit: no convergence in 1000 iterations: add pilots at larger token counts so the level-off is seen: %w", ErrNoConvergence)
}

// cholesky factors a symmetric positive definite matrix as L·Lᵀ.
func cholesky(a [][]float64) ([][]float64, bool) {
	n := len(a)
	l := square(n)
	for i := range n {
		for j := 0; j <= i; j++ {
			s := a[i][j]
			for k := range j {
				s -= l[i][k] * l[j][k]
			}
			if i == j {
				if !(s > 0) {
					return nil, false
				}
				l[i][i] = math.Sqrt(s)
			} else {
				l[i][j] = s / l[j][j]
			}
		}
	}
	return l, true
}

func solveSPD(a [][]float64, b []float64) ([]float64, bool) {
	l, ok := cholesky(a)
	if !ok {
		return nil, false
	}
	n := len(b)
	x := make([]float64, n)
	for i := range n {
		s := b[i]
		for k := range i {
			s -= l[i][k] * x[k]
		}
		x[i] = s / l[i][i]
	}
	for i := n - 1; i >= 0; i-- {
		s := x[i]
		for k := i + 1; k < n; k++ {
			s -= l[k][i] * x[k]
		}
		x[i] = s / l[i][i]
	}
	return x, true
}

func invertSPD(a [][]float64) ([][]float64, bool) {
	n := len(a)
	inv := square(n)
	for j := range n {
		e := make([]float64, n)
		e[j] = 1
		x, ok := solveSPD(a, e)
		if !ok {
			return nil, false
		}
		for i := range n {
			inv[i][j] = x[i]
		}
	}
	return inv, true
}
