package chart

import (
	"math"
	"testing"
)

func TestNiceStep(t *testing.T) {
	tests := []struct{ in, want float64 }{
		{-5, 1}, {0, 1}, {0.3, 1}, {1, 1}, {1.5, 2}, {2, 2}, {3, 5}, {5, 5}, {5.1, 10},
		{12, 20}, {50, 50}, {51, 100}, {1000, 1000}, {7e9, 1e10}, {math.NaN(), 1},
	}
	for _, tt := range tests {
		if got := NiceStep(tt.in); got != tt.want {
			t.Errorf("NiceStep(%v) = %v, want %v", tt.in, got, tt.want)
		}
	}
}

func TestTickStep(t *testing.T) {
	tests := []struct {
		span float64
		n    int
		want float64
	}{
		{1, 6, 0.2},       // 0.167 up to 0.2
		{0.3, 6, 0.05},    // exactly 5×10^-2
		{0.25, 6, 0.05},   // 0.0417 up to 0.05
		{1.2e9, 6, 2e8},   // token counts
		{100, 10, 10},     // a whole power
		{7, 0, 10},        // n below 1 counts as 1
		{0.013, 6, 0.005}, // below one, unlike NiceStep
	}
	for _, tt := range tests {
		if got := TickStep(tt.span, tt.n); math.Abs(got-tt.want) > 1e-12*tt.want {
			t.Errorf("TickStep(%v, %d) = %v, want %v", tt.span, tt.n, got, tt.want)
		}
	}
}

func TestScaleAt(t *testing.T) {
	tests := []struct {
		name string
		s    Scale
		v    float64
		want float64
	}{
		{"linear start", Linear(0, 10).Onto(60, 670), 0, 60},
		{"linear end", Linear(0, 10).Onto(60, 670), 10, 670},
		{"linear middle", Linear(0, 10).Onto(60, 670), 2.5, 212.5},
		{"linear outside", Linear(0, 10).Onto(0, 100), 12, 120},
		{"y grows up", Linear(-1, 1).Onto(256, 34), 0.5, 89.5},
		{"unplaced", Linear(2, 4), 3, 0.5},
		{"log decade", Log10(1e17, 1e20).Onto(0, 300), 1e18, 100},
		{"log between", Log10(1, 100).Onto(0, 200), 10, 100},
	}
	for _, tt := range tests {
		if got := tt.s.At(tt.v); math.Abs(got-tt.want) > 1e-9 {
			t.Errorf("%s: At(%v) = %v, want %v", tt.name, tt.v, got, tt.want)
		}
	}
}

func TestTicks(t *testing.T) {
	tests := []struct {
		name string
		s    Scale
		want []Tick
	}{
		{"linear", Linear(-0.1, 0.45).Onto(0, 110), []Tick{{-0.1, 0}, {0, 20}, {0.1, 40}, {0.2, 60}, {0.3, 80}, {0.4, 100}}},
		{"linear ends on ticks", Linear(0, 10).Onto(0, 10), []Tick{{0, 0}, {2, 2}, {4, 4}, {6, 6}, {8, 8}, {10, 10}}},
		{"empty", Linear(1, 1), nil},
		{"reversed", Linear(2, 1), nil},
		{"infinite", Linear(0, math.Inf(1)), nil},
		{"log of zero", Log10(0, 10), nil},
	}
	for _, tt := range tests {
		got := tt.s.Ticks(6)
		if len(got) != len(tt.want) {
			t.Errorf("%s: %v, want %v", tt.name, got, tt.want)
			continue
		}
		for i := range got {
			if math.Abs(got[i].V-tt.want[i].V) > 1e-12 || math.Abs(got[i].Pos-tt.want[i].Pos) > 1e-9 {
				t.Errorf("%s: tick %d is %v, want %v", tt.name, i, got[i], tt.want[i])
			}
		}
	}
	// Decade ticks carry the power of ten exactly and sit where its exponent says.
	s := Log10(3e17, 5e19).Onto(0, 1)
	got := s.Ticks(6)
	if len(got) != 2 || got[0].V != 1e18 || got[1].V != 1e19 {
		t.Fatalf("log ticks %v, want 1e18 and 1e19", got)
	}
	lo, hi := math.Log10(3e17), math.Log10(5e19)
	if got[0].Pos != (18-lo)/(hi-lo) || got[1].Pos != (19-lo)/(hi-lo) {
		t.Errorf("log tick places %v", got)
	}
}

// A step below the precision of the values (here a unit in the last place of
// 1e20 is 16384) must not loop forever.
func TestTicksEnd(t *testing.T) {
	if ts := Linear(1e20, 1e20+32768).Ticks(100); len(ts) != 1 {
		t.Errorf("%d ticks, want the one before the step vanishes", len(ts))
	}
}

func TestLogCount(t *testing.T) {
	s := LogCount(999).Onto(200, 0)
	for _, tt := range []struct{ v, want float64 }{
		{0, 200},                                           // zero where the axis starts
		{999, 0},                                           // the end of the domain
		{9, 200 - 200.0/3},                                 // log10(10) is a third of log10(1000)
		{1, 200 - 200*math.Log10(2)/3},                     // one row is a tenth of the way up
		{1e-12, 200 - 200*1e-12/math.Ln10/3},               // log1p keeps small counts exact
		{99, 200 - 200*2.0/3}, {math.Inf(1), math.Inf(-1)}, // no panic past the end
	} {
		if got := s.At(tt.v); math.Abs(got-tt.want) > 1e-9 && got != tt.want {
			t.Errorf("At(%v) = %v, want %v", tt.v, got, tt.want)
		}
	}
	tests := []struct {
		hi   float64
		want []float64
	}{
		{1000, []float64{0, 1, 10, 100, 1000}},
		{999, []float64{0, 1, 10, 100}},
		{30, []float64{0, 1, 2, 5, 10, 20}},
		{99, []float64{0, 1, 2, 5, 10, 20, 50}},
		{1, []float64{0, 1}},
		{0, nil},
		{-3, nil},
		{math.NaN(), nil},
	}
	for _, tt := range tests {
		s := LogCount(tt.hi).Onto(0, 1)
		got := s.Ticks(6)
		if len(got) != len(tt.want) {
			t.Errorf("LogCount(%v) ticks %v, want values %v", tt.hi, got, tt.want)
			continue
		}
		for i, tk := range got {
			if tk.V != tt.want[i] || tk.Pos != s.At(tk.V) {
				t.Errorf("LogCount(%v) tick %d is %v, want %v at %v", tt.hi, i, tk, tt.want[i], s.At(tt.want[i]))
			}
		}
	}
}
