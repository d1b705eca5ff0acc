package report

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

// TestScoreHist checks the one-pass histogram against counting each score into the final bins,
// for scores of either sign and in any order.
func TestScoreHist(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, tc := range []struct {
		name      string
		zeroApart bool
		gen       func() float64
	}{
		{"small first, then larger", true, func() float64 { return math.Exp(rng.Float64()*20 - 10) }},
		{"uniform", true, func() float64 { return rng.Float64() * 1000 }},
		{"with zeros", true, func() float64 { return max(0, rng.NormFloat64()) }},
		{"one value", true, func() float64 { return 0.75 }},
		{"either sign", false, func() float64 { return rng.NormFloat64() * 2 }},
		{"either sign, zeros binned", false, func() float64 { return max(0, rng.NormFloat64()) - 0.5 }},
		{"all negative", false, func() float64 { return -4 - rng.ExpFloat64() }},
		{"far from zero", false, func() float64 { return 1e6 + rng.Float64() }},
		{"narrow, then wide", false, func() float64 { return math.Ldexp(rng.NormFloat64(), rng.IntN(40)-20) }},
		{"one negative value", false, func() float64 { return -2.5 }},
		{"only zero", false, func() float64 { return 0 }},
		{"two values", false, func() float64 { return float64(rng.IntN(2)) * 3 }},
		{"extremes", false, func() float64 { return math.MaxFloat64 * float64(rng.IntN(3)-1) }},
		{"tiny", false, func() float64 { return math.SmallestNonzeroFloat64 * float64(rng.IntN(1000)-500) }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			h := scoreHist{zeroApart: tc.zeroApart}
			var vals []float64
			for i := 0; i < 5000; i++ {
				v := tc.gen()
				vals = append(vals, v)
				h.add(v, i%3 == 0)
			}
			h.finish()
			n := h.used()
			if n < 1 || n > histBins {
				t.Fatalf("%d bins in use", n)
			}
			var kept, dropped [histBins]int64
			var zero int64
			lo, hi := math.Inf(1), math.Inf(-1)
			for i, v := range vals {
				lo, hi = min(lo, v), max(hi, v)
				if tc.zeroApart && v == 0 {
					zero++
					continue
				}
				b := int(math.Floor(v/h.width) - h.lo)
				if b < 0 || b >= n {
					t.Fatalf("%v lies outside the bins [%v, %v) (width %v)", v, h.edge(0), h.edge(n), h.width)
				}
				if v < h.edge(b) || v >= h.edge(b+1) {
					t.Fatalf("%v is counted in bin [%v, %v)", v, h.edge(b), h.edge(b+1))
				}
				if i%3 == 0 {
					kept[b]++
				} else {
					dropped[b]++
				}
			}
			if kept != h.kept || dropped != h.dropped || zero != h.zero {
				t.Errorf("bins differ from a direct count:\n got %v %v %d\nwant %v %v %d", h.kept, h.dropped, h.zero, kept, dropped, zero)
			}
			if h.rows != int64(len(vals)) || (lo <= hi && (h.min != lo || h.max != hi)) {
				t.Errorf("%d rows from %v to %v, want %d from %v to %v", h.rows, h.min, h.max, len(vals), lo, hi)
			}
			if math.Exp2(math.Round(math.Log2(h.width))) != h.width && h.width != math.Ldexp(1, 1023) {
				t.Errorf("width %v is not a power of two", h.width)
			}
			// The last bin holds a score, and so does the first, unless the bins start at zero.
			if h.kept[n-1]+h.dropped[n-1] == 0 || (!tc.zeroApart && h.kept[0]+h.dropped[0] == 0) {
				t.Errorf("empty bins at an end: %v %v", h.kept[:n], h.dropped[:n])
			}
			if tc.zeroApart && h.lo != 0 {
				t.Errorf("lexical bins start at %v, not at zero", h.edge(0))
			}
			// Scores that spread are not crammed into a few bins.
			if lo < hi && !math.IsInf(hi-lo, 0) && (hi-max(lo, h.edge(0)))/h.width < histBins/4-1 {
				t.Errorf("scores %v to %v in bins of width %v: too few bins", lo, hi, h.width)
			}
		})
	}
}

// oldHist is the histogram as the page drew it before it took scores of either sign: positive
// scores only, bins from zero. Lexical runs must get the same bins as before.
type oldHist struct {
	width         float64
	kept, dropped [histBins]int64
	zero          int64
}

func (h *oldHist) add(s float64, kept bool) {
	if s <= 0 {
		h.zero++
		return
	}
	if h.width == 0 {
		h.width = math.Exp2(math.Ceil(math.Log2(2 * s / histBins)))
	}
	for s >= h.width*histBins {
		for i := 0; i < histBins/2; i++ {
			h.kept[i] = h.kept[2*i] + h.kept[2*i+1]
			h.dropped[i] = h.dropped[2*i] + h.dropped[2*i+1]
		}
		for i := histBins / 2; i < histBins; i++ {
			h.kept[i], h.dropped[i] = 0, 0
		}
		h.width *= 2
	}
	i := int(s / h.width)
	if kept {
		h.kept[i]++
	} else {
		h.dropped[i]++
	}
}

func TestLexicalHistAsBefore(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for run := 0; run < 50; run++ {
		scale := math.Exp(rng.Float64()*20 - 10)
		h, old := scoreHist{zeroApart: true}, oldHist{}
		for i := 0; i < 2000; i++ {
			v := max(0, rng.NormFloat64()+0.5) * scale
			kept := rng.IntN(4) == 0
			h.add(v, kept)
			old.add(v, kept)
		}
		if h.width != old.width || h.kept != old.kept || h.dropped != old.dropped || h.zero != old.zero {
			t.Fatalf("bins differ from before:\n got %v %v %v %d\nwant %v %v %v %d", h.width, h.kept, h.dropped, h.zero, old.width, old.kept, old.dropped, old.zero)
		}
	}
}

func TestUnscoredReasons(t *testing.T) {
	var h scoreHist
	for i := 0; i < 3; i++ {
		h.unscored("prefilter")
	}
	h.unscored("")
	for i := 0; i < 40; i++ {
		h.unscored(fmt.Sprint("r", i))
	}
	if len(h.none) != maxReasons {
		t.Fatalf("%d reasons kept, want at most %d", len(h.none), maxReasons)
	}
	var sum int64
	for _, r := range h.none {
		sum += r.Rows
	}
	if sum != 44 || h.none[0] != (reasonCount{"prefilter", 3}) || h.none[1].Reason != "none given" ||
		h.none[maxReasons-1].Reason != "other" || h.none[maxReasons-1].Rows != 40-(maxReasons-3) {
		t.Errorf("reasons %v", h.none)
	}
}

func TestStepLabel(t *testing.T) {
	for _, tc := range []struct {
		v, step float64
		want    string
	}{
		{0.1 + 0.2, 0.1, "0.3"}, {5.551115123125783e-17, 0.2, "0.0"}, {-0.0, 1, "0"}, {-4, 2, "-4"},
		{1200, 200, "1200"}, {0.015, 0.005, "0.015"}, {2.5e-7, 5e-8, "0.00000025"},
	} {
		if got := stepLabel(tc.v, tc.step); got != tc.want {
			t.Errorf("stepLabel(%v, %v) = %q, want %q", tc.v, tc.step, got, tc.want)
		}
	}
}
