package external

import (
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// FuzzDecode reads arbitrary text as a scores file (JSONL or CSV), joined
// by id to a pool whose ids are "0" to "rows-1" plus one id naming two
// rows, or by row. It must not panic, and what it returns must hold
// together: one score per pool row, a finite one for each row the file
// scores, and the missing rows given what Missing says.
func FuzzDecode(f *testing.F) {
	files, _ := filepath.Glob(filepath.Join("testdata", "*.*sv"))
	more, _ := filepath.Glob(filepath.Join("testdata", "*.jsonl"))
	for _, name := range append(files, more...) {
		if b, err := os.ReadFile(name); err == nil {
			f.Add(string(b), uint8(12), uint8(0))
		}
	}
	f.Add("id,score\n0,1\n1,2\n", uint8(3), uint8(1))
	f.Add(`{"row":0,"score":1}`+"\n"+`{"row":2,"score":-1e308}`, uint8(3), uint8(2))
	f.Add(`{"id":"dup","score":1}`, uint8(2), uint8(4))
	f.Fuzz(func(t *testing.T, text string, rows, mode uint8) {
		missing := Missing(mode % 3)
		join := Join(mode / 3 % 3)
		n := int(rows)
		lookup := func(id string) ([]int, bool) {
			if id == "dup" && n >= 2 {
				return []int{0, 1}, true
			}
			r, err := strconv.Atoi(id)
			if err != nil || r < 0 || r >= n || strconv.Itoa(r) != id {
				return nil, false
			}
			return []int{r}, true
		}
		s, err := Decode(strings.NewReader(text), "s", Options{Rows: n, Join: join, Lookup: lookup, Missing: missing})
		if err != nil {
			return
		}
		if len(s.Score) != n || s.Given+s.Missing != n {
			t.Fatalf("%d scores, given %d, missing %d, for %d rows", len(s.Score), s.Given, s.Missing, n)
		}
		for r, v := range s.Score {
			switch {
			case s.Has(r):
				if math.IsNaN(v) || math.IsInf(v, 0) || (missing == MissingLowest && s.Missing > 0 && !(s.Lowest < v)) {
					t.Fatalf("row %d: %v (lowest %v)", r, v, s.Lowest)
				}
			case missing == MissingError:
				t.Fatalf("row %d has no score and no error", r)
			case missing == MissingSkip && !math.IsNaN(v):
				t.Fatalf("row %d: %v, want NaN", r, v)
			case missing == MissingLowest && v != s.Lowest:
				t.Fatalf("row %d: %v, want %v", r, v, s.Lowest)
			}
		}
	})
}
