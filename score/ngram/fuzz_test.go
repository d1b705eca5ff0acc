package ngram

import (
	"math"
	"strings"
	"testing"
)

// FuzzTrainScore trains on arbitrary rows (lines of space-separated tokens,
// empty tokens and invalid UTF-8 included) and scores them and a row of
// partly unseen tokens. It must not panic. With modified Kneser–Ney every
// row's log-probability and score are finite, every probability equals the
// direct definition's (bruteKN, after Chen and Goodman 1998) and, for small
// vocabularies, every distribution met lies in (0, 1] and sums to 1. With
// NLTK's variant no log-probability is NaN or +Inf.
func FuzzTrainScore(f *testing.F) {
	f.Add("this is the first document\nthis document is the second document", uint8(3), false, uint8(25))
	f.Add("a a a a\n\nb a", uint8(5), true, uint8(255))
	f.Add(" \n  x", uint8(1), false, uint8(0))
	f.Add("<s> </s>\n</s> <s> <s>", uint8(2), true, uint8(0))
	f.Fuzz(func(t *testing.T, text string, order uint8, nltk bool, d uint8) {
		if len(text) > 4096 {
			return
		}
		o := Options{Order: int(order%MaxOrder) + 1}
		if nltk {
			o = Options{Order: int(order%(MaxOrder-1)) + 2, Smoothing: NLTKKneserNey, Discount: float64(d) / 255}
		}
		var rows [][]string
		for _, line := range strings.Split(text, "\n") {
			rows = append(rows, strings.Split(line, " "))
		}
		m, err := Train(rows, o)
		if err != nil {
			t.Fatal(err)
		}
		other, err := Train(rows[len(rows)/2:], o)
		if err != nil {
			t.Fatal(err)
		}
		probe := append(rows, []string{"never", rows[0][0], "seen"})
		for _, row := range probe {
			lp := m.LogProb(row)
			s := Score(m, other, row)
			parts := Explain(m, other, row)
			if nltk {
				// Score is NaN here when neither model knows a word.
				if olp := other.LogProb(row); math.IsNaN(lp) || math.IsInf(lp, 1) || math.IsNaN(olp) || math.IsInf(olp, 1) {
					t.Fatalf("%q: LogProb %v and %v", row, lp, olp)
				}
				continue
			}
			if math.IsNaN(lp) || math.IsInf(lp, 0) || lp > 1e-9 || math.IsNaN(s) || math.IsInf(s, 0) {
				t.Fatalf("%q: LogProb %v, Score %v", row, lp, s)
			}
			for _, p := range parts {
				if !(p.Target <= 1e-12) || math.IsInf(p.Target, 0) || math.IsInf(p.Pool, 0) {
					t.Fatalf("%q: part %+v", row, p)
				}
			}
		}
		if nltk {
			return
		}
		// Against Chen and Goodman's definition computed directly (bruteKN),
		// when no token can be mistaken for its boundary strings.
		direct := true
		for _, row := range rows {
			for _, tok := range row {
				direct = direct && tok != "<s>" && tok != "</s>" && !strings.Contains(tok, sep)
			}
		}
		if direct {
			b := newBruteKN(rows, o.Order)
			for _, row := range probe {
				got := probs(m, row)
				hist := make([]string, 0, len(row)+o.Order)
				for range o.Order - 1 {
					hist = append(hist, "<s>")
				}
				for i, w := range append(append([]string{}, row...), "</s>") {
					if want := b.prob(w, hist); !closeRel(got[i], want, 1e-9) {
						t.Fatalf("order %d: p(%q | %q) = %v, direct %v", o.Order, w, hist, got[i], want)
					}
					hist = append(hist, w)
				}
			}
		}
		if len(m.vocab) > 64 {
			return
		}
		words := []uint32{unkID, eosID}
		for _, id := range m.vocab {
			words = append(words, id)
		}
		for _, row := range probe {
			s := m.start
			for i := 0; i <= len(row); i++ {
				sum := 0.0
				for _, w := range words {
					p := m.prob(w, s)
					if !(p > 0 && p <= 1) {
						t.Fatalf("p = %v", p)
					}
					sum += p
				}
				if math.Abs(sum-1) > 1e-9 {
					t.Fatalf("before symbol %d of %q: sum %v", i, row, sum)
				}
				if i < len(row) {
					m.next(&s, m.vocab[row[i]])
				}
			}
		}
	})
}
