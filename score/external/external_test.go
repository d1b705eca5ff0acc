package external

import (
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

type expected struct {
	IDs     []string
	Scores  []string
	LeftOut []int `json:"left_out"`
}

func readExpected(t *testing.T) (expected, []float64, func(string) ([]int, bool)) {
	t.Helper()
	var e expected
	b, err := os.ReadFile(filepath.Join("testdata", "expected.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &e); err != nil {
		t.Fatal(err)
	}
	want := make([]float64, len(e.Scores))
	for i, h := range e.Scores {
		if want[i], err = strconv.ParseFloat(h, 64); err != nil {
			t.Fatal(err)
		}
	}
	index := map[string][]int{}
	for r, id := range e.IDs {
		index[id] = append(index[id], r)
	}
	lookup := func(id string) ([]int, bool) { r, ok := index[id]; return r, ok }
	return e, want, lookup
}

// Source: files written by Python 3's json and csv modules
// (testdata/make_fixtures.py, Debian's python3): shortest round-trip float
// reprs, float.hex, -0.0, the smallest subnormal, -1.7e308, "\r\n" line
// ends, quoted cells with commas and quotes, a number id (42) matching the
// pool id "42", records in reverse order. Every score must be read bit for
// bit as float.hex gives it; rows the file leaves out get what Missing
// says.
func TestReadPythonFiles(t *testing.T) {
	e, want, lookup := readExpected(t)
	rows := len(e.IDs)
	leftOut := map[int]bool{}
	for _, r := range e.LeftOut {
		leftOut[r] = true
	}
	tests := []struct {
		file    string
		join    Join
		partial bool
	}{
		{"scores.jsonl", ByID, true},
		{"scores_rows.jsonl", ByRow, false},
		{"scores.csv", ByID, true},
		{"scores_hex.csv", ByRow, false},
	}
	for _, tt := range tests {
		for _, missing := range []Missing{MissingError, MissingLowest, MissingSkip} {
			t.Run(tt.file+" "+missing.String(), func(t *testing.T) {
				s, err := Read(filepath.Join("testdata", tt.file), Options{Rows: rows, Lookup: lookup, Missing: missing})
				if tt.partial && missing == MissingError {
					if !errors.Is(err, ErrMissing) || !strings.Contains(err.Error(), "2 of 12") || !strings.Contains(err.Error(), "3, 11") {
						t.Fatalf("error %v, want ErrMissing listing rows 3 and 11", err)
					}
					return
				}
				if err != nil {
					t.Fatal(err)
				}
				if s.JoinedBy != tt.join {
					t.Errorf("joined by %v, want %v", s.JoinedBy, tt.join)
				}
				low := math.Inf(1)
				for r, w := range want {
					if tt.partial && leftOut[r] {
						continue
					}
					low = min(low, w)
					if !s.Has(r) || math.Float64bits(s.Score[r]) != math.Float64bits(w) {
						t.Errorf("row %d: %v (has %v), Python %v", r, s.Score[r], s.Has(r), w)
					}
				}
				if !tt.partial {
					return
				}
				if s.Given != rows-2 || s.Missing != 2 {
					t.Errorf("given %d, missing %d", s.Given, s.Missing)
				}
				for r := range leftOut {
					if s.Has(r) {
						t.Errorf("row %d: Has", r)
					}
					switch missing {
					case MissingSkip:
						if !math.IsNaN(s.Score[r]) {
							t.Errorf("row %d: %v, want NaN", r, s.Score[r])
						}
					case MissingLowest:
						// The lowest is -1.7e308: minus 1 changes nothing and
						// minus itself overflows, so it is the next float down.
						if s.Score[r] != s.Lowest || s.Lowest != math.Nextafter(low, math.Inf(-1)) {
							t.Errorf("row %d: %v, Lowest %v, lowest given %v", r, s.Score[r], s.Lowest, low)
						}
					}
				}
			})
		}
	}
}

// Source: NaN and -Infinity as Python's json module writes them (NaN,
// -Infinity) and as its csv module writes them (nan, -inf), on row 6.
func TestNonFinitePython(t *testing.T) {
	for _, file := range []string{"bad_nan.jsonl", "bad_inf.jsonl", "bad_nan.csv", "bad_inf.csv"} {
		_, err := Read(filepath.Join("testdata", file), Options{Rows: 12})
		// Line 7 in JSONL, 8 in CSV after the header.
		line := ":7:"
		if strings.HasSuffix(file, ".csv") {
			line = ":8:"
		}
		if !errors.Is(err, ErrNotFinite) || !strings.Contains(err.Error(), file+line) {
			t.Errorf("%s: error %v, want ErrNotFinite naming line %s", file, err, line)
		}
	}
}

func TestBelow(t *testing.T) {
	tests := []struct{ low, want float64 }{
		{0, -1},
		{-3.5, -4.5},
		{1e20, 0},
		{-1e20, -2e20},
	}
	for _, tt := range tests {
		if got, ok := below(tt.low); !ok || got != tt.want {
			t.Errorf("below(%v) = %v, %v; want %v", tt.low, got, ok, tt.want)
		}
	}
	if got, ok := below(-math.MaxFloat64); ok {
		t.Errorf("below(-MaxFloat64) = %v, want none", got)
	}
	if got, ok := below(-1.7e308); !ok || !(got < -1.7e308) || math.IsInf(got, 0) {
		t.Errorf("below(-1.7e308) = %v, %v", got, ok)
	}
}

func TestReadErrors(t *testing.T) {
	index := map[string][]int{"a": {0}, "b": {1}, "c": {2}, "dup": {0, 2}}
	lookup := func(id string) ([]int, bool) { r, ok := index[id]; return r, ok }
	tests := []struct {
		name, text string
		o          Options
		want       error
		says       string
	}{
		{"unknown ids", `{"id":"a","score":1}` + "\n" + `{"id":"x","score":1}` + "\n" + `{"id":"y","score":2}`,
			Options{Rows: 3, Lookup: lookup}, ErrNotInPool, `2 ids not in the pool, the first: "x" (line 2), "y" (line 3)`},
		{"row out of range", "row,score\n0,1\n3,2\n", Options{Rows: 3}, ErrNotInPool, "1 rows (the pool has rows 0 to 2) not in the pool, the first: 3 (line 3)"},
		{"duplicate id", `{"id":"a","score":1}` + "\n" + `{"id":"a","score":1}`, Options{Rows: 3, Lookup: lookup}, ErrDuplicate, `s:2: id "a" (pool row 0)`},
		{"duplicate row", "row,score\n1,1\n1,2\n", Options{Rows: 3}, ErrDuplicate, "s:3: row 1"},
		{"repeated pool id", `{"id":"dup","score":1}`, Options{Rows: 3, Lookup: lookup}, ErrRepeated, "names 2 pool rows (0, 2): join by row"},
		{"missing", "row,score\n1,1\n", Options{Rows: 3}, ErrMissing, "2 of 3 pool rows without a score, the first (0-based): 0, 2"},
		{"no score column", "id,value\na,1\n", Options{Rows: 3, Lookup: lookup}, ErrFormat, `s:1: header "id,value" has no "score"`},
		{"both keys", "id,row,score\na,0,1\n", Options{Rows: 3, Lookup: lookup}, ErrFormat, "say which"},
		{"neither key", `{"score":1}`, Options{Rows: 3}, ErrFormat, `no "id" or "row"`},
		{"ids without lookup", `{"id":"a","score":1}`, Options{Rows: 3}, nil, "needs a lookup"},
		{"by row without rows", `{"id":"a","score":1}`, Options{Rows: 3, Join: ByRow}, ErrFormat, `no "row" to join by`},
		{"empty score", "row,score\n0,\n", Options{Rows: 1}, ErrFormat, "s:2: score: empty"},
		{"text score", "row,score\n0,high\n", Options{Rows: 1}, ErrFormat, `"high" is not a number`},
		{"huge score", "row,score\n0,1e400\n", Options{Rows: 1}, ErrNotFinite, "1e400"},
		{"json huge score", `{"row":0,"score":1e400}`, Options{Rows: 1}, ErrNotFinite, "beyond"},
		{"null score", `{"row":0,"score":null}`, Options{Rows: 1}, ErrFormat, "want a number"},
		{"string score", `{"row":0,"score":"1"}`, Options{Rows: 1}, ErrFormat, "want a number"},
		{"fraction row", `{"row":1.5,"score":1}`, Options{Rows: 3}, ErrFormat, "non-negative integer"},
		{"negative row", "row,score\n-1,1\n", Options{Rows: 3}, ErrFormat, "non-negative integer"},
		{"leading zero row", "row,score\n01,1\n", Options{Rows: 3}, ErrFormat, "non-negative integer"},
		{"ragged csv", "row,score\n0,1,2\n", Options{Rows: 3}, ErrFormat, "s:2: wrong number of fields"},
		{"bad json", `{"row":0,"score":1`, Options{Rows: 1}, ErrFormat, "s:1"},
		{"json array", "{\"row\":0,\"score\":1}\n[1]", Options{Rows: 1}, ErrFormat, "s:2: array, want an object"},
		{"later line lacks id", `{"id":"a","score":1}` + "\n" + `{"row":1,"score":1}`, Options{Rows: 3, Lookup: lookup}, ErrFormat, "s:2: id: missing"},
		{"empty file", "", Options{Rows: 1}, ErrMissing, "1 of 1"},
		{"lowest with nothing", "", Options{Rows: 1, Missing: MissingLowest}, ErrMissing, "no pool row has a score"},
	}
	for _, tt := range tests {
		_, err := Decode(strings.NewReader(tt.text), "s", tt.o)
		if err == nil || (tt.want != nil && !errors.Is(err, tt.want)) || !strings.Contains(err.Error(), tt.says) {
			t.Errorf("%s: error %v, want %v saying %q", tt.name, err, tt.want, tt.says)
		}
	}
}

// A byte order mark, blank lines and spaces around header names are
// tolerated; an empty pool reads an empty file.
func TestReadTolerates(t *testing.T) {
	s, err := Decode(strings.NewReader("\xef\xbb\xbf row , score \n\n1,0.5\n0,-2\n"), "s", Options{Rows: 2})
	if err != nil || s.Score[0] != -2 || s.Score[1] != 0.5 || s.Given != 2 {
		t.Fatalf("%+v, %v", s, err)
	}
	s, err = Decode(strings.NewReader("\xef\xbb\xbf\n"+`{"row":0,"score":3}`+"\n\n"), "s", Options{Rows: 1})
	if err != nil || s.Score[0] != 3 {
		t.Fatalf("%+v, %v", s, err)
	}
	if s, err := Decode(strings.NewReader(""), "s", Options{}); err != nil || len(s.Score) != 0 {
		t.Fatalf("%+v, %v", s, err)
	}
}

func TestParseMissing(t *testing.T) {
	for _, m := range []Missing{MissingError, MissingLowest, MissingSkip} {
		if got, err := ParseMissing(m.String()); err != nil || got != m {
			t.Errorf("%v: %v, %v", m, got, err)
		}
	}
	if _, err := ParseMissing("zero"); err == nil {
		t.Error("zero: no error")
	}
}
