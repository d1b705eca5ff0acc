package ngram

import (
	"math"
	"testing"
)

// The target model is trained on the texts.json targets and the pool model
// on its pool rows (outside texts, see fixtureTexts); Explain must add up
// to Score and agree with each model's own LogProb.
func TestExplainAddsUpToScore(t *testing.T) {
	pool, targets := fixtureTexts(t)
	for order := 1; order <= MaxOrder; order++ {
		tm := mustTrain(t, targets, Options{Order: order})
		pm := mustTrain(t, pool, Options{Order: order})
		for _, row := range append(append([][]string{{}}, pool...), targets...) {
			s := Score(tm, pm, row)
			if ced := CrossEntropyDifference(tm, pm, row); s != -ced {
				t.Fatalf("Score = %v, CrossEntropyDifference = %v", s, ced)
			}
			if want := (tm.LogProb(row) - pm.LogProb(row)) / float64(len(row)+1); !closeRel(s, want, 1e-12) {
				t.Errorf("order %d %q: Score = %v, from LogProb %v", order, row, s, want)
			}
			parts := Explain(tm, pm, row)
			if len(parts) != len(row)+1 {
				t.Fatalf("%d parts for %d tokens", len(parts), len(row))
			}
			sum, st, sp := 0.0, 0.0, 0.0
			for i, p := range parts {
				want := "</s>"
				if i < len(row) {
					want = row[i]
				}
				if p.Pos != i || p.Token != want || p.TargetOrder > order || p.PoolOrder > order {
					t.Fatalf("part %d = %+v", i, p)
				}
				sum += p.Part
				st += p.Target
				sp += p.Pool
			}
			if !closeRel(sum, s, 1e-12) || st != tm.LogProb(row) || sp != pm.LogProb(row) {
				t.Errorf("order %d %q: parts add to %v, %v, %v; Score %v, LogProbs %v, %v", order, row, sum, st, sp, s, tm.LogProb(row), pm.LogProb(row))
			}
		}
	}
}

// A model's perplexity on its own training rows is lower than on rows it
// never saw: here the pool model on its pool rows against the Latin target
// (texts.json target 4), whose words are all outside the pool.
func TestCrossEntropyOrdersRows(t *testing.T) {
	pool, targets := fixtureTexts(t)
	m := mustTrain(t, pool, Options{Order: 3})
	latin := m.CrossEntropy(targets[4])
	for r, row := range pool {
		if h := m.CrossEntropy(row); !(h < latin) {
			t.Errorf("pool row %d: H = %v, Latin row %v", r, h, latin)
		}
		if pp := m.Perplexity(row); !closeRel(pp, math.Exp(m.CrossEntropy(row)), 1e-15) {
			t.Errorf("pool row %d: perplexity %v", r, pp)
		}
	}
	// Every word of the Latin row falls to the unknown class.
	for _, p := range Explain(m, m, targets[4])[:3] {
		if p.TargetOrder != 0 {
			t.Errorf("%q matched order %d", p.Token, p.TargetOrder)
		}
	}
}

func TestScoringDoesNotAllocate(t *testing.T) {
	pool, targets := fixtureTexts(t)
	tm := mustTrain(t, targets, Options{Order: 5})
	pm := mustTrain(t, pool, Options{Order: 5})
	row := pool[5]
	if a := testing.AllocsPerRun(20, func() { Score(tm, pm, row) }); a != 0 {
		t.Errorf("Score allocates %v times per row", a)
	}
}

// The FLOP charges are the formulas their comments state.
func TestFLOPsPerToken(t *testing.T) {
	for _, tc := range []struct {
		order       int
		score, gram float64
	}{
		{1, 8 + 4 + 2 + 20, 8 + 4 + 12},
		{3, 8 + 12 + 6 + 20, 8 + 12 + 36},
		{5, 8 + 20 + 10 + 20, 8 + 20 + 60},
	} {
		if got := FLOPsPerToken(tc.order); got != tc.score {
			t.Errorf("FLOPsPerToken(%d) = %v, want %v", tc.order, got, tc.score)
		}
		if got := TrainFLOPsPerToken(tc.order); got != tc.gram {
			t.Errorf("TrainFLOPsPerToken(%d) = %v, want %v", tc.order, got, tc.gram)
		}
	}
}
