package budget

import "strconv"

// FormatFLOPs writes a FLOP count as people compare them across a ledger: four significant digits
// in exponent form, so that 2.500e+18 and 3.125e+15 line up.
func FormatFLOPs(v float64) string { return strconv.FormatFloat(v, 'e', 3, 64) }

// FormatCount writes a parameter or token count the way model sizes are spoken of (125M, 1.3B),
// and smaller counts as they are.
func FormatCount(v float64) string {
	switch {
	case v >= 1e9:
		return strconv.FormatFloat(v/1e9, 'g', 4, 64) + "B"
	case v >= 1e6:
		return strconv.FormatFloat(v/1e6, 'g', 4, 64) + "M"
	case v != float64(int64(v)):
		// A fraction of a token or parameter means nothing: whole counts only.
		return strconv.FormatFloat(float64(int64(v)), 'f', -1, 64)
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}
