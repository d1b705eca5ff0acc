package ngram

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// Source: the closed form of Chen and Goodman (1998), "An empirical study of
// smoothing techniques for language modeling", TR-10-98 (formulas as stated there for modified Kneser–Ney):
// Y = n1/(n1+2·n2), D1 = 1 − 2Y·n2/n1, D2 = 2 − 3Y·n3/n2, D3+ = 3 − 4Y·n4/n3,
// worked by hand on pool rows 0–3 of score/testdata/texts.json (scikit-learn's
// documentation example), analysed:
//
//	this is the first document
//	this document is the second document
//	and this is the third one
//	is this the first document
//
// Order 2, padded with one <s> and one </s>: the bigrams and their counts are
// "is the" 3, "document </s>" 3; "<s> this", "this is", "the first",
// "first document" 2; and 12 seen once ("this document", "document is",
// "the second", "second document", "<s> and", "and this", "the third",
// "third one", "one </s>", "<s> is", "is this", "this the"). So n1 = 12,
// n2 = 4, n3 = 2, n4 = 0: Y = 12/20 = 0.6, D1 = 1 − 2·0.6·4/12 = 0.6,
// D2 = 2 − 3·0.6·2/4 = 1.1, D3+ = 3 − 4·0.6·0/2 = 3.
//
// Its unigrams count continuations, the distinct words before each: this
// {<s>, and, is} 3, is {this, document, <s>} 3, document {first, this,
// second} 3, the {is, this} 2, </s> {document, one} 2, and first, second,
// and, third, one 1. So n1 = 5, n2 = 2, n3 = 3, n4 = 0: Y = 5/9,
// D1 = 1 − 2·(5/9)·2/5 = 5/9, D2 = 2 − 3·(5/9)·3/2 = −0.5, which is out of
// range and replaced by 1, D3+ = 3 − 0 = 3.
//
// Order 3, padded with two <s>: its bigram level keeps counts for bigrams
// starting with <s> ("<s> this" 2, "<s> and" 1, "<s> is" 1) and counts
// continuations for the others from the trigram types: "this is" {<s>, and},
// "is the" {this, document}, "the first" {is, this}, "document </s>" {first,
// second} 2, and "first document", "this document", "document is", "the
// second", "second document", "and this", "the third", "third one",
// "one </s>", "is this", "this the" 1. So n1 = 13, n2 = 5, n3 = n4 = 0:
// Y = 13/23, D1 = 1 − 2·(13/23)·5/13 = 13/23, D2 = 2 − 0 = 2, and D3+
// divides by n3 = 0 and is replaced by 1.5. Its trigrams: "<s> <s> this",
// "this is the", "the first document", "first document </s>" 2 and 18 seen
// once, so Y = 18/26, D1 = 1 − 2·(18/26)·4/18 = 18/26, D2 = 2, D3+ = 1.5.
func TestDiscountsWorkedExample(t *testing.T) {
	pool, _ := fixtureTexts(t)
	rows := pool[:4]
	for _, tc := range []struct {
		order, level int
		want         [3]float64
	}{
		{2, 2, [3]float64{0.6, 1.1, 3}},
		{2, 1, [3]float64{5.0 / 9, 1, 3}},
		{3, 3, [3]float64{18.0 / 26, 2, 1.5}},
		{3, 2, [3]float64{13.0 / 23, 2, 1.5}},
		{3, 1, [3]float64{5.0 / 9, 1, 3}},
	} {
		m := mustTrain(t, rows, Options{Order: tc.order})
		for r, want := range tc.want {
			if got := m.discounts[tc.level][r]; !closeRel(got, want, 1e-15) {
				t.Errorf("order %d level %d D%d = %v, by hand %v", tc.order, tc.level, r+1, got, want)
			}
		}
	}
}

// Source: the interpolation recursion of Chen and Goodman (1998), TR-10-98,
// worked by hand on the order-2 model of TestDiscountsWorkedExample.
// After "the" come first (2), second (1) and third (1): total 4, so
// alpha(first|the) = (2 − D2)/4 = 0.9/4 = 0.225 and
// γ(the) = (D1·2 + D2·1)/4 = (1.2 + 1.1)/4 = 0.575. The unigram continuation
// counts add up to 18; first has 1, so alpha(first) = (1 − 5/9)/18 = 2/81, and
// γ() = (5/9·5 + 1·2 + 3·3)/18 = 62/81 spreads over the 10 words (9 words and
// </s>) and the unknown class: p(first) = 2/81 + (62/81)/11 = 28/297. So
// p(first|the) = 0.225 + 0.575·28/297, and an unknown word after "the" gets
// 0.575·(62/81)/11.
func TestProbabilityWorkedExample(t *testing.T) {
	pool, _ := fixtureTexts(t)
	m := mustTrain(t, pool[:4], Options{Order: 2})
	for _, tc := range []struct {
		word string
		want float64
	}{
		{"first", 0.225 + 0.575*28/297},
		{"latin", 0.575 * 62 / 81 / 11},
	} {
		s := m.start
		m.next(&s, m.vocab["the"])
		if got := m.prob(m.vocab[tc.word], s); !closeRel(got, tc.want, 1e-14) {
			t.Errorf("p(%s|the) = %v, by hand %v", tc.word, got, tc.want)
		}
	}
}

// Source: Chen and Goodman's closed form (TR-10-98) on made-up count
// of counts, for the cases it leaves undefined or out of range; the
// replacements r/2 are common practice.
func TestDiscountFallbacks(t *testing.T) {
	for _, tc := range []struct {
		name           string
		n1, n2, n3, n4 float64
		want           [3]float64
	}{
		{"formula", 10, 4, 2, 1, [3]float64{1 - 2*(10.0/18)*4/10, 2 - 3*(10.0/18)*2/4, 3 - 4*(10.0/18)*1/2}},
		{"no singletons", 0, 3, 2, 1, [3]float64{0.5, 1, 1.5}},
		{"no doubletons", 4, 0, 2, 1, [3]float64{1, 1, 3 - 4*1.0*1/2}},
		{"no threes", 4, 2, 0, 0, [3]float64{0.5, 2, 1.5}},
		{"D2 negative", 5, 2, 3, 0, [3]float64{5.0 / 9, 1, 3}},
	} {
		got := discounts(tc.n1, tc.n2, tc.n3, tc.n4)
		for r := range got {
			if !closeRel(got[r], tc.want[r], 1e-15) {
				t.Errorf("%s: D%d = %v, want %v", tc.name, r+1, got[r], tc.want[r])
			}
		}
	}
}

// Source: the axioms of probability; Chen and Goodman (1998) build every
// conditional distribution of interpolated Kneser–Ney to sum to 1. Checked for
// every context of the texts.json rows (plus ones with unknown words) over the
// vocabulary, </s> and the unknown class.
func TestDistributionsSumToOne(t *testing.T) {
	pool, targets := fixtureTexts(t)
	rows := append(append([][]string{}, pool...), targets...)
	probe := append(append([][]string{}, rows...), []string{"unseen", "the", "zzz", "of", "it", "was"})
	for _, train := range []struct {
		name string
		rows [][]string
	}{{"pool", pool}, {"pool and targets", rows}, {"sklearn example", pool[:4]}} {
		for order := 1; order <= MaxOrder; order++ {
			m := mustTrain(t, train.rows, Options{Order: order})
			words := []uint32{unkID, eosID}
			for _, id := range m.vocab {
				words = append(words, id)
			}
			checked := 0
			for _, row := range probe {
				s := m.start
				for i := 0; i <= len(row); i++ {
					sum := 0.0
					for _, w := range words {
						p := m.prob(w, s)
						if !(p > 0 && p <= 1) {
							t.Fatalf("%s order %d: p = %v", train.name, order, p)
						}
						sum += p
					}
					if math.Abs(sum-1) > 1e-12 {
						t.Errorf("%s order %d: before %q in %q sums to %v", train.name, order, append(row, "</s>")[i], row, sum)
					}
					checked++
					if i < len(row) {
						m.next(&s, m.vocab[row[i]])
					}
				}
			}
			if checked == 0 {
				t.Fatal("no context checked")
			}
		}
	}
}

// bruteKN is interpolated modified Kneser–Ney written straight from the
// formulas of Chen and Goodman (1998) (see ModifiedKneserNey) over n-grams
// kept as joined strings, to check the hashed tables against.
type bruteKN struct {
	n      int
	adj    []map[string]float64 // by order: n-gram → count used at that order
	total  []map[string]float64 // by order: context → sum of adj over words
	mass   []map[string]float64 // by order: context → sum of discounts
	d      [][3]float64
	uni    float64 // 1/(V+1)
	inVoca map[string]bool
}

const sep = "\x00"

func newBruteKN(rows [][]string, n int) *bruteKN {
	raw := make([]map[string]float64, n+2)
	for k := range raw {
		raw[k] = map[string]float64{}
	}
	b := &bruteKN{n: n, inVoca: map[string]bool{"</s>": true}}
	for _, r := range rows {
		p := make([]string, 0, len(r)+n)
		for range n - 1 {
			p = append(p, "<s>")
		}
		p = append(append(p, r...), "</s>")
		for _, w := range r {
			b.inVoca[w] = true
		}
		for i := n - 1; i < len(p); i++ {
			for k := 1; k <= n; k++ {
				raw[k][strings.Join(p[i-k+1:i+1], sep)]++
			}
		}
	}
	b.adj = make([]map[string]float64, n+1)
	for k := 1; k <= n; k++ {
		b.adj[k] = map[string]float64{}
		for g, c := range raw[k] {
			if k == n || strings.HasPrefix(g, "<s>"+sep) || g == "<s>" {
				b.adj[k][g] = c
			}
		}
		if k < n {
			for g := range raw[k+1] {
				suffix := g[strings.Index(g, sep)+1:]
				if !strings.HasPrefix(suffix, "<s>"+sep) {
					b.adj[k][suffix]++
				}
			}
		}
	}
	b.d = make([][3]float64, n+1)
	b.total = make([]map[string]float64, n+1)
	b.mass = make([]map[string]float64, n+1)
	for k := 1; k <= n; k++ {
		var coc [5]float64
		for _, a := range b.adj[k] {
			if a <= 4 {
				coc[int(a)]++
			}
		}
		b.d[k] = discounts(coc[1], coc[2], coc[3], coc[4])
		b.total[k], b.mass[k] = map[string]float64{}, map[string]float64{}
		for g, a := range b.adj[k] {
			h := ""
			if i := strings.LastIndex(g, sep); i >= 0 {
				h = g[:i]
			}
			b.total[k][h] += a
			b.mass[k][h] += b.d[k][int(min(a, 3))-1]
		}
	}
	b.uni = 1 / float64(len(b.inVoca)+1)
	return b
}

// prob returns p(w | hist), hist oldest first.
func (b *bruteKN) prob(w string, hist []string) float64 {
	p := b.uni
	for k := 1; k <= b.n; k++ {
		h := strings.Join(hist[len(hist)-(k-1):], sep)
		tot := b.total[k][h]
		if tot == 0 {
			break
		}
		g := w
		if k > 1 {
			g = h + sep + w
		}
		alpha := 0.0
		if a := b.adj[k][g]; a > 0 {
			alpha = (a - b.d[k][int(min(a, 3))-1]) / tot
		}
		p = alpha + b.mass[k][h]/tot*p
	}
	return p
}

// Source: Chen and Goodman's definition (TR-10-98), computed
// directly from string-keyed counts by bruteKN, against the hashed tables,
// on every position of the texts.json rows, for orders 1 to 5.
func TestMatchesDirectDefinition(t *testing.T) {
	pool, targets := fixtureTexts(t)
	rows := append(append([][]string{}, pool...), targets...)
	for order := 1; order <= MaxOrder; order++ {
		for _, train := range [][][]string{pool, rows[:4], rows} {
			m := mustTrain(t, train, Options{Order: order})
			b := newBruteKN(train, order)
			for k := 1; k <= order; k++ {
				if m.discounts[k] != b.d[k] {
					t.Errorf("order %d level %d: discounts %v, direct %v", order, k, m.discounts[k], b.d[k])
				}
			}
			for _, row := range rows {
				got := probs(m, row)
				hist := make([]string, 0, len(row)+order)
				for range order - 1 {
					hist = append(hist, "<s>")
				}
				for i, w := range append(append([]string{}, row...), "</s>") {
					if want := b.prob(w, hist); !closeRel(got[i], want, 1e-12) {
						t.Errorf("order %d: p(%s | %v) = %v, direct %v", order, w, hist[len(hist)-(order-1):], got[i], want)
					}
					hist = append(hist, w)
				}
			}
		}
	}
}

func TestOptionErrors(t *testing.T) {
	for _, tc := range []struct {
		name string
		o    Options
		want error
	}{
		{"modified order 1", Options{Order: 1}, nil},
		{"modified order 5", Options{Order: 5}, nil},
		{"order 0", Options{}, ErrInvalidOptions},
		{"order 6", Options{Order: 6}, ErrInvalidOptions},
		{"modified with a discount", Options{Order: 3, Discount: 0.1}, ErrInvalidOptions},
		{"nltk", Options{Order: 2, Smoothing: NLTKKneserNey, Discount: 0.1}, nil},
		{"nltk order 1", Options{Order: 1, Smoothing: NLTKKneserNey, Discount: 0.1}, ErrInvalidOptions},
		{"nltk discount 1", Options{Order: 3, Smoothing: NLTKKneserNey, Discount: 1}, nil},
		{"nltk discount above 1", Options{Order: 3, Smoothing: NLTKKneserNey, Discount: 1.5}, ErrInvalidOptions},
		{"nltk discount NaN", Options{Order: 3, Smoothing: NLTKKneserNey, Discount: math.NaN()}, ErrInvalidOptions},
		{"unknown smoothing", Options{Order: 3, Smoothing: 7}, ErrInvalidOptions},
	} {
		_, err := NewCounter(tc.o)
		if !errors.Is(err, tc.want) {
			t.Errorf("%s: NewCounter = %v, want %v", tc.name, err, tc.want)
		}
	}
	c, err := NewCounter(Options{Order: 3})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := c.Model(); !errors.Is(err, ErrNoData) {
		t.Errorf("Model of no rows = %v, want ErrNoData", err)
	}
}
