package budget

import (
	"errors"
	"fmt"
	"math"
	"math/big"
	"strconv"
	"strings"
)

// ErrBadNumber is wrapped by every error this package returns for a number it
// cannot accept, so callers can tell bad input from other failures.
var ErrBadNumber = errors.New("bad number")

func badNumber(what, s, why string) error {
	return fmt.Errorf("parse %s %q: %s: %w", what, s, why, ErrBadNumber)
}

// decimal is a non-negative number as written: digits, an optional fraction
// and an optional power-of-ten exponent. Keeping the parts apart lets a suffix
// shift the exponent so the final conversion rounds once, as strconv does.
type decimal struct {
	whole, frac string
	exp         int
}

// scanDecimal reads [0-9]*(.[0-9]*)?([eE][+-]?[0-9]+)? with at least one
// digit before the exponent. It is stricter than strconv.ParseFloat on
// purpose: no signs, hex, underscores, "inf" or "nan".
func scanDecimal(s string, allowExp bool) (decimal, string) {
	var d decimal
	i := 0
	for i < len(s) && isDigit(s[i]) {
		i++
	}
	d.whole = s[:i]
	if i < len(s) && s[i] == '.' {
		j := i + 1
		for j < len(s) && isDigit(s[j]) {
			j++
		}
		d.frac = s[i+1 : j]
		i = j
	}
	if d.whole == "" && d.frac == "" {
		return d, "not a number"
	}
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') && allowExp {
		j := i + 1
		if j < len(s) && (s[j] == '+' || s[j] == '-') {
			j++
		}
		k := j
		for k < len(s) && isDigit(s[k]) {
			k++
		}
		if k == j {
			return d, "exponent has no digits"
		}
		e, err := strconv.Atoi(s[i+1 : k])
		if err != nil || e > 100000 || e < -100000 {
			return d, "exponent out of range"
		}
		d.exp = e
		i = k
	}
	if i != len(s) {
		return d, fmt.Sprintf("unexpected %q", s[i:])
	}
	return d, ""
}

func isDigit(c byte) bool { return '0' <= c && c <= '9' }

func (d decimal) float(shift int) (float64, error) {
	whole := d.whole
	if whole == "" {
		whole = "0"
	}
	v, err := strconv.ParseFloat(whole+"."+d.frac+"0e"+strconv.Itoa(d.exp+shift), 64)
	if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
		return 0, errors.New("out of range")
	}
	return v, nil
}

// cutSuffix removes a one-letter multiplier from the end of s, returning the
// rest trimmed of trailing spaces and the power of ten the letter stands for.
func cutSuffix(s string, suffixes map[string]int, fold bool) (string, int) {
	if s == "" {
		return s, 0
	}
	suf := s[len(s)-1:]
	if fold {
		suf = strings.ToLower(suf)
	}
	if p, ok := suffixes[suf]; ok {
		return strings.TrimRight(s[:len(s)-1], " "), p
	}
	return s, 0
}

// flopSuffixes are the SI prefixes accepted by ParseFLOPs. Only these cases
// are accepted: lower-case "m" would be milli and lower-case "e" would be
// read as an unfinished exponent.
var flopSuffixes = map[string]int{
	"k": 3, "K": 3, "M": 6, "G": 9, "g": 9, "T": 12, "t": 12, "P": 15, "p": 15, "E": 18, "Z": 21, "z": 21,
}

// ParseFLOPs parses a positive FLOP count such as "2.5e18", "1E21",
// "1000000", "400T", "400p", "989TF", "2.5E" or "3.2e21 FLOPs". An optional
// trailing unit "FLOP", "FLOPs", "FLOP/s" or "F" (any case) is ignored, so
// that a GPU's rate reads as it is quoted ("989 TFLOP/s"). A trailing SI
// prefix k/K, M, G/g, T/t, P/p, E or Z/z scales the number (lower-case m
// would be milli and e an unfinished exponent, so neither is taken); since "E" is both the exa prefix and the
// exponent marker, "2.5E" means 2.5e18 while "2.5E18" is scientific
// notation, and both may be combined ("1.5E3E" is 1.5e21). The result is
// correctly rounded from the decimal as written.
func ParseFLOPs(s string) (float64, error) {
	const what = "FLOPs"
	t := strings.TrimSpace(s)
	low := strings.ToLower(t)
	for _, unit := range []string{"flop/s", "flops", "flop", "f"} {
		if strings.HasSuffix(low, unit) {
			t = t[:len(t)-len(unit)]
			break
		}
	}
	return parsePositive(what, s, strings.TrimRight(t, " "), flopSuffixes, false)
}

// parsePositive parses t, the number in s with its unit word removed, as a decimal with an optional
// suffix from suffixes, and requires it to be greater than zero.
func parsePositive(what, s, t string, suffixes map[string]int, foldCase bool) (float64, error) {
	if t == "" {
		return 0, badNumber(what, s, "empty")
	}
	if t[0] == '-' {
		return 0, badNumber(what, s, "negative")
	}
	num, shift := cutSuffix(t, suffixes, foldCase)
	d, why := scanDecimal(num, true)
	if why != "" {
		return 0, badNumber(what, s, why)
	}
	v, err := d.float(shift)
	if err != nil {
		return 0, badNumber(what, s, err.Error())
	}
	if v <= 0 {
		return 0, badNumber(what, s, "must be greater than zero")
	}
	return v, nil
}

// countSuffixes are the multipliers accepted by ParseCount. "B" is billion
// (1e9), the way model sizes are usually written; "G" is not accepted so a
// count cannot be confused with a byte size.
var countSuffixes = map[string]int{"k": 3, "m": 6, "b": 9, "t": 12}

// ParseCounts reads a comma-separated list of counts, each as ParseCount reads it.
func ParseCounts(s string) ([]float64, error) {
	var out []float64
	for _, p := range strings.Split(s, ",") {
		v, err := ParseCount(p)
		if err != nil {
			return nil, err
		}
		out = append(out, v)
	}
	return out, nil
}

// ParseCount parses a positive count such as a number of model parameters
// or tokens: "7B", "1.3B", "350M", "125k", "2T" or "7e9". Suffixes are k
// (1e3), M (1e6), B (billion, 1e9) and T (1e12), in either case.
func ParseCount(s string) (float64, error) {
	return parsePositive("count", s, strings.TrimSpace(s), countSuffixes, true)
}

// sizeUnits maps lower-cased byte units to their multipliers. Decimal
// prefixes are powers of 1000 and "i" prefixes powers of 1024, so "1G" is
// 1e9 bytes and "1GiB" is 2^30.
var sizeUnits = func() map[string]int64 {
	m := map[string]int64{"b": 1}
	dec, bin := int64(1), int64(1)
	for _, p := range "kmgtpe" {
		dec *= 1000
		bin *= 1024
		m[string(p)], m[string(p)+"b"] = dec, dec
		m[string(p)+"i"], m[string(p)+"ib"] = bin, bin
	}
	return m
}()

// ParseSize parses a byte count such as "1024", "4KiB", "512MiB", "1GiB",
// "1G" (1e9) or "2g". Units are case-insensitive; a fraction is allowed when
// the result is a whole number of bytes ("1.5KiB" is 1536). Scientific
// notation is not accepted because "E" is the exa prefix here. Zero is
// accepted; negative values and values above math.MaxInt64 are not.
func ParseSize(s string) (int64, error) {
	const what = "size"
	t := strings.TrimSpace(s)
	if t == "" {
		return 0, badNumber(what, s, "empty")
	}
	if t[0] == '-' {
		return 0, badNumber(what, s, "negative")
	}
	i := len(t)
	for i > 0 && !isDigit(t[i-1]) && t[i-1] != '.' {
		i--
	}
	num, unit := t[:i], strings.TrimLeft(t[i:], " ")
	mult := int64(1)
	if unit != "" {
		m, ok := sizeUnits[strings.ToLower(unit)]
		if !ok {
			return 0, badNumber(what, s, fmt.Sprintf("unknown unit %q", unit))
		}
		mult = m
	}
	d, why := scanDecimal(num, false)
	if why != "" {
		return 0, badNumber(what, s, why)
	}
	whole := strings.TrimLeft(d.whole, "0")
	frac := strings.TrimRight(d.frac, "0")
	// 40 digits is far past MaxInt64 even before multiplying, and bounds
	// the big-number work on hostile input.
	if len(whole)+len(frac) > 40 {
		return 0, badNumber(what, s, "out of range")
	}
	n, ok := new(big.Int).SetString("0"+whole+frac, 10)
	if !ok {
		return 0, badNumber(what, s, "not a number")
	}
	n.Mul(n, big.NewInt(mult))
	den := new(big.Int).Exp(big.NewInt(10), big.NewInt(int64(len(frac))), nil)
	q, r := new(big.Int).QuoRem(n, den, new(big.Int))
	if r.Sign() != 0 {
		return 0, badNumber(what, s, "not a whole number of bytes")
	}
	if !q.IsInt64() {
		return 0, badNumber(what, s, "out of range")
	}
	return q.Int64(), nil
}

// ParseBound parses a size bound of at least least bytes, as ParseSize does; "" (no bound asked
// for) is 0.
func ParseBound(s string, least int64) (int64, error) {
	if s == "" {
		return 0, nil
	}
	v, err := ParseSize(s)
	if err == nil && v < least {
		err = badNumber("size", s, fmt.Sprintf("below the least of %d MiB", least>>20))
	}
	return v, err
}
