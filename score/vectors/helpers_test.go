package vectors

import (
	"encoding/json"
	"math"
	"os"
	"strconv"
	"testing"
)

func readJSON(t testing.TB, path string, v any) {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, v); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
}

// hexFloat parses Python's float.hex output, which Go's ParseFloat reads.
func hexFloat(t testing.TB, s string) float64 {
	t.Helper()
	f, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatalf("parse %q: %v", s, err)
	}
	return f
}

func mustNPY(t testing.TB, path string) *Matrix {
	t.Helper()
	n, err := OpenNPY(path)
	if err != nil {
		t.Fatal(err)
	}
	defer n.Close()
	m, err := ReadMatrix(n)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// sameBits reports whether a and b are the same float32 values bit for bit.
func sameBits(a, b []float32) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Float32bits(a[i]) != math.Float32bits(b[i]) {
			return false
		}
	}
	return true
}
