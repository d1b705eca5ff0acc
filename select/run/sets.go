package run

import (
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"sluice/budget"
	"sluice/index"
	selection "sluice/select"
)

// ErrSets is what the errors of CheckSets and ParseWeights are (errors.Is): a pick for several
// target sets asked for what it cannot do, or weights that do not fit the sets.
var ErrSets = errors.New("several target sets: not possible as asked")

// setsError is an error that is ErrSets, in words of its own.
type setsError string

func (e setsError) Error() string   { return string(e) }
func (setsError) Is(err error) bool { return err == ErrSets }

func setsErrorf(format string, a ...any) error { return setsError(fmt.Sprintf(format, a...)) }

// SetRef is one target set of a pick made for several: its file, its weight, and what its walk was
// given, kept and spent. Token counts are the training budget's units (see selection.PickSets).
type SetRef struct {
	Name   string  `json:"name"` // as scores.jsonl's "set" names it
	Path   string  `json:"path"`
	SHA256 string  `json:"sha256"`
	Weight float64 `json:"weight"` // its part of the training budget; the weights sum to 1
	Rows   int     `json:"target_rows"`
	// MinScore is its floor: --min-score, resolved against its own scores when relative.
	MinScore      float64 `json:"min_score"`
	Share         float64 `json:"share_tokens"`    // weight × training budget, rounded down
	Given         float64 `json:"given_tokens"`    // from sets whose rankings ran out
	Returned      float64 `json:"returned_tokens"` // given back when its own ranking ran out
	KeptRows      int     `json:"kept_rows"`
	KeptTokens    int64   `json:"kept_tokens"`
	TrainingFLOPs float64 `json:"training_flops"`
	Stop          string  `json:"stop"`
}

// targetSet is one target set of a pick in progress.
type targetSet struct {
	ref     SetRef
	targets []index.Target
	trej    []index.Reject
	scores  []float64
	best    []int32
	barred  []selection.Reason
	dupOf   func(row int) int
}

// SetNames names target sets as scores.jsonl and summaries show them: each file's base name less
// .jsonl (and .gz or .zst), or, when two would share a name, 1, 2, ... in the order given.
func SetNames(paths []string) []string {
	names := make([]string, len(paths))
	seen := map[string]bool{}
	for i, p := range paths {
		n := filepath.Base(p)
		for _, ext := range []string{".gz", ".zst", ".jsonl", ".json"} {
			n = strings.TrimSuffix(n, ext)
		}
		if n == "" || seen[n] {
			for i := range names {
				names[i] = strconv.Itoa(i + 1)
			}
			return names
		}
		seen[n], names[i] = true, n
	}
	return names
}

// ParseWeights reads the parts of the training budget of n target sets, comma-separated (0.7,0.3
// or 7,3), and returns them normalised to sum 1; "" gives every set an equal part, and one set
// none (nil).
func ParseWeights(s string, n int) ([]float64, error) {
	switch {
	case n == 1 && s == "":
		return nil, nil
	case n == 1:
		return nil, setsErrorf("%q: weights share the training budget between several target sets, and one was given", s)
	case s == "":
		w := make([]float64, n)
		for i := range w {
			w[i] = 1 / float64(n)
		}
		return w, nil
	}
	parts := strings.Split(s, ",")
	if len(parts) != n {
		return nil, setsErrorf("%q: %d weights for %d target sets: give one per --target, in their order", s, len(parts), n)
	}
	w := make([]float64, n)
	var sum float64
	for i, p := range parts {
		v, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
		if err != nil || !(v > 0) || math.IsInf(v, 1) {
			return nil, setsErrorf("%q: weight %q: give a number above 0", s, p)
		}
		w[i], sum = v, sum+v
	}
	if math.IsInf(sum, 1) {
		return nil, setsErrorf("%q: the weights are too large to add up", s)
	}
	for i := range w {
		w[i] /= sum
	}
	return w, nil
}

// CheckSets refuses, before any work, what a pick for several target sets cannot do: a method
// other than the lexical ones (the scores brought in, the vectors and the n-gram models are made
// for one target set), a cascade, --max-rows or --max-tokens (stops of one ranking), a target read
// from stdin, and weights that do not match the sets.
func CheckSets(opt Options) error {
	if len(opt.ExtraTargets) == 0 {
		if opt.Weights != nil {
			return setsErrorf("weights are for several target sets, and one was given")
		}
		return nil
	}
	n := 1 + len(opt.ExtraTargets)
	switch m := opt.method(); {
	case n > selection.MaxSets:
		return setsErrorf("%d target sets: at most %d", n, selection.MaxSets)
	case !lexical(m):
		return setsErrorf("method %s takes one target set; with several, score by bm25 or tfidf", m)
	case opt.Prefilter.active():
		return setsErrorf("a prefilter takes one target set")
	case opt.Select.MaxRows != 0 || opt.Select.MaxCount != 0:
		return setsErrorf("--max-rows and --max-tokens stop one ranking; with several target sets the budget's split stops each")
	case opt.Weights != nil && len(opt.Weights) != n:
		return setsErrorf("%d weights for %d target sets", len(opt.Weights), n)
	}
	for _, t := range append([]string{opt.Target}, opt.ExtraTargets...) {
		if t == "-" {
			return setsErrorf("with several target sets each is a file read again to explain the run, not stdin")
		}
	}
	return nil
}

// several picks for several target sets: each set's rows are read and scored alone, as a pick for
// that set alone would score them; the guards run once; and selection.PickSets walks the sets'
// rankings within their parts of the training budget.
func (p *picked) several(ctx context.Context) error {
	opt := p.opt
	paths := append([]string{opt.Target}, opt.ExtraTargets...)
	names := SetNames(paths)
	weights := opt.Weights
	if weights == nil {
		weights, _ = ParseWeights("", len(paths))
	}
	var all []index.Target
	var rej []index.Reject
	for i, path := range paths {
		if fi, err := os.Stat(path); err == nil && !fi.Mode().IsRegular() {
			return setsErrorf("target %s is not a regular file: with several target sets each is read again to explain the run", path)
		}
		p.target = path
		if err := p.readTargets(path); err != nil {
			return err
		}
		s := &targetSet{ref: SetRef{Name: names[i], Path: path, Weight: weights[i], Rows: len(p.targets)}, targets: p.targets, trej: p.trej}
		p.sets = append(p.sets, s)
		all, rej = append(all, p.targets...), append(rej, p.trej...)
	}
	p.target, p.targets, p.trej = opt.Target, all, rej
	if err := p.checkMemory(); err != nil {
		return err
	}
	p.startLedger()
	for _, s := range p.sets {
		p.chargeTargets(s.targets, fmt.Sprintf("analyse target rows (set %s)", s.ref.Name))
	}
	for _, s := range p.sets {
		p.targets = s.targets
		res, err := p.lexical(ctx, opt.Params, "set "+s.ref.Name+": ")
		if err != nil {
			return err
		}
		if err := checkFinite(res.Scores, nil); err != nil {
			return err
		}
		s.scores, s.best = res.Scores, res.Best
	}
	p.ix.ReleasePages() // every set scored
	p.targets = all
	if err := p.guard(ctx); err != nil {
		return err
	}
	for _, s := range p.sets {
		// Each set's cluster keeps the row its own scores prefer, as a pick for it alone would.
		p.scores, p.barred, p.dupOf = s.scores, nil, nil
		if err := p.applyGuards(); err != nil {
			return err
		}
		s.barred, s.dupOf = p.barred, p.dupOf
	}
	return p.keepSets()
}

// keepSets prices every row's training, walks the sets' rankings within their parts of the
// budget, and makes the one line per row scores.jsonl shows (see view).
func (p *picked) keepSets() error {
	opt, led := p.opt, p.led
	unit, costs, err := p.costs()
	if err != nil {
		return err
	}
	so := opt.Select
	so.Budget, so.Fixed, so.Unit = opt.Budget, led.Selection(), unit
	if so.Group, so.Caps, err = p.groupCaps(unit, so.Fixed); err != nil {
		return err
	}
	sets := make([]selection.Set, len(p.sets))
	for i, s := range p.sets {
		s.ref.MinScore = so.MinScore
		if opt.MinScore.Kind != "" {
			s.ref.MinScore = opt.MinScore.resolve(s.scores, s.barred, true)
		}
		sets[i] = selection.Set{Scores: s.scores, Weight: s.ref.Weight, Barred: s.barred, MinScore: s.ref.MinScore}
	}
	var cluster []int32
	if p.guards != nil && p.guards.cluster != nil {
		cluster = make([]int32, len(costs))
		for r := range cluster {
			cluster[r] = int32(p.guards.cluster(r))
		}
	}
	decs, sums, sum, err := selection.PickSets(sets, costs, cluster, so)
	if err != nil {
		return err
	}
	p.view(decs, cluster)
	p.tally()
	var stops []string
	for i, s := range p.sets {
		ss := sums[i]
		s.ref.Share, s.ref.Given, s.ref.Returned = ss.Share, ss.Given, ss.Returned
		s.ref.KeptRows, s.ref.KeptTokens, s.ref.TrainingFLOPs = ss.Kept, int64(ss.Count), ss.KeptCost
		s.ref.Stop = setStopText(ss, s.ref.MinScore)
		if ss.Stop == selection.StopMinScore && opt.MinScore.Kind != "" {
			s.ref.Stop += " (" + opt.MinScore.String() + ")"
		}
		s.ref.SHA256, _ = sha256File(s.ref.Path)
		stops = append(stops, "set "+s.ref.Name+": "+s.ref.Stop)
		p.out.Sets = append(p.out.Sets, s.ref)
	}
	led.Stop = strings.Join(stops, "; ")
	p.finish(unit, sum)
	return nil
}

// view makes the line of scores.jsonl each row gets from the sets' decisions: a kept row shows
// the set that kept it; any other row the set that ranked it highest (the earlier set on a tie),
// with its score, rank, fate and best target row there. A duplicate names the row of its cluster
// that was kept, by any set, or else the row its set's scores prefer.
func (p *picked) view(decs [][]selection.Decision, cluster []int32) {
	n := p.ix.NumRows()
	p.scores, p.dec, p.rowSet = make([]float64, n), make([]selection.Decision, n), make([]uint8, n)
	attribute := p.sets[0].best != nil
	if attribute {
		p.best = make([]int32, n)
	}
	offset := make([]int32, len(p.sets)) // each set's first row in p.targets
	for i := 1; i < len(p.sets); i++ {
		offset[i] = offset[i-1] + int32(len(p.sets[i-1].targets))
	}
	keptIn := map[int32]int{} // by cluster, its kept row
	for r := range n {
		s := 0
		for i := range decs {
			if decs[i][r].Kept {
				s = i
				break
			}
			if decs[i][r].Rank < decs[s][r].Rank {
				s = i
			}
		}
		set := p.sets[s]
		p.rowSet[r], p.dec[r], p.scores[r] = uint8(s), decs[s][r], set.scores[r]
		if attribute {
			p.best[r] = -1
			if b := set.best[r]; b >= 0 {
				p.best[r] = offset[s] + b
			}
		}
		if p.dec[r].Kept && cluster != nil {
			keptIn[cluster[r]] = r
		}
	}
	p.dropped = 0
	for r := range n {
		if p.dec[r].Reason == selection.Duplicate {
			p.dropped++
		}
	}
	sets, rowSet := p.sets, p.rowSet
	p.dupOf = func(r int) int {
		if k, ok := keptIn[cluster[r]]; ok {
			return k
		}
		return sets[rowSet[r]].dupOf(r)
	}
}

// setStopText says in words why a set's walk ended.
func setStopText(s selection.SetSummary, minScore float64) string {
	switch s.Stop {
	case selection.StopBudget:
		return fmt.Sprintf("share: the row ranked %d did not fit in what was left of its share", s.StopRank)
	case selection.StopMinScore:
		return fmt.Sprintf("min-score: the rows from rank %d on score below %g", s.StopRank, minScore)
	case selection.StopNoMatch:
		return fmt.Sprintf("no-match: the rows from rank %d on share no term with its target rows", s.StopRank)
	case selection.StopFixedOverBudget:
		return "fixed-over-budget: the selection cost alone exceeds the budget"
	}
	if s.Bound {
		return "share: every row was considered, and some did not fit in what was left of its share"
	}
	return "every row with a score was considered"
}

// setNotes say in the ledger how the training budget was split between the target sets and what
// each kept; none for one set.
func (p *picked) setNotes(unit float64) []string {
	if p.sets == nil {
		return nil
	}
	notes := []string{SetsRule}
	for _, s := range p.sets {
		r := s.ref
		notes = append(notes, fmt.Sprintf("set %s (%s, weight %g): share %g tokens, given %g, given back %g; kept %d rows, %d tokens, %s FLOPs (6 x %g parameters x %d tokens x %g epochs)",
			r.Name, r.Path, r.Weight, r.Share, r.Given, r.Returned, r.KeptRows, r.KeptTokens, budget.FormatFLOPs(r.TrainingFLOPs), p.opt.TrainParams, r.KeptTokens, p.opt.Epochs))
	}
	return notes
}

// SetsRule is how a pick for several target sets splits its budget, in words for the ledger, the
// summary and help.
const SetsRule = "several target sets: the training budget (the budget less the selection cost, charged once) is split by weight, " +
	"each share rounded down to whole tokens; the sets walk their own rankings in the order given, within their shares, " +
	"skipping rows an earlier set kept and, over all sets, every row of a duplicate cluster but the first kept; " +
	"a set whose ranking runs out gives the rest of its share to the sets stopped by theirs, by weight, and those walk on"

// SetNamed returns the set of the manifest named name, and whether there is one.
func (m *Manifest) SetNamed(name string) (SetRef, bool) {
	i := slices.IndexFunc(m.Sets, func(s SetRef) bool { return s.Name == name })
	if i < 0 {
		return SetRef{}, false
	}
	return m.Sets[i], true
}
