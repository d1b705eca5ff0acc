package plan

import (
	"cmp"
	"fmt"
	"math"
	"slices"
)

// How a curve of a plan was found: fitted to pilots on the trained size, or
// carried there from pilots on other sizes by a Trend.
const (
	FromPilots   = ""             // fitted to pilots on this size
	Interpolated = "interpolated" // between the sizes with pilots
	Extrapolated = "extrapolated" // beyond them: a guess from the trend
)

// A Trend is how one method's curve moves with the trained model's size N,
// fitted across the sizes that have pilots.
//
// P0 and P̄ are taken as linear in ln N, and λ as a power law in N (ln λ
// linear in ln N). A power law in N is the usual first guess for how a
// trained model's scores scale; the metric itself may be negative or
// bounded (an accuracy cannot pass 1), where a power law of its value is not
// defined, so the levels get the log-linear form a power law takes over a
// decade or two, and only the rate, which is positive, gets the power law.
// Each size's fitted values are weighted by their standard errors (weighted
// least squares), so a size with noisy pilots counts less; with three or
// more sizes, scatter beyond those errors widens the trend's errors by
// χ²/dof.
type Trend struct {
	Method string    `json:"method"`
	Sizes  []float64 `json:"sizes"` // trained sizes fitted, ascending
	// Change of P0 and P̄ per e-fold of N, and λ's exponent, each ± one SE.
	P0Slope     float64 `json:"p0_per_e_fold"`
	P0SlopeSE   float64 `json:"p0_per_e_fold_se"`
	PbarSlope   float64 `json:"pbar_per_e_fold"`
	PbarSlopeSE float64 `json:"pbar_per_e_fold_se"`
	LambdaExp   float64 `json:"lambda_exponent"`
	LambdaExpSE float64 `json:"lambda_exponent_se"`

	// fit of (P0, P̄, ln λ) at each size, kept to carry to any size.
	x   []float64       // ln(N/ref)
	y   [][3]float64    // per size
	cov [][3][3]float64 // per size, of (P0, P̄, ln λ)
	inf [3]float64      // χ²/dof inflation per parameter, at least 1
	ref float64
}

// Trends fits a Trend to every method with curves on two or more trained
// sizes. Curves of one method must agree on the selector's cost and size.
func Trends(curves []Curve) ([]Trend, error) {
	by := map[string][]Curve{}
	var order []string
	for _, c := range curves {
		if _, ok := by[c.Method]; !ok {
			order = append(order, c.Method)
		}
		by[c.Method] = append(by[c.Method], c)
	}
	var out []Trend
	for _, m := range order {
		cs := by[m]
		if len(cs) < 2 {
			continue
		}
		for _, c := range cs[1:] {
			if c.Passes != cs[0].Passes || c.SelectorParams != cs[0].SelectorParams {
				return nil, fmt.Errorf("trend of %s: pilots on %g and %g parameters used different selectors (%s, %g and %s, %g parameters): %w",
					m, cs[0].TrainedParams, c.TrainedParams, cs[0].Cost, cs[0].SelectorParams, c.Cost, c.SelectorParams, ErrBadPilots)
			}
		}
		out = append(out, trendOf(m, cs))
	}
	return out, nil
}

func trendOf(method string, cs []Curve) Trend {
	cs = slices.Clone(cs)
	slices.SortFunc(cs, func(a, b Curve) int { return cmp.Compare(a.TrainedParams, b.TrainedParams) })
	t := Trend{Method: method}
	// Centre ln N at the sizes' geometric mean: the slope and level are then nearly uncorrelated.
	for _, c := range cs {
		t.ref += math.Log(c.TrainedParams)
	}
	t.ref = math.Exp(t.ref / float64(len(cs)))
	for _, c := range cs {
		t.Sizes = append(t.Sizes, c.TrainedParams)
		t.x = append(t.x, math.Log(c.TrainedParams/t.ref))
		t.y = append(t.y, [3]float64{c.P0, c.Pbar, math.Log(c.Lambda)})
		// ln λ's errors are λ's over λ (delta method).
		g := [3]float64{1, 1, 1 / c.Lambda}
		var v [3][3]float64
		for a := range 3 {
			for b := range 3 {
				v[a][b] = c.Cov[a][b] * g[a] * g[b]
			}
		}
		t.cov = append(t.cov, v)
	}
	var slope, se [3]float64
	for j := range 3 {
		vs := make([]float64, len(cs))
		ys := make([]float64, len(cs))
		for i := range cs {
			vs[i], ys[i] = t.cov[i][j][j], t.y[i][j]
		}
		f := weightedLine(t.x, ys, vs)
		t.inf[j] = 1
		if dof := len(cs) - 2; dof > 0 && f.chi2/float64(dof) > 1 {
			t.inf[j] = f.chi2 / float64(dof)
		}
		slope[j], se[j] = f.b, math.Sqrt(f.cov[1][1]*t.inf[j])
	}
	t.P0Slope, t.PbarSlope, t.LambdaExp = slope[0], slope[1], slope[2]
	t.P0SlopeSE, t.PbarSlopeSE, t.LambdaExpSE = se[0], se[1], se[2]
	return t
}

// line is a weighted least-squares fit of y = a + b·x.
type line struct {
	a, b float64
	cov  [2][2]float64 // (XᵀWX)⁻¹, the errors the weights imply
	chi2 float64
	// h returns the weights, one per point, whose sum with the y values is the fit at x.
	h func(x float64) []float64
}

// weightedLine fits y = a + b·x with weights 1/v. The estimates are linear in
// y, which is what lets AtSize carry the covariance of several parameters
// measured at the same size through exactly.
func weightedLine(x, y, v []float64) line {
	var s, sx, sxx float64
	w := make([]float64, len(x))
	for i := range x {
		w[i] = 1 / v[i]
		s += w[i]
		sx += w[i] * x[i]
		sxx += w[i] * x[i] * x[i]
	}
	det := s*sxx - sx*sx
	var f line
	f.cov = [2][2]float64{{sxx / det, -sx / det}, {-sx / det, s / det}}
	f.h = func(at float64) []float64 {
		hs := make([]float64, len(x))
		for i := range x {
			// [1 at]·(XᵀWX)⁻¹·[1 x_i]ᵀ·w_i
			hs[i] = w[i] * (f.cov[0][0] + f.cov[0][1]*x[i] + at*(f.cov[1][0]+f.cov[1][1]*x[i]))
		}
		return hs
	}
	if y == nil {
		return f
	}
	h0, h1 := f.h(0), f.h(1)
	for i := range x {
		f.a += h0[i] * y[i]
		f.b += (h1[i] - h0[i]) * y[i]
	}
	for i := range x {
		r := y[i] - f.a - f.b*x[i]
		f.chi2 += r * r * w[i]
	}
	return f
}

// At is the trend's curve at n trained parameters, with the covariance of
// (P0, P̄, λ) carried from every size's fit: each parameter at n is a
// weighted sum of its values at the sizes, and sizes were fitted
// independently, so the covariance at n is the same weighted sum of theirs.
// proto gives the method's cost and selector.
func (t *Trend) At(n float64, proto Curve) Curve {
	at := math.Log(n / t.ref)
	var hs [3][]float64
	var est [3]float64
	for j := range 3 {
		vs := make([]float64, len(t.x))
		for i := range t.x {
			vs[i] = t.cov[i][j][j]
		}
		hs[j] = weightedLine(t.x, nil, vs).h(at)
		for i := range t.x {
			est[j] += hs[j][i] * t.y[i][j]
		}
	}
	c := Curve{Method: proto.Method, Cost: proto.Cost, Passes: proto.Passes, SelectorParams: proto.SelectorParams,
		FlopsPerPoolToken: proto.FlopsPerPoolToken, TrainedParams: n, FromSizes: t.Sizes}
	c.P0, c.Pbar, c.Lambda = est[0], est[1], math.Exp(est[2])
	g := [3]float64{1, 1, c.Lambda}
	for a := range 3 {
		for b := range 3 {
			var v float64
			for i := range t.x {
				v += hs[a][i] * hs[b][i] * t.cov[i][a][b]
			}
			c.Cov[a][b] = v * math.Sqrt(t.inf[a]*t.inf[b]) * g[a] * g[b]
		}
	}
	c.P0SE, c.PbarSE, c.LambdaSE = math.Sqrt(c.Cov[0][0]), math.Sqrt(c.Cov[1][1]), math.Sqrt(c.Cov[2][2])
	c.Trend = Interpolated
	if n < t.Sizes[0] || n > t.Sizes[len(t.Sizes)-1] {
		c.Trend = Extrapolated
	}
	return c
}
