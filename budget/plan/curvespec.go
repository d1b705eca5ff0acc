package plan

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"sluice/budget"
)

// ErrBadCurve reports a curve spec that ParseCurve cannot read.
var ErrBadCurve = errors.New("bad curve spec")

// ParseCurve builds an exact curve, with no uncertainty, from
// METHOD=COST,SELECTOR,PBAR,LAMBDA: a cost class or number of passes, the
// selector's parameters (0 for lexical), the plateau and the rate per 1B
// tokens. It is how to plan for a method no pilot has tried, such as a smaller
// selector; p0 is the base model's score and trainedParams its size.
func ParseCurve(spec string, p0, trainedParams float64) (Curve, error) {
	name, rest, ok := strings.Cut(spec, "=")
	f := strings.Split(rest, ",")
	if !ok || strings.TrimSpace(name) == "" || len(f) != 4 {
		return Curve{}, fmt.Errorf("want METHOD=COST,SELECTOR,PBAR,LAMBDA: %w", ErrBadCurve)
	}
	c := Curve{Method: strings.TrimSpace(name), Cost: strings.TrimSpace(f[0]), TrainedParams: trainedParams, P0: p0}
	var err error
	if c.Passes, err = ParseCost(f[0]); err != nil {
		return c, err
	}
	if t := strings.TrimSpace(f[1]); t != "0" {
		if c.SelectorParams, err = budget.ParseCount(t); err != nil {
			return c, fmt.Errorf("SELECTOR: %w", err)
		}
	}
	if c.Passes > 0 && c.SelectorParams == 0 {
		return c, fmt.Errorf("selector size 0 for a model-based cost: %w", ErrBadCurve)
	}
	if c.Pbar, err = strconv.ParseFloat(strings.TrimSpace(f[2]), 64); err != nil || math.IsInf(c.Pbar, 0) || math.IsNaN(c.Pbar) {
		return c, fmt.Errorf("PBAR %q: want a number: %w", f[2], ErrBadCurve)
	}
	l, err := strconv.ParseFloat(strings.TrimSpace(f[3]), 64)
	if err != nil || !(l > 0) || math.IsInf(l, 0) {
		return c, fmt.Errorf("LAMBDA %q: want a rate per 1B tokens greater than zero: %w", f[3], ErrBadCurve)
	}
	c.Lambda = l / 1e9
	return c, nil
}

// ParseCurves reads curves given as ParseCurve's specs, all with the base score p0, a number.
func ParseCurves(specs []string, p0 string, trainParams float64) ([]Curve, error) {
	base, err := strconv.ParseFloat(p0, 64)
	if err != nil || math.IsNaN(base) || math.IsInf(base, 0) {
		return nil, fmt.Errorf("simulated curves need the base model's score P0 as a finite number, not %q", p0)
	}
	var curves []Curve
	for _, s := range specs {
		c, err := ParseCurve(s, base, trainParams)
		if err != nil {
			return nil, fmt.Errorf("%q: %w", s, err)
		}
		curves = append(curves, c)
	}
	return curves, nil
}

// ParseBudgets reads a budget grid's bounds, LO:HI in FLOPs as budget.ParseFLOPs reads them, HI
// above LO.
func ParseBudgets(s string) (lo, hi float64, err error) {
	l, h, ok := strings.Cut(s, ":")
	if !ok {
		return 0, 0, fmt.Errorf("%q: want LO:HI", s)
	}
	if lo, err = budget.ParseFLOPs(l); err != nil {
		return 0, 0, err
	}
	if hi, err = budget.ParseFLOPs(h); err != nil {
		return 0, 0, err
	}
	if hi <= lo {
		return 0, 0, fmt.Errorf("%q: HI must be greater than LO", s)
	}
	return lo, hi, nil
}
