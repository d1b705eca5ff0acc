package ngram

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"unicode"
)

// tokenize lowercases text and keeps runs of ≥ 2 word characters, like
// scikit-learn's default token_pattern (?u)\b\w\w+\b, which
// testdata/nltk_ref.py applies with Python's re.
func tokenize(text string) []string {
	f := strings.FieldsFunc(strings.ToLower(text), func(r rune) bool {
		return !(unicode.IsLetter(r) || unicode.IsDigit(r) || r == '_')
	})
	out := f[:0]
	for _, w := range f {
		if len([]rune(w)) >= 2 {
			out = append(out, w)
		}
	}
	return out
}

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

// fixtureTexts returns the analysed pool and target rows of
// score/testdata/texts.json (outside texts: scikit-learn's documentation
// example and openings of public-domain novels).
func fixtureTexts(t testing.TB) (pool, targets [][]string) {
	t.Helper()
	var f struct {
		Pool    []struct{ Text string } `json:"pool"`
		Targets []struct{ Text string } `json:"targets"`
	}
	readJSON(t, filepath.Join("..", "testdata", "texts.json"), &f)
	for _, d := range f.Pool {
		pool = append(pool, tokenize(d.Text))
	}
	for _, d := range f.Targets {
		targets = append(targets, tokenize(d.Text))
	}
	return pool, targets
}

func closeRel(got, want, tol float64) bool {
	if got == want {
		return true
	}
	d := math.Abs(got - want)
	return d <= tol*math.Max(math.Abs(want), math.Abs(got)) || d <= tol*1e-3
}

func mustTrain(t testing.TB, rows [][]string, o Options) *Model {
	t.Helper()
	m, err := Train(rows, o)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// probs returns p(symbol | history) for each token of a row and its </s>.
func probs(m *Model, tokens []string) []float64 {
	s := m.start
	var out []float64
	for _, tok := range tokens {
		p, _ := m.next(&s, m.vocab[tok])
		out = append(out, p)
	}
	p, _ := m.next(&s, eosID)
	return append(out, p)
}

// prob returns p(w | the contexts in s), leaving s as it is.
func (m *Model) prob(w uint32, s state) float64 {
	p, _ := m.next(&s, w)
	return p
}
