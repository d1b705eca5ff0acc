package audit

import (
	"math"
	"testing"
)

// Spearman's rho for untied ranks is 1 − 6Σd²/(n(n²−1)) (Spearman, 1904; any statistics
// handbook). Worked by hand: ranks 1..5 against 2,1,4,3,5 give d² = 1+1+1+1+0 = 4 and
// rho = 1 − 24/120 = 0.8; against 5..1, rho = −1.
func TestPearsonOfRanksIsSpearman(t *testing.T) {
	for _, tc := range []struct {
		a, b []float64
		want float64
	}{
		{[]float64{1, 2, 3, 4, 5}, []float64{2, 1, 4, 3, 5}, 0.8},
		{[]float64{1, 2, 3, 4, 5}, []float64{5, 4, 3, 2, 1}, -1},
		{[]float64{1, 2, 3}, []float64{1, 2, 3}, 1},
	} {
		if got := pearson(tc.a, tc.b); math.Abs(got-tc.want) > 1e-12 {
			t.Errorf("rho(%v, %v) = %v, want %v", tc.a, tc.b, got, tc.want)
		}
	}
	if !math.IsNaN(pearson([]float64{1, 1}, []float64{1, 2})) {
		t.Errorf("rho with no spread should be NaN")
	}
}
