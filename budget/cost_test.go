package budget

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

func TestTrainFLOPs(t *testing.T) {
	// Source: 6·N·D, common practice; it is what the model-FLOPs count of
	// Narayanan et al., SC '21, reduces to without activation recomputation
	// (recalled from memory). Expected values are worked by hand; every one
	// is exactly representable, so the comparison is exact.
	tests := []struct {
		params, tokens, epochs, want float64
	}{
		{7e9, 1e9, 1, 4.2e19},     // 6 × 7e9 × 1e9 = 42e18
		{7e9, 1e9, 3, 1.26e20},    // 3 epochs: 3 × 4.2e19
		{1.3e9, 2e10, 1, 1.56e20}, // 6 × 1.3 × 2 = 15.6, × 1e19
		{125e6, 4e6, 2, 6e15},     // 6 × 125e6 × 4e6 × 2 = 6000e12
		{1, 1, 1, 6},
		{0, 1e9, 1, 0},
	}
	for _, tt := range tests {
		if got := TrainFLOPs(tt.params, tt.tokens, tt.epochs); got != tt.want {
			t.Errorf("TrainFLOPs(%v, %v, %v) = %v, want %v", tt.params, tt.tokens, tt.epochs, got, tt.want)
		}
	}
}

func TestForwardFLOPs(t *testing.T) {
	// Source: 2·N·D per forward pass, common practice; backward ≈ 2 forward
	// passes, so forward+backward is 3 × forward = 6·N·D (common practice).
	if got, want := ForwardFLOPs(7e9, 1e9), 1.4e19; got != want {
		t.Errorf("ForwardFLOPs(7e9, 1e9) = %v, want %v", got, want)
	}
	if got, want := ForwardBackwardFLOPs(7e9, 1e9), 4.2e19; got != want {
		t.Errorf("ForwardBackwardFLOPs(7e9, 1e9) = %v, want %v", got, want)
	}
	if got, want := SelectorFLOPs(1, 125e6, 1e6), 2.5e14; got != want {
		t.Errorf("SelectorFLOPs(1, 125e6, 1e6) = %v, want %v", got, want)
	}
}

// A selector of the trained model's size that runs one forward and backward
// pass over the whole pool spends exactly what one epoch of training on the
// whole pool costs. All functions multiply params × tokens first and scale by
// 2 (exact in binary) before the odd factor, so the identity holds with
// tolerance 0 for every finite input, not only for hand-picked ones.
func TestForwardBackwardIsOneEpoch(t *testing.T) {
	check := func(params, poolTokens float64) {
		t.Helper()
		fb := ForwardBackwardFLOPs(params, poolTokens)
		tr := TrainFLOPs(params, poolTokens, 1)
		sel := SelectorFLOPs(3, params, poolTokens)
		if fb != tr || sel != tr {
			t.Errorf("N=%v D=%v: forward+backward %v, selector(3) %v, train %v; want all equal", params, poolTokens, fb, sel, tr)
		}
	}
	for _, c := range [][2]float64{
		{7e9, 1e9}, {1.3e9, 123456789}, {124439808, 3.3e12}, {70e9, 15e12},
		{1.1e9, 1.7e11}, {0.1, 0.3}, {1, 1},
	} {
		check(c[0], c[1])
	}
	r := rand.New(rand.NewPCG(1, 2))
	for range 10000 {
		check(math.Exp(r.Float64()*30), math.Exp(r.Float64()*35))
	}
}

func TestFromGPUHours(t *testing.T) {
	// 1000 H100-hours at 989e12 FLOP/s dense BF16 peak (vendor datasheet
	// figure, recalled from memory) and MFU 0.4:
	// 1000 × 3600 × 989e12 × 0.4 = 1.42416e21, checked with exact rational
	// arithmetic (testdata/gpu_hours.py); the float64 product rounds to it.
	got, err := FromGPUHours(1000, 989e12, 0.4)
	if err != nil {
		t.Fatal(err)
	}
	if want := 1.42416e21; got != want {
		t.Errorf("FromGPUHours(1000, 989e12, 0.4) = %v, want %v", got, want)
	}
	if got, err := FromGPUHours(1, 1e12, 1); err != nil || got != 3.6e15 {
		t.Errorf("FromGPUHours(1, 1e12, 1) = %v, %v; want 3.6e15", got, err)
	}
}

func TestFromGPUHoursErrors(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	tests := []struct {
		hours, peak, mfu float64
		names            string
	}{
		{0, 1e15, 0.5, "hours"},
		{-1, 1e15, 0.5, "hours"},
		{nan, 1e15, 0.5, "hours"},
		{inf, 1e15, 0.5, "hours"},
		{1, 0, 0.5, "peak"},
		{1, -1e15, 0.5, "peak"},
		{1, nan, 0.5, "peak"},
		{1, inf, 0.5, "peak"},
		{1, 1e15, 0, "mfu"},
		{1, 1e15, -0.1, "mfu"},
		{1, 1e15, 1.01, "mfu"},
		{1, 1e15, nan, "mfu"},
		{1, 1e15, inf, "mfu"},
		{1e300, 1e300, 1, "overflows"},
	}
	for _, tt := range tests {
		_, err := FromGPUHours(tt.hours, tt.peak, tt.mfu)
		if !errors.Is(err, ErrBadNumber) {
			t.Errorf("FromGPUHours(%v, %v, %v): err = %v, want ErrBadNumber", tt.hours, tt.peak, tt.mfu, err)
			continue
		}
		if !strings.Contains(err.Error(), tt.names) {
			t.Errorf("FromGPUHours(%v, %v, %v): error %q does not name %q", tt.hours, tt.peak, tt.mfu, err, tt.names)
		}
	}
}

func TestEstimateTokens(t *testing.T) {
	// Source: about 4 bytes of English text per token, common practice.
	tests := []struct{ bytes, want int }{
		{-5, 0}, {0, 0}, {1, 1}, {3, 1}, {4, 1}, {5, 2}, {8, 2}, {9, 3},
		{1000, 250}, {1001, 251},
		{math.MaxInt, math.MaxInt/4 + 1},
	}
	for _, tt := range tests {
		if got := EstimateTokens(tt.bytes); got != tt.want {
			t.Errorf("EstimateTokens(%d) = %d, want %d", tt.bytes, got, tt.want)
		}
	}
}
