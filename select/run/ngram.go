package run

import (
	"context"
	"fmt"
	"math"
	"math/bits"

	"sluice/budget"
	"sluice/index"
	"sluice/score/ngram"
)

// NgramOptions configure scoring by n-gram language models.
type NgramOptions struct {
	Order int `json:"order"` // n-gram order, 3 to 5
	// TargetOnly scores a row by the target model's mean log-likelihood per token alone, instead
	// of the cross-entropy difference between the target model and a pool model.
	TargetOnly bool   `json:"target_only,omitempty"`
	Seed       uint64 `json:"seed"` // chooses the pool sample the pool model is trained on
}

// DefaultNgramOrder is the order a pick uses unless told otherwise.
const DefaultNgramOrder = 3

// NgramModels are the models an n-gram pick scores with: one of the target rows and, unless
// TargetOnly, one of a random sample of the pool about as large as the target set (Moore and
// Lewis, 2010), both with modified Kneser–Ney smoothing.
type NgramModels struct {
	Options NgramOptions
	Target  *ngram.Model
	Pool    *ngram.Model // nil with TargetOnly
	// SampleRows and SampleTerms say what the pool model was trained on; TargetSymbols and
	// SampleSymbols count the padded training symbols, for the ledger.
	SampleRows, SampleTerms      int64
	TargetSymbols, SampleSymbols int64
}

// inSample reports whether row is in the pool sample drawn with seed at rate p (0..1]: a fixed
// hash of the row decides, so the sample is the same at every pick and in every explanation.
func inSample(seed uint64, row int, p float64) bool {
	if p >= 1 {
		return true
	}
	// SplitMix64's finaliser (Steele, Lea and Flood, 2014) spreads consecutive rows evenly.
	z := seed + uint64(row)*0x9e3779b97f4a7c15
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	z ^= z >> 31
	hi, _ := bits.Mul64(z, 1<<53)
	return float64(hi)/(1<<53) < p
}

// TrainNgram trains the target model on the analysed target rows and, unless o.TargetOnly, the
// pool model on a sample of the pool's rows read again from its files: each row is drawn with
// probability target terms / pool terms, so the sample holds about as many terms as the target.
func TrainNgram(ctx context.Context, ix *index.Index, targets []index.Target, o NgramOptions) (*NgramModels, error) {
	mo := ngram.Options{Order: o.Order, Smoothing: ngram.ModifiedKneserNey}
	tc, err := ngram.NewCounter(mo)
	if err != nil {
		return nil, fmt.Errorf("n-gram: %w", err)
	}
	nm := &NgramModels{Options: o}
	var targetTerms int64
	for _, t := range targets {
		if err := tc.Add(t.Terms); err != nil {
			return nil, fmt.Errorf("n-gram: target row %s: %w", t.ID, err)
		}
		targetTerms += int64(len(t.Terms))
		nm.TargetSymbols += int64(len(t.Terms) + o.Order)
	}
	if nm.Target, err = tc.Model(); err != nil {
		return nil, fmt.Errorf("n-gram: target model: %w", err)
	}
	if o.TargetOnly {
		return nm, nil
	}
	pc, err := ngram.NewCounter(mo)
	if err != nil {
		return nil, fmt.Errorf("n-gram: %w", err)
	}
	p := 1.0
	if total := ix.Meta().TotalLen; total > 0 {
		p = float64(targetTerms) / float64(total)
	}
	var rows []int
	for r := 0; r < ix.NumRows(); r++ {
		if inSample(o.Seed, r, p) {
			rows = append(rows, r)
		}
	}
	err = eachRowTerms(ctx, ix, rows, func(row int, terms []string) error {
		nm.SampleRows++
		nm.SampleTerms += int64(len(terms))
		nm.SampleSymbols += int64(len(terms) + o.Order)
		return pc.Add(terms)
	})
	if err != nil {
		return nil, fmt.Errorf("n-gram: pool sample: %w", err)
	}
	if nm.Pool, err = pc.Model(); err != nil {
		return nil, fmt.Errorf("n-gram: pool sample model: %w", err)
	}
	return nm, nil
}

// Score is a row's score: the negated cross-entropy difference H_target − H_pool per token, in
// nats, or with TargetOnly the target model's mean log-likelihood per token; higher is more like
// the target either way.
func (nm *NgramModels) Score(terms []string) float64 {
	if nm.Pool == nil {
		return -nm.Target.CrossEntropy(terms)
	}
	return ngram.Score(nm.Target, nm.Pool, terms)
}

// Explain breaks a row's score into one part per token, in text order; with TargetOnly a part
// is the token's log-probability under the target model over the row's symbols.
func (nm *NgramModels) Explain(terms []string) []ngram.TokenPart {
	if nm.Pool != nil {
		return ngram.Explain(nm.Target, nm.Pool, terms)
	}
	parts := ngram.Explain(nm.Target, nm.Target, terms)
	for i := range parts {
		parts[i].Pool, parts[i].PoolOrder = 0, 0
		parts[i].Part = parts[i].Target / float64(len(terms)+1)
	}
	return parts
}

// models is how many models score each row.
func (nm *NgramModels) models() float64 {
	if nm.Pool == nil {
		return 1
	}
	return 2
}

// ngramScores scores the given rows (nil: all) of the pool by nm, NaN elsewhere, and charges the
// work to led.
func ngramScores(ctx context.Context, ix *index.Index, nm *NgramModels, rows []int, led *budget.Ledger) ([]float64, error) {
	scores := make([]float64, ix.NumRows())
	if rows != nil {
		for i := range scores {
			scores[i] = math.NaN()
		}
	}
	var n, terms, symbols int64
	err := eachRowTerms(ctx, ix, rows, func(row int, t []string) error {
		scores[row] = nm.Score(t)
		n++
		terms += int64(len(t))
		symbols += int64(len(t) + 1)
		return nil
	})
	if err != nil {
		return nil, err
	}
	o := nm.Options.Order
	train := ngram.TrainFLOPsPerToken(o)
	led.AddSelection(fmt.Sprintf("train the target's order-%d n-gram model", o), "symbol", float64(nm.TargetSymbols), train,
		fmt.Sprintf("%g FLOPs x %d padded target symbols", train, nm.TargetSymbols))
	if nm.Pool != nil {
		led.AddSelection(fmt.Sprintf("read and analyse a pool sample of %d rows again, and train its order-%d model", nm.SampleRows, o), "symbol",
			float64(nm.SampleSymbols), train+budget.FLOPsPerToken,
			fmt.Sprintf("(%g + %d) FLOPs x %d padded sample symbols", train, budget.FLOPsPerToken, nm.SampleSymbols))
	}
	led.AddSelection(fmt.Sprintf("read and analyse %d pool rows again (n-gram)", n), "term", float64(terms), budget.FLOPsPerToken,
		fmt.Sprintf("%d FLOPs x %d terms", budget.FLOPsPerToken, terms))
	per := ngram.FLOPsPerToken(o) * nm.models()
	led.AddSelection(fmt.Sprintf("score them under %g order-%d model(s)", nm.models(), o), "symbol", float64(symbols), per,
		fmt.Sprintf("%g FLOPs x %d symbols (tokens and each row's end)", per, symbols))
	return scores, nil
}

// RowTerms reads one row of the pool again and returns its analysed terms, as an n-gram pick saw
// them.
func RowTerms(ctx context.Context, ix *index.Index, row int) ([]string, error) {
	var out []string
	err := eachRowTerms(ctx, ix, []int{row}, func(_ int, terms []string) error {
		out = append([]string(nil), terms...)
		return nil
	})
	return out, err
}

// ParseNgramScore reads how an n-gram pick scores a row: "difference" (the target model against the
// pool sample's) or "target" (the target model alone, TargetOnly).
func ParseNgramScore(s string) (targetOnly, ok bool) {
	switch s {
	case "difference":
		return false, true
	case "target":
		return true, true
	}
	return false, false
}
