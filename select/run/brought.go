package run

import (
	"context"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strings"

	"sluice/budget"
	"sluice/index"
	"sluice/index/decontam"
	"sluice/index/jsonl"
	"sluice/score"
	"sluice/score/external"
	"sluice/score/vectors"
	selection "sluice/select"
)

// More methods: scores and vectors computed elsewhere, and static word vectors averaged here.
const (
	MethodScores  = "scores"
	MethodVectors = "vectors"
)

// Declared is the cost of work done elsewhere, as the user declares it: a selector model of
// SelectorParams parameters run Passes forward-pass equivalents over every pool token it scored (1
// for a forward pass, as embeddings and classifiers need; 3 for forward and backward, as gradient
// methods need: common practice), and TargetPasses over every target token; or a literal FLOPs.
// A forward pass costs 2 FLOPs per parameter per token (common practice).
type Declared struct {
	SelectorParams float64 `json:"selector_params,omitempty"`
	Passes         float64 `json:"passes,omitempty"`
	TargetPasses   float64 `json:"target_passes,omitempty"`
	FLOPs          float64 `json:"flops,omitempty"`
}

// ScoresOptions configure scores brought from elsewhere (gradient influence, a classifier, a reward
// model): a JSONL or CSV file of (id or row, score).
type ScoresOptions struct {
	File    string           `json:"file"`
	Join    external.Join    `json:"-"`
	Missing external.Missing `json:"-"`
	Cost    Declared         `json:"cost"`
}

// VectorsOptions configure cosine similarity of embeddings: vectors computed elsewhere, one per
// pool row and per target row in input order (.npy or JSONL), or static word vectors (a text file
// of "count dim" then "word v1 ... vdim" lines) averaged over each row's words here.
type VectorsOptions struct {
	Pool   string   `json:"pool,omitempty"`
	Target string   `json:"target,omitempty"`
	Words  string   `json:"words,omitempty"`
	IDF    bool     `json:"idf,omitempty"` // weight words by their idf over the pool (word vectors)
	Cost   Declared `json:"cost"`          // of computing Pool and Target elsewhere
}

// Inputs are the files a pick reads besides the index and the target: no output may replace them.
func (o *Options) Inputs() []string { return o.inputs() }

// inputs are the files a method reads besides the index and the target, for the manifest.
func (o *Options) inputs() []string {
	return append(o.methodInputs(), o.Guards.Exclude...)
}

func (o *Options) methodInputs() []string {
	switch o.method() {
	case MethodScores:
		return []string{o.Scores.File}
	case MethodVectors:
		var in []string
		for _, f := range []string{o.Vectors.Pool, o.Vectors.Target, o.Vectors.Words} {
			if f != "" {
				in = append(in, f)
			}
		}
		return in
	}
	return nil
}

// charge enters declared work in the ledger for the pool tokens and target tokens it ran over.
func (d Declared) charge(led *budget.Ledger, what string, poolTokens, targetTokens int64) {
	if d.FLOPs > 0 {
		led.AddDeclared(what+": as declared", "run", 1, d.FLOPs, fmt.Sprintf("%g FLOPs, declared", d.FLOPs))
		return
	}
	if d.SelectorParams <= 0 {
		return
	}
	per := budget.ForwardFLOPs(d.SelectorParams, 1) * d.Passes
	if per > 0 {
		led.AddDeclared(fmt.Sprintf("%s: %s-parameter selector over the pool rows scored", what, budget.FormatCount(d.SelectorParams)), "token", float64(poolTokens), per,
			fmt.Sprintf("2 x %g parameters x %g passes x %d pool tokens, declared", d.SelectorParams, d.Passes, poolTokens))
	}
	if tper := budget.ForwardFLOPs(d.SelectorParams, 1) * d.TargetPasses; tper > 0 {
		led.AddDeclared(fmt.Sprintf("%s: the selector over the target rows", what), "token", float64(targetTokens), tper,
			fmt.Sprintf("2 x %g parameters x %g passes x %d target tokens, declared", d.SelectorParams, d.TargetPasses, targetTokens))
	}
}

// tokensOf sums the ledger's tokens of the given rows (nil: all).
func (p *picked) tokensOf(rows []int) int64 {
	var t int64
	if rows == nil {
		for r := range p.ix.NumRows() {
			t += p.tokens(r)
		}
		return t
	}
	for _, r := range rows {
		t += p.tokens(r)
	}
	return t
}

// targetTokens estimates the target rows' tokens as the pool's are estimated without a token field.
func (p *picked) targetTokens() int64 {
	var t int64
	for _, tr := range p.targets {
		t += int64(budget.EstimateTokens(tr.TextBytes))
	}
	return t
}

// idLookup maps pool ids to rows, for joining files by id. It holds every id once: a pass over
// the index's ids, and memory in proportion to the pool, which only a join by id needs.
func idLookup(ix *index.Index) func(id string) ([]int, bool) {
	m := make(map[string][]int, ix.NumRows())
	for r := 0; r < ix.NumRows(); r++ {
		id := ix.RowID(r)
		m[id] = append(m[id], r)
	}
	return func(id string) ([]int, bool) { rows, ok := m[id]; return rows, ok }
}

// broughtScores reads the scores file and charges its declared cost over the rows it scores.
func (p *picked) broughtScores(rows []int) error {
	o := p.opt.Scores
	eo := external.Options{Rows: p.ix.NumRows(), Join: o.Join, Missing: o.Missing}
	if o.Join != external.ByRow {
		eo.Lookup = idLookup(p.ix)
	}
	if rows != nil && o.Missing == external.MissingError {
		eo.Missing = external.MissingSkip // rows that fell at the prefilter need no score
	}
	sc, err := external.Read(o.File, eo)
	if err != nil {
		return err
	}
	p.scores = sc.Score
	if o.Missing == external.MissingSkip || eo.Missing == external.MissingSkip {
		for r := range p.scores {
			if !sc.Has(r) && (p.barred == nil || p.barredKept(r)) {
				if rows != nil && o.Missing == external.MissingError {
					return fmt.Errorf("read scores %s: row %d (%s) passed the prefilter but has no score: %w", o.File, r, p.ix.RowID(r), external.ErrMissing)
				}
				p.bar(r)
			}
		}
	}
	o.Cost.charge(p.led, "scores brought in ("+filepath.Base(o.File)+")", p.tokensOf(rows), p.targetTokens())
	return nil
}

// barredKept reports whether row r is not barred yet.
func (p *picked) barredKept(r int) bool { return p.barred[r] == selection.Kept }

// bar marks row r as having no score.
func (p *picked) bar(r int) {
	if p.barred == nil {
		p.barred = make([]selection.Reason, len(p.scores))
	}
	p.barred[r] = selection.Unscored
}

// vectorScores scores rows by cosine similarity of their vectors to the target's.
func (p *picked) vectorScores(ctx context.Context, rows []int) error {
	o := p.opt.Vectors
	method := vectors.Centroid
	if p.opt.Params.Aggregate.String() == "max" {
		method = vectors.Max
	}
	if o.Words != "" {
		return p.wordVectorScores(ctx, rows, method)
	}
	target, err := openVectors(o.Target, nil)
	if err != nil {
		return err
	}
	tm, err := vectors.ReadMatrix(target)
	target.Close()
	if err != nil {
		return fmt.Errorf("read target vectors %s: %w", o.Target, err)
	}
	if tm.Rows != len(p.targets) {
		return fmt.Errorf("read target vectors %s: %d vectors for %d target rows (one per row, in file order)", o.Target, tm.Rows, len(p.targets))
	}
	s, err := vectors.NewScorer(tm, vectors.Options{Method: method})
	if err != nil {
		return fmt.Errorf("target vectors %s: %w", o.Target, err)
	}
	pool, err := openVectors(o.Pool, func(row int, id string) error {
		if row < p.ix.NumRows() && id != p.ix.RowID(row) {
			return fmt.Errorf("vector %d has id %q where the index's row %d has %q: vectors must be in the pool's order", row+1, id, row, p.ix.RowID(row))
		}
		return nil
	})
	if err != nil {
		return err
	}
	defer pool.Close()
	res, err := s.Score(pool)
	if err != nil {
		return fmt.Errorf("score pool vectors %s: %w", o.Pool, err)
	}
	if len(res.Scores) != p.ix.NumRows() {
		return fmt.Errorf("read pool vectors %s: %d vectors for the index's %d rows (one per row, in input order)", o.Pool, len(res.Scores), p.ix.NumRows())
	}
	p.scores = res.Scores
	p.vectorBest(res.Best)
	o.Cost.charge(p.led, "embed rows (vectors brought in)", p.tokensOf(rows), p.targetTokens())
	p.led.AddSelection(fmt.Sprintf("cosine similarity (%s) of %d-dimensional vectors", method, tm.Dim), "multiply-add", float64(res.Work.MultiplyAdds), 2,
		fmt.Sprintf("2 FLOPs x %d multiply-adds", res.Work.MultiplyAdds))
	return nil
}

// vectorBest keeps the nearest target rows of a Max score as the rows' attribution.
func (p *picked) vectorBest(best []int) {
	if best == nil {
		return
	}
	p.best = make([]int32, len(best))
	for i, b := range best {
		p.best[i] = int32(b)
	}
}

// openVectors opens a .npy or JSONL vector file, by its name.
func openVectors(path string, check func(row int, id string) error) (interface {
	vectors.Source
	io.Closer
}, error) {
	if strings.HasSuffix(strings.ToLower(path), ".npy") {
		n, err := vectors.OpenNPY(path)
		if err != nil {
			return nil, fmt.Errorf("read vectors: %w", err)
		}
		return n, nil
	}
	j, err := vectors.OpenJSONL(path, check)
	if err != nil {
		return nil, fmt.Errorf("read vectors: %w", err)
	}
	return j, nil
}

// wordVectorScores averages static word vectors over each row's words (lower-cased runs of
// letters and digits of its text fields, idf-weighted on request) and scores the rows by cosine.
func (p *picked) wordVectorScores(ctx context.Context, rows []int, method vectors.Method) error {
	o := p.opt.Vectors
	wv, err := vectors.LoadWordVectors(o.Words)
	if err != nil {
		return err
	}
	weight := p.idfWeight(o.IDF)
	var work vectors.Work
	mean := func(dst []float32, words []string) (int, error) {
		work.WordLookups += int64(len(words))
		known, err := wv.Mean(dst, words, weight)
		work.MultiplyAdds += int64(known) * int64(wv.Dim())
		return known, err
	}
	texts, err := targetTexts(p.target, p.spec)
	if err != nil {
		return err
	}
	tm := &vectors.Matrix{Rows: len(p.targets), Dim: wv.Dim(), Data: make([]float32, len(p.targets)*wv.Dim())}
	var words []string
	for i, t := range p.targets {
		words = decontam.Words(words[:0], texts[t.Line])
		if known, err := mean(tm.Row(i), words); err != nil || known == 0 {
			return fmt.Errorf("target row %s: %d of its %d words are in %s (%v): it has no vector", t.ID, known, len(words), o.Words, err)
		}
	}
	s, err := vectors.NewScorer(tm, vectors.Options{Method: method, AllowZero: true})
	if err != nil {
		return fmt.Errorf("target word vectors: %w", err)
	}
	p.scores = make([]float64, p.ix.NumRows())
	for i := range p.scores {
		p.scores[i] = math.NaN()
	}
	var best []int
	if method == vectors.Max {
		best = make([]int, p.ix.NumRows())
		for i := range best {
			best[i] = -1
		}
	}
	vec := make([]float32, wv.Dim())
	var one [1]float64
	var oneBest [1]int
	err = eachRowText(ctx, p.ix, rows, func(row int, text []byte) error {
		words = decontam.Words(words[:0], string(text))
		if _, err := mean(vec, words); err != nil {
			return err
		}
		if _, err := s.Block(vec, row, one[:], oneBest[:]); err != nil {
			return err
		}
		p.scores[row] = one[0]
		if best != nil {
			best[row] = oneBest[0]
		}
		work = work.Add(s.BlockWork(1))
		return nil
	})
	if err != nil {
		return err
	}
	for r, v := range p.scores {
		if math.IsNaN(v) && (p.barred == nil || p.barredKept(r)) {
			p.bar(r) // no known word: no vector, no score
		}
	}
	p.vectorBest(best)
	p.led.AddSelection("look up and average word vectors (pool and target rows)", "lookup", float64(work.WordLookups), budget.FLOPsPerToken,
		fmt.Sprintf("%d FLOPs x %d word lookups", budget.FLOPsPerToken, work.WordLookups))
	p.led.AddSelection(fmt.Sprintf("averages and cosine similarity (%s) of %d-dimensional vectors", method, wv.Dim()), "multiply-add", float64(work.MultiplyAdds+s.Setup().MultiplyAdds), 2,
		fmt.Sprintf("2 FLOPs x %d multiply-adds", work.MultiplyAdds+s.Setup().MultiplyAdds))
	return nil
}

// idfWeight weighs a word by the idf of its analysed form over the pool, when asked; words the
// pool lacks weigh as if they were in one row.
func (p *picked) idfWeight(on bool) func(string) float64 {
	if !on {
		return nil
	}
	an, err := p.ix.NewAnalyzer()
	if err != nil {
		return nil
	}
	n := float64(p.ix.NumRows())
	return func(word string) float64 {
		terms := an.Terms([]byte(word))
		if len(terms) == 0 {
			return 0 // a stop word
		}
		df := float64(max(p.ix.DF(terms[0]), 1))
		return math.Log((1+n)/(1+df)) + 1 // smooth idf, as scikit-learn's TfidfVectorizer
	}
}

// targetTexts reads the text fields of every target row, by line, for methods that need the words
// as written rather than the analysed terms.
func targetTexts(path, spec string) (map[int64]string, error) {
	sp, err := jsonl.ParseSpec(spec)
	if err != nil {
		return nil, err
	}
	ex, err := jsonl.NewExtractor(sp, "", "")
	if err != nil {
		return nil, err
	}
	rc, _, err := jsonl.Open(path)
	if err != nil {
		return nil, fmt.Errorf("read target %s: %w", path, err)
	}
	defer rc.Close()
	sc := jsonl.NewScanner(rc, index.DefaultMaxRowBytes)
	out := map[int64]string{}
	for sc.Scan() {
		var b strings.Builder
		if _, err := ex.Extract(sc.Bytes(), func(part []byte) {
			if b.Len() > 0 {
				b.WriteByte('\n')
			}
			b.Write(part)
		}); err == nil {
			out[sc.Line()] = b.String()
		}
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("read target %s: %w", path, err)
	}
	return out, nil
}

// Recompute scores every row again by a run's method when its scores come from files (scores
// brought in, vectors), for explaining a run: it reads the same files the pick read, and gives the
// same scores to the bit, with the nearest target row of each where the method has one.
func Recompute(ctx context.Context, ix *index.Index, targets []index.Target, m *Manifest) ([]float64, []int32, error) {
	st := m.Settings
	opt := Options{Index: m.Index.Path, Target: m.Target.Path, Method: st.Method}
	if opt.Params.Aggregate, _ = score.ParseAggregate(st.Aggregate); st.Aggregate == "" {
		opt.Params.Aggregate = score.Sum
	}
	p := &picked{opt: &opt, ix: ix, targets: targets, target: m.Target.Path, spec: st.TargetText, led: &budget.Ledger{}}
	var err error
	switch st.Method {
	case MethodScores:
		if st.Scores == nil {
			return nil, nil, fmt.Errorf("the manifest names the scores method without its options")
		}
		opt.Scores = *st.Scores
		if opt.Scores.Join, err = ParseJoin(st.Join); err == nil {
			opt.Scores.Missing, err = external.ParseMissing(st.Missing)
		}
		if err == nil {
			err = p.broughtScores(nil)
		}
	case MethodVectors:
		if st.Vectors == nil {
			return nil, nil, fmt.Errorf("the manifest names the vectors method without its options")
		}
		opt.Vectors = *st.Vectors
		err = p.vectorScores(ctx, nil)
	default:
		return nil, nil, fmt.Errorf("method %q does not read its scores from files", st.Method)
	}
	return p.scores, p.best, err
}

// ParseJoin reads how brought-in scores join the pool: auto, id or row.
func ParseJoin(s string) (external.Join, error) {
	for _, j := range []external.Join{external.JoinAuto, external.ByID, external.ByRow} {
		if j.String() == s {
			return j, nil
		}
	}
	return 0, fmt.Errorf("join %q: want auto, id or row", s)
}
