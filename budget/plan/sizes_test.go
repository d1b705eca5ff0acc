package plan

import (
	"encoding/json"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"strings"
	"testing"
)

// The fixture's fits are scipy.optimize.curve_fit's (scipy 1.10.1, Debian python3-scipy): each size
// fitted alone, then each parameter's line across sizes, from testdata/trend_ref.py.
func TestTrendMatchesScipyCurveFit(t *testing.T) {
	b, err := os.ReadFile("testdata/trend_ref.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref map[string]json.RawMessage
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	num := func(k string) float64 {
		var v float64
		if err := json.Unmarshal(ref[k], &v); err != nil {
			t.Fatalf("%s: %v", k, err)
		}
		return v
	}
	var tokens, sizes []float64
	var metric [][]float64
	json.Unmarshal(ref["tokens"], &tokens)
	json.Unmarshal(ref["sizes"], &sizes)
	json.Unmarshal(ref["metric"], &metric)
	// Each size is fitted alone, as scipy did (a joint fit pools the noise of all sizes).
	var cs []Curve
	for i, n := range sizes {
		var ps []Pilot
		for j, k := range tokens {
			ps = append(ps, Pilot{Method: "m", Cost: CostLexical, TrainedParams: n, Tokens: k, Metric: metric[i][j]})
		}
		c, err := Fit(ps, FitOptions{})
		if err != nil {
			t.Fatal(err)
		}
		cs = append(cs, c...)
	}
	trends, err := Trends(cs)
	if err != nil || len(trends) != 1 {
		t.Fatalf("%d trends, %v", len(trends), err)
	}
	tr := trends[0]
	const tol = 1e-5
	relClose(t, "P0 slope", tr.P0Slope, num("p0_slope"), tol)
	relClose(t, "P0 slope SE", tr.P0SlopeSE, num("p0_slope_se"), tol)
	relClose(t, "Pbar slope", tr.PbarSlope, num("pbar_slope"), tol)
	relClose(t, "Pbar slope SE", tr.PbarSlopeSE, num("pbar_slope_se"), tol)
	relClose(t, "lambda exponent", tr.LambdaExp, num("ln_lambda_per_1e9_slope"), tol)
	relClose(t, "lambda exponent SE", tr.LambdaExpSE, num("ln_lambda_per_1e9_slope_se"), tol)
	c := tr.At(7e9, cs[0])
	relClose(t, "P0 at 7B", c.P0, num("p0_at_7b"), tol)
	relClose(t, "P0 SE at 7B", c.P0SE, num("p0_at_7b_se"), tol)
	relClose(t, "Pbar at 7B", c.Pbar, num("pbar_at_7b"), tol)
	relClose(t, "Pbar SE at 7B", c.PbarSE, num("pbar_at_7b_se"), tol)
	relClose(t, "ln lambda at 7B", math.Log(c.Lambda*1e9), num("ln_lambda_per_1e9_at_7b"), 1e-4)
	relClose(t, "ln lambda SE at 7B", c.LambdaSE/c.Lambda, num("ln_lambda_per_1e9_at_7b_se"), tol)
	if c.Trend != Extrapolated || len(c.FromSizes) != 3 {
		t.Errorf("trend %q from %v, want extrapolated from 3 sizes", c.Trend, c.FromSizes)
	}
	if mid := tr.At(500e6, cs[0]); mid.Trend != Interpolated {
		t.Errorf("500M between the sizes: %q", mid.Trend)
	}
}

// Pilots drawn from known trends across sizes, fitted size by size and then across sizes: the
// ±2 SE intervals of the parameters carried to a size 5x past the largest should cover the truth
// about 95 % of the time. Each size's errors come from 17 residual degrees of freedom, for which
// Student's t gives P(|t| < 2) ≈ 0.94 (textbook t table, recalled from memory), so 88–99 % is
// accepted.
func TestTrendCoverage(t *testing.T) {
	const seeds = 300
	sizes := []float64{125e6, 350e6, 1.3e9}
	truth := func(n float64) [3]float64 {
		x := math.Log(n / 1e8)
		return [3]float64{0.20 + 0.03*x, 0.45 + 0.04*x, 2e-9 * math.Pow(n/1e9, -0.3)}
	}
	var tokens []float64
	for i := range 20 {
		tokens = append(tokens, 1e8*float64(i))
	}
	const target = 7e9
	want := truth(target)
	var hit [3]int
	for s := range seeds {
		rng := rand.New(rand.NewPCG(uint64(s), 11))
		var ps []Pilot
		for _, n := range sizes {
			v := truth(n)
			ps = append(ps, curvePilots("m", n, tokens, v[0], v[1], v[2], 0.008, rng)...)
		}
		cs, err := Fit(ps, FitOptions{})
		if err != nil {
			t.Fatalf("seed %d: %v", s, err)
		}
		trends, err := Trends(cs)
		if err != nil {
			t.Fatal(err)
		}
		c := trends[0].At(target, cs[0])
		got := [3]float64{c.P0, c.Pbar, c.Lambda}
		se := [3]float64{c.P0SE, c.PbarSE, c.LambdaSE}
		for i := range 3 {
			if math.Abs(got[i]-want[i]) <= 2*se[i] {
				hit[i]++
			}
		}
	}
	for i, name := range []string{"P0", "Pbar", "lambda"} {
		f := float64(hit[i]) / seeds
		t.Logf("%s at 7B covered %.1f%%", name, 100*f)
		if f < 0.88 || f > 0.99 {
			t.Errorf("%s at 7B: ±2 SE covered the truth in %.1f%% of %d seeds, want 88–99%%", name, 100*f, seeds)
		}
	}
}

// A plan for a size without pilots uses the trend of every method with pilots on two or more
// sizes, marks it, and, when no method has, names the sizes the pilots have.
func TestPlanAcrossSizes(t *testing.T) {
	var tokens []float64
	for i := range 8 {
		tokens = append(tokens, 2.5e8*float64(i))
	}
	rng := rand.New(rand.NewPCG(1, 2))
	var ps []Pilot
	for _, n := range []float64{125e6, 1e9} {
		x := math.Log(n / 1e8)
		ps = append(ps, curvePilots("bm25", n, tokens, 0.2+0.03*x, 0.45+0.04*x, 2e-9, 0.004, rng)...)
		g := curvePilots("ppl", n, tokens, 0.2+0.03*x, 0.5+0.05*x, 1e-9, 0.004, rng)
		for i := range g {
			g[i].Cost, g[i].Passes, g[i].SelectorParams = CostForward, 1, 125e6
		}
		ps = append(ps, g...)
	}
	cs, err := Fit(ps, FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	p, err := Make(cs, Config{PoolTokens: 5e9, TrainParams: 7e9})
	if err != nil {
		t.Fatal(err)
	}
	if len(p.Curves) != 2 || len(p.Trends) != 2 {
		t.Fatalf("%d curves, %d trends", len(p.Curves), len(p.Trends))
	}
	for _, c := range p.Curves {
		if c.Trend != Extrapolated || c.TrainedParams != 7e9 {
			t.Errorf("%s: trend %q at %g", c.Method, c.Trend, c.TrainedParams)
		}
	}
	if p, err := Make(cs, Config{PoolTokens: 5e9, TrainParams: 1e9}); err != nil || p.Curves[0].Trend != FromPilots {
		t.Errorf("1B has pilots: %v", err)
	}
	one := ps[:len(tokens)]
	cs1, err := Fit(one, FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	_, err = Make(cs1, Config{PoolTokens: 5e9, TrainParams: 7e9})
	if !errors.Is(err, ErrBadConfig) || !strings.Contains(err.Error(), "125M") {
		t.Errorf("one size only: %v, want an error naming 125M", err)
	}
}
