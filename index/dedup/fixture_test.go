package dedup

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// rowsFixture is testdata/rows.json, made by testdata/variants.py from score/testdata/texts.json.
type rowsFixture struct {
	Rows []struct {
		Base    int    `json:"base"`
		Variant string `json:"variant"`
		Text    string `json:"text"`
	} `json:"rows"`
}

// reference is testdata/reference.json, made by testdata/reference.py.
type reference struct {
	Shingle      int         `json:"shingle"`
	Normalised   []string    `json:"normalised"`
	Keys         []string    `json:"keys"`
	DistinctKeys int         `json:"distinct_keys"`
	Groups       [][]int     `json:"groups"`
	Words        [][]string  `json:"words"`
	Shingles     []int       `json:"shingles"`
	Jaccard      [][]float64 `json:"jaccard"` // i, j, J, |A∩B|, |A∪B|
}

func readJSON(t testing.TB, name string, v any) {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("testdata", name))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, v); err != nil {
		t.Fatalf("%s: %v", name, err)
	}
}

func loadFixture(t testing.TB) ([]string, reference) {
	var rows rowsFixture
	var ref reference
	readJSON(t, "rows.json", &rows)
	readJSON(t, "reference.json", &ref)
	texts := make([]string, len(rows.Rows))
	for i, r := range rows.Rows {
		texts[i] = r.Text
	}
	if len(ref.Keys) != len(texts) || len(ref.Words) != len(texts) {
		t.Fatalf("reference.json covers %d rows, rows.json has %d: rerun testdata/reference.py", len(ref.Keys), len(texts))
	}
	return texts, ref
}

// exactJaccard returns the Python similarity of every pair, keyed by i*n+j for i < j.
func exactJaccard(ref reference, n int) map[int]float64 {
	m := make(map[int]float64, len(ref.Jaccard))
	for _, p := range ref.Jaccard {
		m[int(p[0])*n+int(p[1])] = p[2]
	}
	return m
}

// binomialRange returns the counts lo and hi such that a Binomial(n, p) count falls below lo, or
// above hi, each with probability at most alpha/2: an exact two-sided binomial bound, which, unlike
// a multiple of σ from the normal approximation, holds for p near 0 or 1 too.
func binomialRange(n int, p, alpha float64) (lo, hi int) {
	pmf := func(k int) float64 {
		switch {
		case p <= 0:
			if k == 0 {
				return 1
			}
			return 0
		case p >= 1:
			if k == n {
				return 1
			}
			return 0
		}
		lg := func(x int) float64 { v, _ := math.Lgamma(float64(x + 1)); return v }
		return math.Exp(lg(n) - lg(k) - lg(n-k) + float64(k)*math.Log(p) + float64(n-k)*math.Log1p(-p))
	}
	cum := 0.0
	for lo = 0; lo < n; lo++ {
		if cum+pmf(lo) > alpha/2 {
			break
		}
		cum += pmf(lo)
	}
	cum = 0
	for hi = n; hi > 0; hi-- {
		if cum+pmf(hi) > alpha/2 {
			break
		}
		cum += pmf(hi)
	}
	return lo, hi
}

func sign(t testing.TB, s *Signer, text string) Signature {
	t.Helper()
	if _, err := s.Write([]byte(text)); err != nil {
		t.Fatal(err)
	}
	return s.Sum(nil)
}
