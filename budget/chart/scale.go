package chart

import "math"

// A Scale maps data values along one axis onto pixels. The zero Scale maps
// everything to NaN; make one with Linear or Log10 and place it with Onto.
type Scale struct {
	lo, hi float64 // the domain, as log10 of the data on a log scale
	p0, p1 float64 // the pixels lo and hi land on
	log    bool
	count  bool // log10(1+v): see LogCount
}

// Linear is the scale of data lo..hi, placed on pixels 0..1 until Onto
// places it.
func Linear(lo, hi float64) Scale { return Scale{lo: lo, hi: hi, p1: 1} }

// Log10 is the scale of data lo..hi, both above zero, by their logarithms, so
// that every power of ten gets the same width: budgets and token counts span
// several of them.
func Log10(lo, hi float64) Scale {
	return Scale{lo: math.Log10(lo), hi: math.Log10(hi), p1: 1, log: true}
}

// LogCount is the scale of counts 0..hi by log10(1+v). Zero keeps its place at the start, which a
// log scale has not, and past the first few every power of ten gets about the same length, so a
// count of one stays visible beside one of thousands, as it would not on a linear scale.
func LogCount(hi float64) Scale {
	return Scale{hi: log1p10(hi), p1: 1, count: true}
}

// log1p10 is log10(1+v), precise for small v.
func log1p10(v float64) float64 { return math.Log1p(v) / math.Ln10 }

// Onto places s on pixels p0 (where the domain starts) to p1 (where it ends).
// A y axis gives p0 > p1, since SVG counts y downward and larger values go up.
func (s Scale) Onto(p0, p1 float64) Scale {
	s.p0, s.p1 = p0, p1
	return s
}

// At is the pixel of data value v.
func (s Scale) At(v float64) float64 {
	switch {
	case s.log:
		v = math.Log10(v)
	case s.count:
		v = log1p10(v)
	}
	return s.at(v)
}

// at places a value already in the domain's units, so decade ticks land
// where their exponent says rather than where log10(10^d) rounds to.
func (s Scale) at(v float64) float64 {
	return s.p0 + (v-s.lo)/(s.hi-s.lo)*(s.p1-s.p0)
}

// A Tick is a labelled place on an axis.
type Tick struct {
	V   float64 // the data value
	Pos float64 // its pixel
}

// Ticks are the places to grid and label: on a linear scale about n of them at
// a step from TickStep, on a log scale every power of ten inside the domain, on
// a log-count scale zero and every power of ten up to its end (with 2 and 5
// times them while that is below 100, where decades are few and far apart).
// A domain that is empty, reversed or not finite has none.
func (s Scale) Ticks(n int) []Tick {
	if !finite(s.lo) || !finite(s.hi) || !(s.hi > s.lo) {
		return nil
	}
	var ts []Tick
	if s.count {
		return s.countTicks()
	}
	if s.log {
		for d := math.Ceil(s.lo); d <= s.hi; d++ {
			ts = append(ts, Tick{V: math.Pow10(int(d)), Pos: s.at(d)})
		}
		return ts
	}
	step := TickStep(s.hi-s.lo, n)
	if !finite(step) || !(step > 0) {
		return nil
	}
	// The step is added rather than multiplied so tick values are the
	// same ones the charts have always printed; the slack of step/1e6 keeps
	// a last tick that rounding nudged past hi.
	for v := math.Ceil(s.lo/step) * step; v <= s.hi+step/1e6; v += step {
		ts = append(ts, Tick{V: v, Pos: s.at(v)})
		if v+step == v { // a step below the precision of v would never end
			break
		}
	}
	return ts
}

// countTicks are the ticks of a LogCount scale. Its domain is log10(1+v), so
// the ticks' values are whole counts and their places are computed from them.
func (s Scale) countTicks() []Tick {
	ts := []Tick{{V: 0, Pos: s.at(0)}}
	mults := []float64{1}
	if s.hi < log1p10(100) {
		mults = []float64{1, 2, 5}
	}
	for p := 1.0; log1p10(p) <= s.hi && finite(p); p *= 10 {
		for _, m := range mults {
			if v := m * p; log1p10(v) <= s.hi {
				ts = append(ts, Tick{V: v, Pos: s.at(log1p10(v))})
			}
		}
	}
	return ts
}

// TickStep is the step of 1, 2 or 5 times a power of ten that gives about n
// ticks over span (n below 1 counts as 1): round steps keep tick labels short.
func TickStep(span float64, n int) float64 {
	return roundUp(span / float64(max(n, 1)))
}

// NiceStep rounds v up to 1, 2 or 5 times a power of ten, and is at least 1:
// for counts, where a step below one would label fractions of a row.
func NiceStep(v float64) float64 {
	if !(v > 1) {
		return 1
	}
	return roundUp(v)
}

// roundUp is the least of 1, 2, 5 or 10 times the power of ten at or below v
// that is at least v. The 10 catches a logarithm that rounded just under a
// whole power.
func roundUp(v float64) float64 {
	p := math.Pow(10, math.Floor(math.Log10(v)))
	for _, m := range []float64{1, 2, 5} {
		if m*p >= v {
			return m * p
		}
	}
	return 10 * p
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
