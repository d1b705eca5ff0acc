package ngram

import (
	"fmt"
	"maps"
	"math"
	"strings"
)

// Counter counts the n-grams of training rows, one row at a time, and turns
// them into a Model.
//
// Memory grows with the distinct n-grams seen, at most Order per training
// symbol: about 45 bytes each while counting (a table entry and a 28-byte
// record) and 40 in the Model (measured on 3,000 rows of 40 Zipf-distributed
// words at order 5: 23 MB counting, 16 MB for the model); the rows
// themselves are not kept. Sluice trains a target model on a few thousand
// rows and a pool model on a random sample of about the same size, so both
// stay small.
type Counter struct {
	opt   Options
	vocab map[string]uint32
	// trie finds an n-gram from its suffix (the n-gram without its oldest
	// word) and its oldest word: suffix id<<32 | word → id. Id 0 is the
	// empty n-gram. An n-gram's suffix is always created before it, so ids
	// ascend with order along every suffix chain.
	trie      map[uint64]uint32
	grams     []gram
	padded    []uint32
	rows      int
	positions uint64
}

type gram struct {
	count  uint32 // occurrences at counted positions
	suffix uint32 // the n-gram without its oldest word
	prefix uint32 // the n-gram without its newest word: its context
	first  uint32 // oldest word
	last   uint32 // newest word: the one predicted
	order  uint8
}

// NewCounter returns an empty Counter for o.
func NewCounter(o Options) (*Counter, error) {
	if err := o.Validate(); err != nil {
		return nil, err
	}
	return &Counter{
		opt:   o,
		vocab: make(map[string]uint32),
		trie:  make(map[uint64]uint32),
		grams: []gram{{}},
	}, nil
}

// endPads is how many </s> end a training row.
func (c *Counter) endPads() int {
	if c.opt.Smoothing == NLTKKneserNey {
		return c.opt.Order - 1
	}
	return 1
}

// Add counts one row of tokens. Tokens are kept by value, so the caller may
// reuse their memory.
func (c *Counter) Add(tokens []string) error {
	n := c.opt.Order
	size := uint64(len(tokens) + n - 1 + c.endPads())
	if uint64(len(c.grams))+size*uint64(n) > math.MaxUint32 ||
		uint64(len(c.vocab))+uint64(len(tokens)) > math.MaxUint32-uint64(firstWordID) ||
		c.positions+size > math.MaxUint32 {
		return fmt.Errorf("ngram: row %d of %d tokens: %w", c.rows, len(tokens), ErrTooLarge)
	}
	p := c.padded[:0]
	for range n - 1 {
		p = append(p, bosID)
	}
	for _, t := range tokens {
		id, ok := c.vocab[t]
		if !ok {
			id = firstWordID + uint32(len(c.vocab))
			// A clone, so that a token cut from a large line does not keep
			// the line alive.
			c.vocab[strings.Clone(t)] = id
		}
		p = append(p, id)
	}
	for range c.endPads() {
		p = append(p, eosID)
	}
	c.padded = p

	// NLTK counts every n-gram of the padded row; modified Kneser–Ney counts
	// those that end on a predicted word and only keeps the others (runs of
	// <s>) as contexts.
	counted := n - 1
	if c.opt.Smoothing == NLTKKneserNey {
		counted = 0
	}
	// prev[k] is the k-gram that ended one position earlier: the context of
	// the (k+1)-gram ending here.
	var prev, cur [MaxOrder + 1]uint32
	for i := range p {
		id := uint32(0)
		for k := 1; k <= n && k <= i+1; k++ {
			first := p[i-k+1]
			key := uint64(id)<<32 | uint64(first)
			next, ok := c.trie[key]
			if !ok {
				next = uint32(len(c.grams))
				c.grams = append(c.grams, gram{suffix: id, prefix: prev[k-1], first: first, last: p[i], order: uint8(k)})
				c.trie[key] = next
			}
			if i >= counted {
				c.grams[next].count++
			}
			cur[k] = next
			id = next
		}
		prev = cur
	}
	c.rows++
	c.positions += size
	return nil
}

// Model builds a model from the rows counted so far. The Counter stays
// usable: more rows may be added and another model built.
func (c *Counter) Model() (*Model, error) {
	if c.rows == 0 {
		return nil, fmt.Errorf("ngram: %w", ErrNoData)
	}
	n := c.opt.Order
	nltk := c.opt.Smoothing == NLTKKneserNey
	g := c.grams

	// cont[i]: distinct words seen before n-gram i, from the counted n-grams
	// one longer.
	cont := make([]uint32, len(g))
	for i := 1; i < len(g); i++ {
		if g[i].order >= 2 && g[i].count > 0 {
			cont[g[i].suffix]++
		}
	}
	// adj is the count each order's estimate uses.
	adj := func(i int) uint32 {
		switch {
		case int(g[i].order) == n:
			return g[i].count
		case !nltk && g[i].first == bosID:
			return g[i].count
		}
		return cont[i]
	}

	m := &Model{opt: c.opt, vocab: maps.Clone(c.vocab)}
	if nltk {
		for k := 1; k <= n; k++ {
			m.discounts[k] = [3]float64{c.opt.Discount, c.opt.Discount, c.opt.Discount}
		}
	} else {
		var coc [MaxOrder + 1][5]float64 // count of counts: coc[k][r] n-grams of order k with count r
		for i := 1; i < len(g); i++ {
			if a := adj(i); a >= 1 && a <= 4 {
				coc[g[i].order][a]++
			}
		}
		for k := 1; k <= n; k++ {
			m.discounts[k] = discounts(coc[k][1], coc[k][2], coc[k][3], coc[k][4])
		}
	}

	// Per context (indexed by its n-gram id): the total of the counts its
	// order uses, which that order divides by, and the discount mass
	// (modified Kneser–Ney) or the number of distinct words counted after
	// it (NLTK, which takes those from the plain counts at every order).
	total := make([]float64, len(g))
	mass := make([]float64, len(g))
	for i := 1; i < len(g); i++ {
		a := adj(i)
		h := g[i].prefix
		if nltk {
			if g[i].count > 0 {
				mass[h]++
			}
			total[h] += float64(a)
			continue
		}
		if a > 0 {
			total[h] += float64(a)
			mass[h] += discount(&m.discounts[g[i].order], a)
		}
	}

	// Contexts: every n-gram with something to predict after it, numbered
	// again densely with the empty context first.
	ctxID := make([]uint32, len(g))
	m.gamma = make([]float64, 0, 1)
	for i := range g {
		if total[i] == 0 {
			// Nothing was counted after n-gram i. (NLTK, counting words
			// seen but not continuations, would divide by zero if that
			// happened to a context it has seen; no padded row leads to
			// one, and backing off is what it does for an unseen context.)
			if i == 0 {
				m.gamma = append(m.gamma, 0)
			}
			continue
		}
		var gamma float64
		switch {
		case !nltk:
			gamma = mass[i] / total[i]
		case i == 0:
			gamma = 0 // NLTK's unigram level ends the recursion
		default:
			gamma = c.opt.Discount * mass[i] / total[i]
		}
		ctxID[i] = uint32(len(m.gamma))
		m.gamma = append(m.gamma, gamma)
	}

	keep := func(i int) bool {
		h := g[i].prefix
		return adj(i) > 0 && (h == 0 || ctxID[h] != 0)
	}
	entries := 0
	for i := 1; i < len(g); i++ {
		if keep(i) && g[i].prefix != 0 {
			entries++
		}
	}
	m.uni = make([]entry, int(firstWordID)+len(m.vocab))
	m.entry = make(map[uint64]entry, entries)
	for i := 1; i < len(g); i++ {
		if !keep(i) {
			continue
		}
		h := g[i].prefix
		a := adj(i)
		var alpha float64
		switch {
		case !nltk:
			alpha = (float64(a) - discount(&m.discounts[g[i].order], a)) / total[h]
		case h == 0:
			alpha = float64(a) / total[h] // NLTK's unigram_score: no discount
		default:
			alpha = math.Max(float64(a)-c.opt.Discount, 0) / total[h]
		}
		if h == 0 {
			m.uni[g[i].last] = entry{alpha: alpha, ctx: ctxID[i], seen: true}
		} else {
			m.entry[uint64(ctxID[h])<<32|uint64(g[i].last)] = entry{alpha: alpha, ctx: ctxID[i]}
		}
	}

	// A row starts after runs of <s>, which no entry leads to.
	for id, k := uint32(0), 0; k < n-1; k++ {
		next, ok := c.trie[uint64(id)<<32|uint64(bosID)]
		if !ok || ctxID[next] == 0 {
			break
		}
		id = next
		m.start.ctx[k], m.start.n = ctxID[id], k+1
	}

	if !nltk {
		// The training words, </s>, and one class for unknown words.
		m.p0 = 1 / float64(len(m.vocab)+2)
	}
	return m, nil
}

// discount returns the discount of a count a ≥ 1 from D1, D2, D3+.
func discount(d *[3]float64, a uint32) float64 {
	return d[min(a, 3)-1]
}

// discounts returns D1, D2 and D3+ from the count of counts n1..n4 by Chen
// and Goodman's formulas (see ModifiedKneserNey), each replaced by r/2 when
// its formula divides by zero or leaves (0, r].
func discounts(n1, n2, n3, n4 float64) [3]float64 {
	d := [3]float64{0.5, 1, 1.5}
	if n1 == 0 {
		return d // Y and every formula divide by n1 or by n1 + 2·n2 ≥ n1.
	}
	y := n1 / (n1 + 2*n2)
	try := func(r int, v float64) {
		if v > 0 && v <= float64(r) {
			d[r-1] = v
		}
	}
	try(1, 1-2*y*n2/n1)
	if n2 > 0 {
		try(2, 2-3*y*n3/n2)
	}
	if n3 > 0 {
		try(3, 3-4*y*n4/n3)
	}
	return d
}

// Train counts rows and returns their model; see Counter for streams.
func Train(rows [][]string, o Options) (*Model, error) {
	c, err := NewCounter(o)
	if err != nil {
		return nil, err
	}
	for _, r := range rows {
		if err := c.Add(r); err != nil {
			return nil, err
		}
	}
	return c.Model()
}
