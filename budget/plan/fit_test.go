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

func curvePilots(method string, n float64, tokens []float64, p0, pbar, lam, noise float64, rng *rand.Rand) []Pilot {
	var ps []Pilot
	for _, k := range tokens {
		y := pbar - (pbar-p0)*math.Exp(-lam*k)
		if rng != nil {
			y += noise * rng.NormFloat64()
		}
		ps = append(ps, Pilot{Method: method, Cost: CostLexical, TrainedParams: n, Tokens: k, Metric: y})
	}
	return ps
}

func relClose(t *testing.T, what string, got, want, tol float64) {
	t.Helper()
	if math.Abs(got-want) > tol*math.Abs(want) {
		t.Errorf("%s = %.12g, want %.12g (relative error %.2g > %g)", what, got, want, math.Abs(got-want)/math.Abs(want), tol)
	}
}

// The fixture's parameters and standard errors are scipy.optimize.curve_fit's
// (scipy 1.10.1, Debian python3-scipy), from testdata/curve_fit_ref.py.
func TestFitMatchesScipyCurveFit(t *testing.T) {
	b, err := os.ReadFile("testdata/curve_fit_ref.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Tokens, Metric                []float64
		P0, Pbar, Lambda              float64 `json:"-"`
		RefP0                         float64 `json:"p0"`
		RefPbar                       float64 `json:"pbar"`
		RefLambda                     float64 `json:"lambda_per_1e9"`
		RefP0SE, RefPbarSE, RefLambSE float64
	}
	var raw map[string]json.RawMessage
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	json.Unmarshal(b, &raw)
	json.Unmarshal(raw["p0_se"], &ref.RefP0SE)
	json.Unmarshal(raw["pbar_se"], &ref.RefPbarSE)
	json.Unmarshal(raw["lambda_per_1e9_se"], &ref.RefLambSE)
	var ps []Pilot
	for i, k := range ref.Tokens {
		ps = append(ps, Pilot{Method: "m", Cost: CostLexical, TrainedParams: 1e9, Tokens: k, Metric: ref.Metric[i]})
	}
	cs, err := Fit(ps, FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	c := cs[0]
	const tol = 1e-6
	relClose(t, "P0", c.P0, ref.RefP0, tol)
	relClose(t, "Pbar", c.Pbar, ref.RefPbar, tol)
	relClose(t, "lambda", c.Lambda*1e9, ref.RefLambda, tol)
	relClose(t, "P0 SE", c.P0SE, ref.RefP0SE, tol)
	relClose(t, "Pbar SE", c.PbarSE, ref.RefPbarSE, tol)
	relClose(t, "lambda SE", c.LambdaSE*1e9, ref.RefLambSE, tol)
	if c.DOF != len(ps)-3 || !(c.R2 > 0.9 && c.R2 <= 1) || len(c.Residuals) != len(ps) {
		t.Errorf("dof %d, R² %v, %d residuals", c.DOF, c.R2, len(c.Residuals))
	}
}

// Over many seeds the ±2 SE intervals should cover the true parameters
// about 95 % of the time; with 17 residual degrees of freedom Student's t
// gives P(|t| < 2) ≈ 0.94 (textbook t table, recalled from memory), so 88–99 % is accepted.
func TestFitRecoversTruthCoverage(t *testing.T) {
	const seeds = 400
	truth := [3]float64{0.30, 0.62, 3e-9}
	var tokens []float64
	for i := range 20 {
		tokens = append(tokens, 1e8*float64(i)) // 0 to 1.9e9, past the bend at 1/lambda
	}
	var hit [3]int
	for s := range seeds {
		rng := rand.New(rand.NewPCG(uint64(s), 7))
		cs, err := Fit(curvePilots("m", 1e9, tokens, truth[0], truth[1], truth[2], 0.01, rng), FitOptions{})
		if err != nil {
			t.Fatalf("seed %d: %v", s, err)
		}
		c := cs[0]
		got := [3]float64{c.P0, c.Pbar, c.Lambda}
		se := [3]float64{c.P0SE, c.PbarSE, c.LambdaSE}
		for i := range 3 {
			if math.Abs(got[i]-truth[i]) <= 2*se[i] {
				hit[i]++
			}
		}
	}
	for i, name := range []string{"P0", "Pbar", "lambda"} {
		f := float64(hit[i]) / seeds
		t.Logf("%s covered %.1f%%", name, 100*f)
		if f < 0.88 || f > 0.99 {
			t.Errorf("%s: ±2 SE covered the truth in %.1f%% of %d seeds, want 88–99%%", name, 100*f, seeds)
		}
	}
}

func TestFitSharesP0(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	tok := []float64{0, 1e8, 3e8, 6e8, 1e9, 2e9}
	ps := append(curvePilots("a", 1e9, tok, 0.3, 0.6, 2e-9, 0.005, rng), curvePilots("b", 1e9, tok[1:], 0.3, 0.5, 5e-9, 0.005, rng)...)
	cs, err := Fit(ps, FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if cs[0].P0 != cs[1].P0 || cs[0].DOF != len(ps)-5 {
		t.Errorf("shared: P0 %v and %v, dof %d", cs[0].P0, cs[1].P0, cs[0].DOF)
	}
	cs, err = Fit(ps, FitOptions{FreeP0: true})
	if err != nil {
		t.Fatal(err)
	}
	if cs[0].P0 == cs[1].P0 || cs[0].DOF != len(ps)-6 {
		t.Errorf("free: P0 %v and %v, dof %d", cs[0].P0, cs[1].P0, cs[0].DOF)
	}
}

func TestFitRefuses(t *testing.T) {
	tok := []float64{1e8, 2e8, 4e8, 8e8}
	tests := []struct {
		name   string
		pilots []Pilot
		want   error
		advice string
	}{
		{"two sizes", curvePilots("m", 1e9, []float64{1e8, 1e8, 2e8, 2e8}, 0.3, 0.6, 2e-9, 0, nil), ErrTooFewPoints, "at least 3"},
		{"no more points than parameters", curvePilots("m", 1e9, tok[:3], 0.3, 0.6, 2e-9, 0, nil), ErrTooFewPoints, "add a pilot"},
		{"no level-off", curvePilots("m", 1e9, tok, 0.3, 0.6, -1e-9, 0, nil), ErrNoConvergence, "larger token counts"},
		{"none", nil, ErrTooFewPoints, ""},
		{"barely bends", curvePilots("m", 1e9, []float64{1e8, 1.5e8, 2e8, 2.5e8, 3e8}, 0.3, 0.9, 1e-10, 0.004, rand.New(rand.NewPCG(5, 5))), ErrNoConvergence, "larger token counts"},
		{"level from the start", curvePilots("m", 1e9, []float64{0, 2e8, 4e8, 8e8, 1.6e9}, 0.3, 0.6, 1e-7, 0.004, rand.New(rand.NewPCG(6, 6))), ErrNoConvergence, "smaller token counts"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := Fit(tt.pilots, FitOptions{})
			if !errors.Is(err, tt.want) || !strings.Contains(err.Error(), tt.advice) {
				t.Errorf("err = %v, want %v saying %q", err, tt.want, tt.advice)
			}
		})
	}
}

func BenchmarkFit(b *testing.B) {
	rng := rand.New(rand.NewPCG(3, 4))
	tok := []float64{0, 1e8, 2e8, 4e8, 8e8, 1.6e9}
	var ps []Pilot
	for _, m := range []string{"a", "b", "c"} {
		ps = append(ps, curvePilots(m, 1e9, tok, 0.3, 0.6, 2e-9, 0.01, rng)...)
	}
	for b.Loop() {
		if _, err := Fit(ps, FitOptions{}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(len(ps)*b.N)/b.Elapsed().Seconds(), "points/s")
}

// Pilots on two base models get one P0 each, shared by that model's methods.
func TestFitP0PerBaseModel(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 9))
	tok := []float64{0, 1e8, 3e8, 6e8, 1e9, 2e9}
	var ps []Pilot
	ps = append(ps, curvePilots("a", 1e9, tok, 0.30, 0.60, 2e-9, 0.004, rng)...)
	ps = append(ps, curvePilots("b", 1e9, tok, 0.30, 0.55, 4e-9, 0.004, rng)...)
	ps = append(ps, curvePilots("a", 7e9, tok, 0.45, 0.70, 2e-9, 0.004, rng)...)
	ps = append(ps, curvePilots("b", 7e9, tok, 0.45, 0.66, 4e-9, 0.004, rng)...)
	cs, err := Fit(ps, FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(cs) != 4 || cs[0].P0 != cs[1].P0 || cs[2].P0 != cs[3].P0 || cs[0].P0 == cs[2].P0 || cs[0].DOF != len(ps)-10 {
		t.Fatalf("curves %d, P0s %v %v %v %v, dof %d", len(cs), cs[0].P0, cs[1].P0, cs[2].P0, cs[3].P0, cs[0].DOF)
	}
	if math.Abs(cs[0].P0-0.30) > 0.02 || math.Abs(cs[2].P0-0.45) > 0.02 {
		t.Errorf("P0s %v and %v, want about 0.30 and 0.45", cs[0].P0, cs[2].P0)
	}
}
