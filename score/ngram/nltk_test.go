package ngram

import (
	"math"
	"path/filepath"
	"slices"
	"testing"
)

type nltkFixture struct {
	Versions     map[string]string
	PoolTokens   [][]string `json:"pool_tokens"`
	TargetTokens [][]string `json:"target_tokens"`
	Runs         []struct {
		Order    int
		Discount float64
		Rows     []struct {
			Set        string
			Row        int
			Probs      []float64
			LnProb     *float64 `json:"ln_prob"`
			Perplexity *float64
		}
	}
}

// Source: NLTK 3.8 (Debian python3-nltk), nltk.lm.KneserNeyInterpolated with
// discounts 0.1 (its default), 0.75 and 1 and orders 2 to 5, fit with
// padded_everygram_pipeline on the pool rows of score/testdata/texts.json and
// asked lm.score(word, context) for every token and the closing </s> of each
// target and pool row, and lm.perplexity for the rows it gives a finite one;
// values written by testdata/nltk_ref.py. NLTK gives probability 0 to a
// word outside the training vocabulary, so the rows holding one (targets 0
// to 4) are checked token by token (0 included), and their log-probability
// and perplexity, which NLTK leaves at -inf and inf, are not.
func TestAgainstNLTK(t *testing.T) {
	const tol = 1e-12
	var f nltkFixture
	readJSON(t, filepath.Join("testdata", "nltk_ref.json"), &f)
	t.Logf("fixture versions: %v", f.Versions)
	pool, targets := fixtureTexts(t)
	for r := range pool {
		if !slices.Equal(pool[r], f.PoolTokens[r]) {
			t.Fatalf("pool row %d tokens %q, script %q", r, pool[r], f.PoolTokens[r])
		}
	}
	for r := range targets {
		if !slices.Equal(targets[r], f.TargetTokens[r]) {
			t.Fatalf("target %d tokens %q, script %q", r, targets[r], f.TargetTokens[r])
		}
	}
	if len(f.Runs) == 0 {
		t.Fatal("no runs in the fixture")
	}
	defined := 0
	for _, run := range f.Runs {
		m := mustTrain(t, pool, Options{Order: run.Order, Smoothing: NLTKKneserNey, Discount: run.Discount})
		for _, row := range run.Rows {
			tokens := pool[row.Row]
			if row.Set == "target" {
				tokens = targets[row.Row]
			}
			got := probs(m, tokens)
			if len(got) != len(row.Probs) {
				t.Fatalf("order %d d=%v %s %d: %d probabilities, NLTK %d", run.Order, run.Discount, row.Set, row.Row, len(got), len(row.Probs))
			}
			for i, want := range row.Probs {
				if !closeRel(got[i], want, tol) {
					t.Errorf("order %d d=%v %s %d symbol %d: p = %v, NLTK %v", run.Order, run.Discount, row.Set, row.Row, i, got[i], want)
				}
			}
			lp := m.LogProb(tokens)
			if row.LnProb == nil {
				if !math.IsInf(lp, -1) {
					t.Errorf("order %d d=%v %s %d: LogProb = %v, NLTK -inf", run.Order, run.Discount, row.Set, row.Row, lp)
				}
				continue
			}
			defined++
			if !closeRel(lp, *row.LnProb, tol) {
				t.Errorf("order %d d=%v %s %d: LogProb = %v, NLTK %v", run.Order, run.Discount, row.Set, row.Row, lp, *row.LnProb)
			}
			if pp := m.Perplexity(tokens); !closeRel(pp, *row.Perplexity, 1e-11) {
				t.Errorf("order %d d=%v %s %d: Perplexity = %v, NLTK %v", run.Order, run.Discount, row.Set, row.Row, pp, *row.Perplexity)
			}
		}
	}
	if defined == 0 {
		t.Fatal("no row with a finite NLTK log-probability")
	}
}
