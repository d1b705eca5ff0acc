package ngram

import "math"

// CrossEntropyDifference returns H_target(tokens) − H_pool(tokens), each the
// per-symbol cross-entropy in nats of CrossEntropy: Moore and Lewis (2010),
// "Intelligent selection of language model training data". Lower is more
// like the target task; Score is its negation.
func CrossEntropyDifference(target, pool *Model, tokens []string) float64 {
	return target.CrossEntropy(tokens) - pool.CrossEntropy(tokens)
}

// Score returns −CrossEntropyDifference(target, pool, tokens), so that
// higher is more like the target task, as sluice's scores are. It is
// (ln p_target(row) − ln p_pool(row)) / (len(tokens)+1) up to rounding.
func Score(target, pool *Model, tokens []string) float64 {
	return -CrossEntropyDifference(target, pool, tokens)
}

// TokenPart is one predicted symbol's share of a Score.
type TokenPart struct {
	Pos   int    // index into the tokens; len(tokens) for the closing </s>
	Token string // the token, or "</s>"
	// Target and Pool are ln p(token | the words before it) under each model.
	Target, Pool float64
	// TargetOrder and PoolOrder are the lengths of the longest n-gram ending
	// in the token that each model holds (0: a word it never saw predicted).
	TargetOrder, PoolOrder int
	// Part is (Target − Pool)/(len(tokens)+1); the Parts of a row add up to
	// its Score up to rounding.
	Part float64
}

// Explain breaks Score(target, pool, tokens) into one part per token and
// one for the closing </s>, in text order; the tokens that moved the score
// most are those with the largest |Part|.
func Explain(target, pool *Model, tokens []string) []TokenPart {
	parts := make([]TokenPart, 0, len(tokens)+1)
	st, sp := target.start, pool.start
	n := float64(len(tokens) + 1)
	for i := 0; i <= len(tokens); i++ {
		tok := "</s>"
		wt, wp := eosID, eosID
		if i < len(tokens) {
			tok = tokens[i]
			wt, wp = target.vocab[tok], pool.vocab[tok]
		}
		pt, ot := target.next(&st, wt)
		pp, op := pool.next(&sp, wp)
		lt, lp := math.Log(pt), math.Log(pp)
		parts = append(parts, TokenPart{Pos: i, Token: tok, Target: lt, Pool: lp,
			TargetOrder: ot, PoolOrder: op, Part: (lt - lp) / n})
	}
	return parts
}
