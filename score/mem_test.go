package score

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"unicode"
)

// memCorpus is an in-memory Corpus built from analysed rows.
type memCorpus struct {
	n     int
	lens  []int
	avg   float64
	norms []float64
	post  map[string]*postingList
}

type postingList struct {
	rows []uint32
	tfs  []uint32
}

func newMemCorpus(docs [][]string) *memCorpus {
	c := &memCorpus{n: len(docs), lens: make([]int, len(docs)), norms: make([]float64, len(docs)), post: map[string]*postingList{}}
	total := 0
	for r, doc := range docs {
		c.lens[r] = len(doc)
		total += len(doc)
		sorted := slices.Clone(doc)
		slices.Sort(sorted)
		for i := 0; i < len(sorted); {
			j := i
			for j < len(sorted) && sorted[j] == sorted[i] {
				j++
			}
			pl := c.post[sorted[i]]
			if pl == nil {
				pl = &postingList{}
				c.post[sorted[i]] = pl
			}
			pl.rows = append(pl.rows, uint32(r))
			pl.tfs = append(pl.tfs, uint32(j-i))
			i = j
		}
	}
	if c.n > 0 {
		c.avg = float64(total) / float64(c.n)
	}
	c.computeNorms()
	return c
}

// computeNorms fills the TF-IDF row norms: raw tf × ln((1+N)/(1+df)) + 1.
func (c *memCorpus) computeNorms() {
	ss := make([]float64, c.n)
	for _, pl := range c.post {
		idf := math.Log(float64(1+c.n)/float64(1+len(pl.rows))) + 1
		for i, r := range pl.rows {
			x := float64(pl.tfs[i]) * idf
			ss[r] += x * x
		}
	}
	for r := range ss {
		c.norms[r] = math.Sqrt(ss[r])
	}
}

func (c *memCorpus) NumRows() int            { return c.n }
func (c *memCorpus) AvgLen() float64         { return c.avg }
func (c *memCorpus) RowLen(row int) int      { return c.lens[row] }
func (c *memCorpus) RowNorm(row int) float64 { return c.norms[row] }

func (c *memCorpus) DF(term string) int {
	if pl := c.post[term]; pl != nil {
		return len(pl.rows)
	}
	return 0
}

func (c *memCorpus) Postings(term string, rows, tfs []uint32) ([]uint32, []uint32, error) {
	if pl := c.post[term]; pl != nil {
		rows = append(rows, pl.rows...)
		tfs = append(tfs, pl.tfs...)
	}
	return rows, tfs, nil
}

// tokenize lowercases text and keeps runs of ≥ 2 word characters, like
// scikit-learn's default token_pattern (?u)\b\w\w+\b.
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

type textsFixture struct {
	Pool    []struct{ Source, Text string } `json:"pool"`
	Targets []struct{ Source, Text string } `json:"targets"`
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

// fixtureTexts returns the tokenised outside texts of testdata/texts.json.
func fixtureTexts(t testing.TB) (pool [][]string, targets []Query) {
	var f textsFixture
	readJSON(t, "texts.json", &f)
	for _, d := range f.Pool {
		pool = append(pool, tokenize(d.Text))
	}
	for _, d := range f.Targets {
		targets = append(targets, Query{ID: d.Source, Terms: tokenize(d.Text)})
	}
	return pool, targets
}

func queriesOf(docs ...[]string) []Query {
	q := make([]Query, len(docs))
	for i, d := range docs {
		q[i] = Query{Terms: d}
	}
	return q
}

func closeRel(got, want, tol float64) bool {
	if got == want {
		return true
	}
	d := math.Abs(got - want)
	return d <= tol*math.Max(math.Abs(want), math.Abs(got)) || d <= tol*1e-3
}
