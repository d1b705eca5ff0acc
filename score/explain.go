package score

import (
	"cmp"
	"fmt"
	"slices"
)

// Part is one query term's share of a score.
type Part struct {
	Term string  `json:"term"`
	TF   int     `json:"tf"` // frequency in the pool row
	DF   int     `json:"df"` // pool rows holding the term
	IDF  float64 `json:"idf"`
	// TFPart is the pool-row side of the term weight: the BM25 saturation
	// tf·(k1+1)/(tf + k1·(1 − b + b·len/avglen)), or for TF-IDF the raw tf
	// divided by the row's TF-IDF norm.
	TFPart float64 `json:"tf_part"`
	// QueryWeight is the query side: for BM25 1 per target row holding the
	// term; for TF-IDF the target's normalised weight (Max) or its mean over
	// the target rows (Sum).
	QueryWeight float64 `json:"query_weight"`
	// Contribution is (QueryWeight·IDF)·TFPart, rounded as Score rounds it.
	Contribution float64 `json:"contribution"`
}

// TargetMatch is one target row's score against a pool row.
type TargetMatch struct {
	Index  int      // into the queries
	Score  float64  // binary-query BM25 or cosine against this target row alone
	Shared []string // terms the target and pool rows share, ascending
}

// Explanation breaks down the score of one pool row.
type Explanation struct {
	Row   int
	Score float64
	// Parts, added in order starting from zero, give exactly Score: they are
	// the terms of the combined query (Sum) or of the Best target row (Max)
	// that the pool row holds, ascending by bytes.
	Parts []Part
	Best  int // as Result.Best
	// Targets are the best-scoring target rows for this pool row, highest
	// score first, ties to the lowest index.
	Targets []TargetMatch
}

// rowTFer is a Corpus that reads one row's term frequency from a list without reading the rest of
// it (an index reads the list up to the row): Explain asks it rather than Postings.
type rowTFer interface {
	RowTF(term string, row int) (int, error)
}

// Explain recomputes the score of pool row row as Score would and breaks it
// into parts. Explanation.Score and Best equal Result.Scores[row] and
// Result.Best[row] exactly. topTargets caps len(Targets): 0 omits them and a
// negative value keeps every target row that shares a term.
func Explain(c Corpus, q []Query, p Params, row int, topTargets int) (*Explanation, error) {
	if err := p.Validate(); err != nil {
		return nil, err
	}
	pl, err := newPlan(c, q, p)
	if err != nil {
		return nil, err
	}
	if row < 0 || row >= pl.n {
		return nil, fmt.Errorf("score: explain row %d of %d: %w", row, pl.n, ErrRowRange)
	}

	// The corpus has no forward index, so look the row up in every posting list: read up to the
	// row alone where the corpus can stop there.
	tf := make([]int, len(pl.vocab))
	found := false
	var rows, tfs []uint32
	for k, term := range pl.vocab {
		if rc, ok := c.(rowTFer); ok {
			n, err := rc.RowTF(term, row)
			if err != nil {
				return nil, fmt.Errorf("score: postings of %q: %w", term, err)
			}
			tf[k] = n
			found = found || n > 0
			continue
		}
		rows, tfs, err = c.Postings(term, rows[:0], tfs[:0])
		if err != nil {
			return nil, fmt.Errorf("score: postings of %q: %w", term, err)
		}
		if len(rows) != len(tfs) {
			return nil, fmt.Errorf("score: postings of %q: %d rows but %d tfs: %w", term, len(rows), len(tfs), ErrBadCorpus)
		}
		if i, ok := slices.BinarySearch(rows, uint32(row)); ok {
			tf[k] = int(tfs[i])
			found = true
		}
	}
	ex := &Explanation{Row: row, Best: -1}
	if !found {
		return ex, nil
	}
	factor, err := rowFactor(c, p, pl.avg, row)
	if err != nil {
		return nil, fmt.Errorf("score: %w", err)
	}
	k1p1 := p.K1 + 1
	parts := func(qu *query, keep bool) (float64, []Part, []string) {
		var s float64
		var ps []Part
		var shared []string
		for i, k := range qu.terms {
			if tf[k] == 0 {
				continue
			}
			var part float64
			if p.Method == BM25 {
				part = bm25Part(float64(tf[k]), k1p1, factor)
			} else {
				part = tfidfPart(float64(tf[k]), factor)
			}
			x := contribution(qu.factor(i, pl.idf), part)
			s += x
			shared = append(shared, pl.vocab[k])
			if keep {
				ps = append(ps, Part{
					Term: pl.vocab[k], TF: tf[k], DF: pl.df[k], IDF: pl.idf[k],
					TFPart: part, QueryWeight: qu.weight(i), Contribution: x,
				})
			}
		}
		return s, ps, shared
	}

	var matches []TargetMatch
	var bestScore float64
	for j := range pl.targets {
		s, _, shared := parts(&pl.targets[j], false)
		if len(shared) == 0 {
			continue
		}
		if ex.Best < 0 || s > bestScore {
			ex.Best, bestScore = j, s
		}
		matches = append(matches, TargetMatch{Index: j, Score: s, Shared: shared})
	}
	if p.Aggregate == Sum {
		ex.Score, ex.Parts, _ = parts(&pl.combined, true)
	} else if ex.Best >= 0 {
		ex.Score, ex.Parts, _ = parts(&pl.targets[ex.Best], true)
	}

	slices.SortStableFunc(matches, func(a, b TargetMatch) int {
		return cmp.Compare(b.Score, a.Score) // stable keeps ties in index order
	})
	if topTargets >= 0 && len(matches) > topTargets {
		matches = matches[:topTargets]
	}
	if len(matches) > 0 {
		ex.Targets = matches
	}
	return ex, nil
}
