package budget

import (
	"errors"
	"math"
	"strconv"
	"strings"
	"testing"
)

func TestParseFLOPs(t *testing.T) {
	tests := []struct {
		in   string
		want float64
	}{
		{"2.5e18", 2.5e18},
		{"2.5E18", 2.5e18},
		{"1e21", 1e21},
		{"1E+21", 1e21},
		{"4e-3k", 4},
		{"1000000", 1e6},
		{"  42 ", 42},
		{"007", 7},
		{".5k", 500},
		{"5.", 5},
		{"1k", 1e3},
		{"1K", 1e3},
		{"3M", 3e6},
		{"2G", 2e9},
		{"400T", 4e14},
		{"6P", 6e15},
		{"2.5E", 2.5e18}, // trailing E alone is the exa prefix
		{"1E", 1e18},
		{"1.5Z", 1.5e21},
		{"1.5E3E", 1.5e21}, // scientific, then the exa prefix
		{"400 T", 4e14},
		{"3.2e21 FLOPs", 3.2e21},
		{"3.2e21FLOPs", 3.2e21},
		{"1e21 flops", 1e21},
		{"1e21 FLOP", 1e21},
		{"400TFLOPs", 4e14},
		{"989TF", 989e12}, // a GPU's rate as it is often quoted
		{"989 TFLOP/s", 989e12},
		{"989t", 989e12},
		{"400p", 4e17},
		{"2g", 2e9},
		{"2.5E FLOPs", 2.5e18},
		// A suffix shifts the decimal exponent before the single rounding, so
		// results match strconv.ParseFloat of the same value written out.
		{"1.1E", 1.1e18},
		{"0.3T", 0.3e12},
	}
	for _, tt := range tests {
		got, err := ParseFLOPs(tt.in)
		if err != nil {
			t.Errorf("ParseFLOPs(%q): %v", tt.in, err)
			continue
		}
		if got != tt.want {
			t.Errorf("ParseFLOPs(%q) = %v, want %v", tt.in, got, tt.want)
		}
	}
}

func TestParseFLOPsErrors(t *testing.T) {
	for _, in := range []string{
		"", "   ", "FLOPs", "-1", "-1e21", "0", "0.0", "0E", "1e-400",
		"1e400", "1e99999999999", "NaN", "nan", "Inf", "+Inf", "infinity",
		"1e", "2.5e", "1e+", "E", "k", "1x", "1m", "1 2", "1..2", "1.2.3",
		"0x10", "1_000", "+5", "1kk", "1EB", "1Ki", "Z1", "½",
	} {
		_, err := ParseFLOPs(in)
		if !errors.Is(err, ErrBadNumber) {
			t.Errorf("ParseFLOPs(%q): err = %v, want ErrBadNumber", in, err)
			continue
		}
		if !strings.Contains(err.Error(), strconv.Quote(in)) {
			t.Errorf("ParseFLOPs(%q): error %q does not quote the input", in, err)
		}
	}
}

func TestParseSize(t *testing.T) {
	tests := []struct {
		in   string
		want int64
	}{
		{"0", 0},
		{"1024", 1024},
		{"1024B", 1024},
		{"4KiB", 4 << 10},
		{"4kib", 4 << 10},
		{"64MiB", 64 << 20},
		{"512MiB", 512 << 20},
		{"512 MiB", 512 << 20},
		{"1GiB", 1 << 30},
		{"1Gi", 1 << 30},
		{"1G", 1e9},
		{"1GB", 1e9},
		{"2g", 2e9},
		{"3k", 3000},
		{"1.5KiB", 1536},
		{"0.5G", 5e8},
		{"2TiB", 2 << 40},
		{"1PB", 1e15},
		{"7EiB", 7 << 60},
		{"9223372036854775807", math.MaxInt64},
		{"0009", 9},
	}
	for _, tt := range tests {
		got, err := ParseSize(tt.in)
		if err != nil {
			t.Errorf("ParseSize(%q): %v", tt.in, err)
			continue
		}
		if got != tt.want {
			t.Errorf("ParseSize(%q) = %d, want %d", tt.in, got, tt.want)
		}
	}
}

func TestParseSizeErrors(t *testing.T) {
	for _, in := range []string{
		"", " ", "-1", "-1GiB", "8EiB", "9223372036854775808", "1e9", "1E3",
		"GiB", "1XB", "1 2", "1.2.3", "0.3KiB", "1.0000001", "NaN", "Inf",
		"1iB", "1KiBB", "0x10", ".", "99999999999999999999999999999999999999999999",
	} {
		_, err := ParseSize(in)
		if !errors.Is(err, ErrBadNumber) {
			t.Errorf("ParseSize(%q): err = %v, want ErrBadNumber", in, err)
			continue
		}
		if !strings.Contains(err.Error(), strconv.Quote(in)) {
			t.Errorf("ParseSize(%q): error %q does not quote the input", in, err)
		}
	}
}

func TestParseCount(t *testing.T) {
	tests := []struct {
		in   string
		want float64
	}{
		{"7B", 7e9},
		{"7b", 7e9},
		{"1.3B", 1.3e9},
		{"350M", 350e6},
		{"350m", 350e6},
		{"125k", 125e3},
		{"2T", 2e12},
		{"7e9", 7e9},
		{"7E9", 7e9},
		{"124439808", 124439808},
		{" 70 B ", 70e9},
	}
	for _, tt := range tests {
		got, err := ParseCount(tt.in)
		if err != nil {
			t.Errorf("ParseCount(%q): %v", tt.in, err)
			continue
		}
		if got != tt.want {
			t.Errorf("ParseCount(%q) = %v, want %v", tt.in, got, tt.want)
		}
	}
}

func TestParseCountErrors(t *testing.T) {
	for _, in := range []string{
		"", "-7B", "0", "0B", "B", "7G", "7e", "7E", "7BB", "NaN", "Inf",
		"1e400", "seven", "7 billion", "1.3.B",
	} {
		_, err := ParseCount(in)
		if !errors.Is(err, ErrBadNumber) {
			t.Errorf("ParseCount(%q): err = %v, want ErrBadNumber", in, err)
			continue
		}
		if !strings.Contains(err.Error(), strconv.Quote(in)) {
			t.Errorf("ParseCount(%q): error %q does not quote the input", in, err)
		}
	}
}

// checkPositive holds for every accepted FLOP or count value: finite, > 0,
// and written back in Go's shortest form it parses to the same float.
func checkPositive(t *testing.T, name, in string, v float64, parse func(string) (float64, error)) {
	t.Helper()
	if !(v > 0) || math.IsInf(v, 0) {
		t.Fatalf("%s(%q) = %v, want finite and > 0", name, in, v)
	}
	s := strconv.FormatFloat(v, 'g', -1, 64)
	w, err := parse(s)
	if err != nil || w != v {
		t.Fatalf("%s(%q) = %v; %s(%q) = %v, %v", name, in, v, name, s, w, err)
	}
}

func FuzzParseFLOPs(f *testing.F) {
	for _, s := range []string{"2.5e18", "2.5E", "400T", "1e21 FLOPs", "-1", "", "1e", "NaN", "0x1p3", "1.5E3E"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		v, err := ParseFLOPs(s)
		if err != nil {
			if !errors.Is(err, ErrBadNumber) {
				t.Fatalf("ParseFLOPs(%q): error %v does not wrap ErrBadNumber", s, err)
			}
			return
		}
		checkPositive(t, "ParseFLOPs", s, v, ParseFLOPs)
	})
}

func FuzzParseCount(f *testing.F) {
	for _, s := range []string{"7B", "1.3B", "350M", "7e9", "-7B", "", "7G"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		v, err := ParseCount(s)
		if err != nil {
			if !errors.Is(err, ErrBadNumber) {
				t.Fatalf("ParseCount(%q): error %v does not wrap ErrBadNumber", s, err)
			}
			return
		}
		checkPositive(t, "ParseCount", s, v, ParseCount)
	})
}

func FuzzParseSize(f *testing.F) {
	for _, s := range []string{"512MiB", "1GiB", "1G", "2g", "1024", "4KiB", "1.5KiB", "-1", "8EiB", ""} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		v, err := ParseSize(s)
		if err != nil {
			if !errors.Is(err, ErrBadNumber) {
				t.Fatalf("ParseSize(%q): error %v does not wrap ErrBadNumber", s, err)
			}
			return
		}
		if v < 0 {
			t.Fatalf("ParseSize(%q) = %d, want >= 0", s, v)
		}
		back := strconv.FormatInt(v, 10)
		if w, err := ParseSize(back); err != nil || w != v {
			t.Fatalf("ParseSize(%q) = %d; ParseSize(%q) = %d, %v", s, v, back, w, err)
		}
	})
}

func TestAccelerators(t *testing.T) {
	a, err := LookupAccelerator("H100-SXM")
	if err != nil || a.PeakFLOPs != 989e12 || a.Precision != "BF16" {
		t.Errorf("h100-sxm: %+v, %v", a, err)
	}
	if _, err := LookupAccelerator("abacus"); !errors.Is(err, ErrBadNumber) || !strings.Contains(err.Error(), "a100") {
		t.Errorf("unknown accelerator: %v", err)
	}
	for _, a := range Accelerators() {
		if !(a.PeakFLOPs > 1e13 && a.PeakFLOPs < 1e16) || a.Precision == "" {
			t.Errorf("%+v", a)
		}
	}
}

func TestParseBound(t *testing.T) {
	for _, tc := range []struct {
		in    string
		least int64
		want  int64
		ok    bool
	}{
		{"", 1 << 20, 0, true}, // no bound asked for
		{"8GiB", 1 << 20, 8 << 30, true},
		{"1MiB", 1 << 20, 1 << 20, true},
		{"1023KiB", 1 << 20, 0, false},
		{"lots", 1 << 20, 0, false},
		{"-1GiB", 0, 0, false},
	} {
		got, err := ParseBound(tc.in, tc.least)
		if tc.ok != (err == nil) || tc.ok && got != tc.want {
			t.Errorf("ParseBound(%q, %d) = %d, %v; want %d, ok %v", tc.in, tc.least, got, err, tc.want, tc.ok)
		}
		if err != nil && !errors.Is(err, ErrBadNumber) {
			t.Errorf("ParseBound(%q): %v, want ErrBadNumber", tc.in, err)
		}
	}
}

func TestParseCounts(t *testing.T) {
	got, err := ParseCounts("125M,1.3B,7e9")
	if err != nil || len(got) != 3 || got[0] != 125e6 || got[1] != 1.3e9 || got[2] != 7e9 {
		t.Errorf("ParseCounts = %v, %v", got, err)
	}
	for _, bad := range []string{"", "1M,", "1M,x"} {
		if _, err := ParseCounts(bad); err == nil {
			t.Errorf("ParseCounts(%q): no error", bad)
		}
	}
}
