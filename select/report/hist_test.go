package report

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestScoreHist checks the one-pass histogram against counting each score into the final bins.
func TestScoreHist(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, tc := range []struct {
		name string
		gen  func() float64
	}{
		{"small first, then larger", func() float64 { return math.Exp(rng.Float64()*20 - 10) }},
		{"uniform", func() float64 { return rng.Float64() * 1000 }},
		{"with zeros", func() float64 { return max(0, rng.NormFloat64()) }},
		{"one value", func() float64 { return 0.75 }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var h scoreHist
			var vals []float64
			for i := 0; i < 5000; i++ {
				v := tc.gen()
				vals = append(vals, v)
				h.add(v, i%3 == 0)
			}
			var kept, dropped [histBins]int64
			var zero int64
			for i, v := range vals {
				if v <= 0 {
					zero++
					continue
				}
				b := int(v / h.width)
				if b >= histBins {
					t.Fatalf("%v lies past the last bin (width %v)", v, h.width)
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
			if n := h.used(); n <= 0 || float64(n)*h.width <= h.max || float64(n-1)*h.width > h.max {
				t.Errorf("used %d bins of width %v for a maximum of %v", n, h.width, h.max)
			}
		})
	}
}
