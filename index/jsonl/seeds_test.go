package jsonl

import (
	"bytes"
	"os"
	"path/filepath"
	"testing"
)

// badInputFiles returns the bad-input suite's fixtures (testdata/badinput at the repository root),
// the seed corpus of the fuzz targets: every kind of damage the suite knows starts the search.
func badInputFiles(f *testing.F) [][]byte {
	f.Helper()
	paths, _ := filepath.Glob("../../testdata/badinput/*")
	var out [][]byte
	for _, p := range paths {
		b, err := os.ReadFile(p)
		if err == nil && len(b) <= 1<<20 {
			out = append(out, b)
		}
	}
	return out
}

// badInputLines returns the suite's fixtures cut into lines.
func badInputLines(f *testing.F) [][]byte {
	var out [][]byte
	for _, b := range badInputFiles(f) {
		out = append(out, bytes.Split(b, []byte("\n"))...)
	}
	return out
}
