package plan

import (
	"errors"
	"strings"
	"testing"
)

func TestParseCurve(t *testing.T) {
	c, err := ParseCurve(" grad = forward+backward, 100M ,0.657,4.0", 0.421, 1e9)
	if err != nil {
		t.Fatal(err)
	}
	want := Curve{Method: "grad", Cost: "forward+backward", Passes: 3, SelectorParams: 1e8, TrainedParams: 1e9,
		P0: 0.421, Pbar: 0.657, Lambda: 4e-9}
	if c.Method != want.Method || c.Cost != want.Cost || c.Passes != want.Passes || c.SelectorParams != want.SelectorParams ||
		c.TrainedParams != want.TrainedParams || c.P0 != want.P0 || c.Pbar != want.Pbar || c.Lambda != want.Lambda {
		t.Errorf("got %+v, want %+v", c, want)
	}
	if p, se := c.Predict(0); p != 0.421 || se != 0 {
		t.Errorf("Predict(0) = %v ± %v: want P0 exactly", p, se)
	}
}

func TestParseCurveErrors(t *testing.T) {
	tests := []struct {
		spec string
		want error
	}{
		{"a=lexical,0,0.5", ErrBadCurve},
		{"=lexical,0,0.5,1", ErrBadCurve},
		{"lexical,0,0.5,1", ErrBadCurve},
		{"a=forward,0,0.5,1", ErrBadCurve},
		{"a=lexical,0,NaN,1", ErrBadCurve},
		{"a=lexical,0,0.5,0", ErrBadCurve},
		{"a=lexical,0,0.5,-1", ErrBadCurve},
		{"a=lexical,0,0.5,Inf", ErrBadCurve},
		{"a=sideways,0,0.5,1", ErrBadPilots},
	}
	for _, tt := range tests {
		if _, err := ParseCurve(tt.spec, 0.4, 1e9); !errors.Is(err, tt.want) {
			t.Errorf("ParseCurve(%q) = %v, want %v", tt.spec, err, tt.want)
		}
	}
	if _, err := ParseCurve("a=forward,lots,0.5,1", 0.4, 1e9); err == nil {
		t.Error("selector size lots accepted")
	}
}

func TestParseBudgets(t *testing.T) {
	for _, tc := range []struct {
		in     string
		lo, hi float64
		bad    string
	}{
		{in: "1e18:1e21", lo: 1e18, hi: 1e21},
		{in: "1e18", bad: "want LO:HI"},
		{in: "1e21:1e18", bad: "greater than LO"},
		{in: "x:1e18", bad: "x"},
	} {
		lo, hi, err := ParseBudgets(tc.in)
		if tc.bad != "" {
			if err == nil || !strings.Contains(err.Error(), tc.bad) {
				t.Errorf("%q: got %v, want an error saying %q", tc.in, err, tc.bad)
			}
			continue
		}
		if err != nil || lo != tc.lo || hi != tc.hi {
			t.Errorf("%q: got %v %v %v", tc.in, lo, hi, err)
		}
	}
}

func TestLambdaUnit(t *testing.T) {
	for _, tc := range []struct {
		lambda float64 // per token
		unit   string
	}{{4e-9, "1B"}, {9.99e-7, "1B"}, {2e-4, "1M"}, {0.5, "1k"}, {3, "1"}} {
		if _, u := lambdaUnit([]Curve{{Lambda: tc.lambda / 10}, {Lambda: tc.lambda}}); u != tc.unit {
			t.Errorf("λ %g a token: per %s tokens, want per %s", tc.lambda, u, tc.unit)
		}
	}
}
