package ngram

import (
	"errors"
	"fmt"
	"math"
)

// MaxOrder is the longest n-gram a model may use.
const MaxOrder = 5

// Word ids. Real words start at firstWordID; the boundary symbols have ids of
// their own that no token maps to, so a caller's token spelled "<s>" or
// "</s>" is an ordinary word and never a boundary.
const (
	unkID       uint32 = 0 // any word outside the training vocabulary
	bosID       uint32 = 1 // <s>, the left padding
	eosID       uint32 = 2 // </s>, the end of a row
	firstWordID uint32 = 3
)

// Errors reported by this package; test with errors.Is.
var (
	// ErrInvalidOptions reports an order, smoothing or discount out of range.
	ErrInvalidOptions = errors.New("invalid n-gram options")
	// ErrNoData reports a model asked of a Counter that was given no rows.
	ErrNoData = errors.New("no training rows")
	// ErrTooLarge reports training data past the 32-bit ids and counts the
	// tables use (about four billion words, n-grams or positions).
	ErrTooLarge = errors.New("training data too large")
)

// Smoothing selects how counts become probabilities.
type Smoothing uint8

const (
	// ModifiedKneserNey is interpolated modified Kneser–Ney smoothing as
	// defined by Chen and Goodman (1998), "An empirical study of smoothing
	// techniques for language modeling", TR-10-98:
	//
	//	p(w|h) = (c(hw) − D(c(hw)))/Σ_v c(hv) + γ(h)·p(w|h′)
	//	γ(h)   = (D1·N1(h•) + D2·N2(h•) + D3+·N3+(h•)) / Σ_v c(hv)
	//
	// where h′ drops the oldest word of h and N_r(h•) counts the words seen
	// after h exactly r times (r or more for 3+). Per order, from the numbers
	// n1..n4 of n-grams counted exactly 1..4 times,
	//
	//	Y = n1/(n1 + 2·n2), D1 = 1 − 2Y·n2/n1, D2 = 2 − 3Y·n3/n2, D3+ = 3 − 4Y·n4/n3.
	//
	// A discount whose formula divides by zero or falls outside (0, r] for
	// D_r (small samples do that) is replaced by r/2, that is 0.5, 1 and 1.5
	// (common practice), so that every probability stays positive.
	//
	// The highest order counts n-grams; lower orders count continuations,
	// the number of distinct words seen before the n-gram, except for
	// n-grams that begin with <s>, which nothing can precede and which keep
	// their counts (common practice). A row is padded with order−1 <s> and
	// one </s>; <s> is never predicted.
	//
	// Unknown words: the unigram level interpolates with the uniform
	// distribution over the vocabulary (the training words and </s>) plus
	// one class for every unknown word, so p(unknown|h) is the product of
	// the γ of the contexts found times 1/(V+1), and each conditional
	// distribution sums to 1 over the vocabulary and the unknown class.
	ModifiedKneserNey Smoothing = iota
	// NLTKKneserNey reproduces nltk.lm.KneserNeyInterpolated of NLTK 3.8,
	// interpolated Kneser–Ney with one discount d for every count, for
	// checking against that library. Its training pads each row with
	// order−1 <s> and order−1 </s> and counts every n-gram of the padded
	// row, pads included; the unigram level is the continuation
	// distribution with no discount; the highest order discounts counts and
	// the middle orders continuation counts, and γ(h) is d times the number
	// of distinct words seen after h divided by that order's total. Words
	// outside the vocabulary get probability 0 (log −Inf), as in NLTK, so
	// Score is NaN for a row holding a word neither model knows; and after
	// <s> contexts a distribution can sum to more than 1. Select with
	// ModifiedKneserNey.
	NLTKKneserNey
)

var smoothingNames = [...]string{ModifiedKneserNey: "modified-kneser-ney", NLTKKneserNey: "nltk-kneser-ney"}

func (s Smoothing) String() string {
	if int(s) < len(smoothingNames) {
		return smoothingNames[s]
	}
	return fmt.Sprintf("Smoothing(%d)", uint8(s))
}

// Options configures training.
type Options struct {
	// Order is the n of the n-grams: 1 to MaxOrder for ModifiedKneserNey,
	// 2 to MaxOrder for NLTKKneserNey (whose unigram level needs bigrams).
	Order     int
	Smoothing Smoothing
	// Discount is NLTKKneserNey's single discount, 0 ≤ d ≤ 1 (NLTK's
	// default is 0.1). ModifiedKneserNey estimates its discounts from the
	// counts and needs this to be 0.
	Discount float64
}

// Validate reports whether o names a known smoothing with an order and
// discount it accepts.
func (o Options) Validate() error {
	switch {
	case int(o.Smoothing) >= len(smoothingNames):
		return fmt.Errorf("ngram: %v: %w", o.Smoothing, ErrInvalidOptions)
	case o.Smoothing == ModifiedKneserNey && (o.Order < 1 || o.Order > MaxOrder):
		return fmt.Errorf("ngram: order %d, want 1 to %d: %w", o.Order, MaxOrder, ErrInvalidOptions)
	case o.Smoothing == NLTKKneserNey && (o.Order < 2 || o.Order > MaxOrder):
		return fmt.Errorf("ngram: order %d with %v, want 2 to %d: %w", o.Order, o.Smoothing, MaxOrder, ErrInvalidOptions)
	case o.Smoothing == ModifiedKneserNey && o.Discount != 0:
		return fmt.Errorf("ngram: discount %v with %v, which estimates its own: %w", o.Discount, o.Smoothing, ErrInvalidOptions)
	case o.Smoothing == NLTKKneserNey && !(o.Discount >= 0 && o.Discount <= 1):
		return fmt.Errorf("ngram: discount %v, want 0 <= d <= 1: %w", o.Discount, ErrInvalidOptions)
	}
	return nil
}

// Model is a trained n-gram model. It is read-only, so one Model may score
// rows on many goroutines at once.
//
// Its n-grams live in one hash map with exact uint64 keys, so there are no
// collisions to handle: every context (the words before a predicted one) has
// a dense id, and the entry of an n-gram is found from its context's id and
// its last word as id<<32 | word. An entry also holds the id the n-gram
// itself has as a context, so after scoring a word the contexts of the next
// one are known without probing: scoring a word takes one probe per order,
// stopping at the first n-gram the model has not seen, since every suffix of
// a seen n-gram is seen too.
type Model struct {
	opt   Options
	vocab map[string]uint32
	uni   []entry          // by word id: the unigram entries, the empty context's
	entry map[uint64]entry // context id<<32 | word → entry, for contexts of 1 word or more
	gamma []float64        // by context id: the weight of the next lower order
	p0    float64          // the distribution below the unigrams: uniform, or 0 for NLTKKneserNey
	start state            // the contexts at the start of a row: runs of <s>
	// discounts[k] are D1, D2 and D3+ used at order k (all d for NLTKKneserNey).
	discounts [MaxOrder + 1][3]float64
}

// entry is one n-gram: its discounted probability at its order, and its id
// as a context (0 when nothing was seen after it).
type entry struct {
	alpha float64
	ctx   uint32
	seen  bool // for uni, where every word has a slot
}

// state holds the contexts of the next word: ctx[k-1] is the id of its
// last k words, for k = 1..n, the longest the model has seen.
type state struct {
	ctx [MaxOrder - 1]uint32
	n   int
}

// next returns p(w | the contexts in s) and the length of the longest
// n-gram ending in w that the model holds (0 when w was never predicted in
// training), and moves s on past w.
func (m *Model) next(s *state, w uint32) (float64, int) {
	// Word ids are dense, so the unigrams are a slice; ids from another
	// model's vocabulary never reach here.
	e := m.uni[w]
	ok := e.seen
	matched := 0
	if ok {
		matched = 1
	}
	// a + γ·p is also NLTK's recursion (alpha + gamma·lower), evaluated in
	// the same order so that the floats agree; a missing entry is alpha 0
	// there too, and a missing context is alpha 0, gamma 1.
	p := e.alpha + m.gamma[0]*m.p0
	var t state
	if ok && e.ctx != 0 && m.opt.Order > 1 {
		t.ctx[0], t.n = e.ctx, 1
	}
	for k := 1; k <= s.n; k++ {
		c := s.ctx[k-1]
		a := 0.0
		if matched == k {
			if e, ok := m.entry[uint64(c)<<32|uint64(w)]; ok {
				a = e.alpha
				matched = k + 1
				if t.n == k && e.ctx != 0 && k+1 < m.opt.Order {
					t.ctx[k], t.n = e.ctx, k+1
				}
			}
		}
		p = a + m.gamma[c]*p
	}
	*s = t
	return p, matched
}

// LogProb returns the natural log of the probability of a row: the sum over
// its tokens and the closing </s> of ln p(word | the order−1 words before
// it), the row padded on the left with <s>.
func (m *Model) LogProb(tokens []string) float64 {
	st := m.start
	s := 0.0
	for _, t := range tokens {
		p, _ := m.next(&st, m.vocab[t]) // unkID when absent
		s += math.Log(p)
	}
	p, _ := m.next(&st, eosID)
	return s + math.Log(p)
}

// CrossEntropy returns the row's cross-entropy per predicted symbol in nats:
// −LogProb(tokens)/(len(tokens)+1), the +1 being the closing </s>.
func (m *Model) CrossEntropy(tokens []string) float64 {
	return -m.LogProb(tokens) / float64(len(tokens)+1)
}

// Perplexity returns exp(CrossEntropy(tokens)).
func (m *Model) Perplexity(tokens []string) float64 {
	return math.Exp(m.CrossEntropy(tokens))
}
