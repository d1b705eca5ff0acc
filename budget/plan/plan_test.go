package plan

import (
	"errors"
	"math"
	"testing"

	"sluice/budget"
)

func testCurves() []Curve {
	cov := [3][3]float64{{1e-5, 0, 0}, {0, 1e-5, 0}, {0, 0, 1e-20}}
	return []Curve{
		{Method: "bm25", Cost: CostLexical, TrainedParams: 1e9, P0: 0.30, Pbar: 0.50, Lambda: 4e-9, Cov: cov},
		{Method: "ppl", Cost: CostForward, Passes: 1, SelectorParams: 125e6, TrainedParams: 1e9, P0: 0.30, Pbar: 0.55, Lambda: 2e-9, Cov: cov},
		{Method: "grad", Cost: CostForwardBackward, Passes: 3, SelectorParams: 1e9, TrainedParams: 1e9, P0: 0.30, Pbar: 0.62, Lambda: 1e-9, Cov: cov},
	}
}

// The ledger's identity (budget package): a forward+backward selector as
// large as the trained model costs one training epoch over the pool,
// TrainFLOPs(N, pool, 1), so no smaller budget affords it any rows.
func TestCostIdentity(t *testing.T) {
	const n, pool = 1e9, 5e9
	c := testCurves()[2]
	epoch := budget.TrainFLOPs(n, pool, 1)
	if got := SelectionFLOPs(&c, pool); got != epoch {
		t.Fatalf("selection %v, want exactly %v", got, epoch)
	}
	cfg := Config{PoolTokens: pool, TrainParams: n, Epochs: 2}
	for _, f := range []float64{epoch / 10, math.Nextafter(epoch, 0), epoch} {
		if o := At(&c, f, cfg); o.Affordable || o.Tokens != 0 {
			t.Errorf("budget %v below one epoch %v: affordable %v, %v tokens", f, epoch, o.Affordable, o.Tokens)
		}
	}
	if o := At(&c, 1.5*epoch, cfg); !o.Affordable || o.Tokens != 0.5*epoch/budget.TrainFLOPs(n, 1, 2) {
		t.Errorf("above one epoch: %+v", o)
	}
	p, err := Make([]Curve{c}, Config{PoolTokens: pool, TrainParams: n, Lo: epoch / 100, Hi: math.Nextafter(epoch, 0), Points: 9})
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range p.Steps {
		if s.Best != "" {
			t.Errorf("budget %v: best %q, want none affordable", s.Budget, s.Best)
		}
	}
}

func TestMonotonic(t *testing.T) {
	p, err := Make(testCurves(), Config{PoolTokens: 5e9, TrainParams: 1e9, Lo: 1e17, Hi: 1e21, Points: 200})
	if err != nil {
		t.Fatal(err)
	}
	prev := math.Inf(-1)
	for _, s := range p.Steps {
		if s.Best == "" {
			continue
		}
		if s.BestP < prev {
			t.Errorf("budget %v: best P %v fell below %v", s.Budget, s.BestP, prev)
		}
		prev = s.BestP
	}
	if len(p.Changes) == 0 {
		t.Fatal("no change of best method")
	}
	for _, ch := range p.Changes {
		below := p.StepAt(ch.Budget * (1 - 1e-9)).Best
		above := p.StepAt(ch.Budget * (1 + 1e-9)).Best
		if below != ch.From || above != ch.To || ch.From == ch.To {
			t.Errorf("change %+v: best just below %q, just above %q", ch, below, above)
		}
	}
	if s := p.StepAt(p.Steps[3].Budget); s.Best != p.Steps[3].Best || s.BestP != p.Steps[3].BestP {
		t.Errorf("StepAt on a grid budget: %+v, want %+v", s, p.Steps[3])
	}
	if last := p.Steps[len(p.Steps)-1]; last.Best != "grad" {
		t.Errorf("largest budget: best %q, want grad", last.Best)
	}
}

func TestMakeRefuses(t *testing.T) {
	tests := []struct {
		name string
		cfg  Config
	}{
		{"no pool", Config{TrainParams: 1e9}},
		{"other model", Config{PoolTokens: 1e9, TrainParams: 7e9}},
		{"reversed", Config{PoolTokens: 1e9, TrainParams: 1e9, Lo: 1e20, Hi: 1e19}},
		{"one point", Config{PoolTokens: 1e9, TrainParams: 1e9, Points: 1}},
		{"negative epochs", Config{PoolTokens: 1e9, TrainParams: 1e9, Epochs: -1}},
	}
	for _, tt := range tests {
		if _, err := Make(testCurves(), tt.cfg); !errors.Is(err, ErrBadConfig) {
			t.Errorf("%s: err = %v, want ErrBadConfig", tt.name, err)
		}
	}
}

// At the ratio OvertakeRatio reports, the method's prediction equals the
// cheapest method's: a selector of N/ratio parameters makes them tie.
func TestOvertakeRatio(t *testing.T) {
	cs := testCurves()
	cfg := Config{PoolTokens: 5e9, TrainParams: 1e9, Epochs: 1}
	for _, f := range []float64{1e19, 5e19, 2e20} {
		for _, c := range cs[1:] {
			r, ok := OvertakeRatio(&c, &cs[0], f, cfg)
			if !ok {
				t.Errorf("%s at %g: no ratio", c.Method, f)
				continue
			}
			d := c
			d.SelectorParams = cfg.TrainParams / r
			got, want := At(&d, f, cfg).P, At(&cs[0], f, cfg).P
			if math.Abs(got-want) > 1e-9 {
				t.Errorf("%s at %g: ratio %g gives P %v, want the cheapest's %v", c.Method, f, r, got, want)
			}
		}
	}
	// A curve that saturates below the cheapest never catches it.
	low := cs[2]
	low.Pbar = 0.45
	if r, ok := OvertakeRatio(&low, &cs[0], 1e20, cfg); ok {
		t.Errorf("low curve: ratio %g, want none", r)
	}
	if _, ok := OvertakeRatio(&cs[0], &cs[0], 1e20, cfg); ok {
		t.Error("lexical method: want no ratio")
	}
}

func BenchmarkMake(b *testing.B) {
	cfg := Config{PoolTokens: 5e9, TrainParams: 1e9, Lo: 1e17, Hi: 1e21, Points: 100}
	for b.Loop() {
		if _, err := Make(testCurves(), cfg); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(cfg.Points*b.N)/b.Elapsed().Seconds(), "budgets/s")
}
