package selection

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"
)

// ErrBadInput is wrapped by every error Pick returns.
var ErrBadInput = errors.New("bad selection input")

// Options are the limits a selection must keep within.
type Options struct {
	Budget        float64 // total FLOPs allowed, selection cost included
	Fixed         float64 // FLOPs already spent before any row is kept (the selection cost)
	Fill          bool    // keep scanning past the first row that does not fit
	MaxRows       int     // most rows to keep; 0 means no limit
	MaxCount      float64 // with Unit, the most counts (tokens) to keep; 0 means no limit
	MinScore      float64 // rows scoring below this are not kept
	KeepUnmatched bool    // allow rows with score <= 0, which share nothing with the target
	// Unit, when above zero, says costs are counts (tokens, say) of Unit FLOPs each: every sum is
	// then a sum of counts, exact while below 2^53, times Unit, so the fit test and a ledger that
	// multiplies the kept count by Unit reach the same total to the bit. Counts must be whole.
	Unit float64
	// Barred, when not nil, holds a reason for every row that must not be kept whatever its score
	// and cost (Kept for the others): a row that fell at an earlier stage, or has no score. Such a
	// row is ranked like any other, stops nothing and costs nothing; its score may be NaN, and a
	// NaN ranks after every number.
	Barred []Reason
	// Group and Caps, when not nil, cap what each group of rows (a source file, say) may cost:
	// Group[i] is row i's group and Caps[g] the most group g's kept rows may cost together (in
	// costs' units). A row that would pass its group's cap is not kept, reason GroupCap, and the
	// walk goes on.
	Group []int32
	Caps  []float64
}

// A Reason says why a row was not kept.
type Reason uint8

// Reasons, in the words String gives them in output files.
const (
	Kept         Reason = iota // ""
	BelowCut                   // "below-cut": ranked after the stop, not considered
	Budget                     // "budget": considered, but its cost did not fit
	MaxRows                    // "max-rows": considered after MaxRows rows were kept
	MinScore                   // "min-score": scored below Options.MinScore
	NoMatch                    // "no-match": scored <= 0 and Options.KeepUnmatched is false
	Prefilter                  // "prefilter": fell at the cheap first stage of a cascade
	Unscored                   // "no-score": the scores brought in have none for it
	Duplicate                  // "duplicate": a better-scored row of its duplicate cluster is kept instead
	Contaminated               // "contaminated": it shares an n-gram with an evaluation row
	GroupCap                   // "source-cap": its source had reached its share of the budget
	MaxCount                   // "max-tokens": its tokens would pass Options.MaxCount
	Taken                      // "taken": another target set of the pick kept it (PickSets)
)

var reasonNames = [...]string{
	Kept: "", BelowCut: "below-cut", Budget: "budget", MaxRows: "max-rows",
	MinScore: "min-score", NoMatch: "no-match", Prefilter: "prefilter", Unscored: "no-score",
	Duplicate: "duplicate", Contaminated: "contaminated", GroupCap: "source-cap", MaxCount: "max-tokens",
	Taken: "taken",
}

// String returns the stable lower-case word used for r in output files; it
// is empty for Kept.
func (r Reason) String() string {
	if int(r) < len(reasonNames) {
		return reasonNames[r]
	}
	return fmt.Sprintf("reason(%d)", r)
}

// Reasons lists every reason a row may not be kept, in the order summaries list them: the bars
// set before the walk first, then the walk's own.
func Reasons() []Reason {
	return []Reason{Taken, Duplicate, Contaminated, GroupCap, Prefilter, Unscored, NoMatch, MinScore, MaxRows, MaxCount, Budget, BelowCut}
}

// ParseReason reads a reason as String writes it.
func ParseReason(s string) (Reason, bool) {
	for r, name := range reasonNames {
		if name == s {
			return Reason(r), true
		}
	}
	return 0, false
}

// Walk reports whether the walk down the ranking gave the reason (the row came after a stop, did
// not fit, or scored too low), rather than a bar set before it (Options.Barred, a group's cap).
func (r Reason) Walk() bool {
	switch r {
	case BelowCut, Budget, MaxRows, MinScore, NoMatch, MaxCount:
		return true
	}
	return false
}

// A Stop says why the walk down the ranking ended.
type Stop uint8

// Stops, in the words String gives them in output files.
const (
	StopExhausted       Stop = iota // "exhausted": every row was considered
	StopBudget                      // "budget": the first row that did not fit, without Fill
	StopMaxRows                     // "max-rows": MaxRows rows were kept
	StopMinScore                    // "min-score": the rest scored below MinScore
	StopNoMatch                     // "no-match": the rest scored <= 0
	StopFixedOverBudget             // "fixed-over-budget": the selection cost alone exceeds the budget
	StopMaxCount                    // "max-tokens": the first row whose tokens would pass MaxCount, without Fill
)

var stopNames = [...]string{
	StopExhausted: "exhausted", StopBudget: "budget", StopMaxRows: "max-rows",
	StopMinScore: "min-score", StopNoMatch: "no-match", StopFixedOverBudget: "fixed-over-budget",
	StopMaxCount: "max-tokens",
}

// String returns the stable lower-case word used for s in output files.
func (s Stop) String() string {
	if int(s) < len(stopNames) {
		return stopNames[s]
	}
	return fmt.Sprintf("stop(%d)", s)
}

// A Decision is what Pick decided for one row.
type Decision struct {
	Rank   uint32 // 1-based position in the ranking
	Kept   bool
	Reason Reason // Kept when Kept is true
	// LedgerAfter is the ledger total once this row was considered: Fixed
	// plus the cost of every kept row ranked at or above it.
	LedgerAfter float64
}

// A Summary totals a selection.
type Summary struct {
	Kept     int     // rows kept
	KeptCost float64 // sum of the costs of kept rows
	// Total is Fixed plus the kept costs, accumulated in rank order exactly
	// as the fit test accumulates them, so Total <= Budget holds without
	// rounding slack (except under StopFixedOverBudget, where Total is Fixed).
	// It can differ from Fixed+KeptCost in the last bit.
	Total    float64
	Left     float64 // Budget - Total; negative only under StopFixedOverBudget
	Stop     Stop
	StopRank int // rank of the row at which the walk stopped; 0 for StopExhausted and StopFixedOverBudget
}

// Order returns row indices sorted by score, highest first. Ties keep input
// order (lower index first), so the ranking is deterministic. NaN scores,
// which Pick rejects, are ranked after every other score.
func Order(scores []float64) []int {
	rows := rankedRows(scores)
	idx := make([]int, len(rows))
	for i, row := range rows {
		idx[i] = int(row)
	}
	return idx
}

// rankKey is a row and its score, sorted together (a small group of rankedRows): going through an
// index slice would touch scores at random. The score is held as orderKey's bits in two halves, so
// that a key takes 12 bytes a row, where a float64 beside the row is padded to 16.
type rankKey struct {
	hi, lo, row uint32
}

// orderKey maps a score to bits whose unsigned order is cmp.Compare's order of scores: NaN below
// every number (NaNs alike), then the numbers ascending, -0 and +0 alike.
func orderKey(s float64) uint64 {
	switch {
	case s != s:
		return 0 // no number maps here: only a NaN has every bit set before the flip below
	case s == 0:
		s = 0 // -0 as +0
	}
	b := math.Float64bits(s)
	if b>>63 != 0 {
		return ^b // negative: a greater magnitude is a smaller number
	}
	return b | 1<<63
}

// rankedRows returns the rows as Order ranks them: score descending, then row ascending. It holds
// 4 bytes a row (and at most 4 more while a large group of close scores is split), where sorting
// each row beside its score would hold 12 at once: an MSD radix sort on orderKey's bits, 16 at a
// time, each pass stable so that rows of equal scores stay in ascending order, and groups of at
// most smallGroup rows sorted beside their keys.
func rankedRows(scores []float64) []uint32 {
	order := make([]uint32, len(scores))
	r := ranker{scores: scores, small: smallGroup}
	r.top(order)
	return order
}

// smallGroup is the largest group of rows sorted by comparison rather than split by 16 more bits.
const smallGroup = 1 << 10

// ranker sorts rows by orderKey descending, then row ascending.
type ranker struct {
	scores []float64
	small  int
	count  [][]int   // a table of counts for each level of 16 bits
	aux    []uint32  // where a group's rows wait while they are split
	keys   []rankKey // a small group's rows beside their keys
}

// digit is the place of row's score among the 16 bits of its key at shift, highest key first.
func (r *ranker) digit(row uint32, shift uint) int {
	return 0xffff - int(orderKey(r.scores[row])>>shift&0xffff)
}

// top places every row by the key's highest 16 bits, in ascending row order within each group,
// then sorts each group.
func (r *ranker) top(order []uint32) {
	count := r.counts(0)
	for i := range r.scores {
		count[r.digit(uint32(i), 48)+1]++
	}
	for d := 1; d < len(count); d++ {
		count[d] += count[d-1]
	}
	for i := range r.scores {
		d := r.digit(uint32(i), 48)
		order[count[d]] = uint32(i)
		count[d]++
	}
	r.groups(order, 48, 0)
}

// counts returns the zeroed table of counts for level (0 the highest 16 bits), with a slot more
// than digits so that prefix sums give each group's start.
func (r *ranker) counts(level int) []int {
	for len(r.count) <= level {
		r.count = append(r.count, make([]int, 1<<16+1))
	}
	clear(r.count[level])
	return r.count[level]
}

// groups sorts each run of rows of order whose keys agree above shift, order being placed by the
// 16 bits at shift: the groups are found again by those bits.
func (r *ranker) groups(order []uint32, shift uint, level int) {
	for lo := 0; lo < len(order); {
		d := r.digit(order[lo], shift)
		hi := lo + 1
		for hi < len(order) && r.digit(order[hi], shift) == d {
			hi++
		}
		if hi-lo > 1 && shift > 0 {
			r.split(order[lo:hi], shift-16, level+1)
		}
		lo = hi
	}
}

// split orders rows, in ascending order and agreeing on their keys above shift+16, by the rest of
// their keys: by comparison when they are few, else by the 16 bits at shift (a stable counting
// pass) and then each group so made.
func (r *ranker) split(rows []uint32, shift uint, level int) {
	if len(rows) <= r.small {
		keys := r.keys[:0]
		for _, row := range rows {
			k := orderKey(r.scores[row])
			keys = append(keys, rankKey{uint32(k >> 32), uint32(k), row})
		}
		slices.SortFunc(keys, func(a, b rankKey) int {
			if c := cmp.Compare(b.hi, a.hi); c != 0 {
				return c
			}
			if c := cmp.Compare(b.lo, a.lo); c != 0 {
				return c
			}
			return cmp.Compare(a.row, b.row)
		})
		for i, k := range keys {
			rows[i] = k.row
		}
		r.keys = keys
		return
	}
	count := r.counts(level)
	for _, row := range rows {
		count[r.digit(row, shift)+1]++
	}
	if count[r.digit(rows[0], shift)+1] == len(rows) {
		// One group: nothing to move at these bits.
		if shift > 0 {
			r.split(rows, shift-16, level+1)
		}
		return
	}
	for d := 1; d < len(count); d++ {
		count[d] += count[d-1]
	}
	aux := append(r.aux[:0], rows...)
	for _, row := range aux {
		d := r.digit(row, shift)
		rows[count[d]] = row
		count[d]++
	}
	r.aux = aux[:0]
	if shift > 0 {
		r.groups(rows, shift, level)
	}
}

// MaxPickRows is the most rows Pick takes: rows and ranks are held in 32 bits, which keeps a
// Decision to 16 bytes and a row of the ranking to 4.
const MaxPickRows = math.MaxUint32

// Pick ranks rows by score (as Order does) and keeps them greedily: walking
// down the ranking, a row is kept if Fixed plus the cost of the rows kept so
// far plus its own cost is at most Budget. costs[i] is the FLOP cost of
// keeping row i (its training cost) and decisions[i] is the decision for row
// i, in input order.
//
// Each row considered is checked in this order: MaxRows already reached
// (reason MaxRows; the walk stops), score <= 0 without KeepUnmatched (NoMatch),
// score below MinScore (MinScore), then the budget (Budget). Because rows
// are ranked by score, the first NoMatch or MinScore row ends the walk and
// every later row gets NoMatch or MinScore by its own score. Without Fill the
// first row that does not fit ends the walk; with Fill it is skipped and the
// walk goes on. Rows after a budget or max-rows stop get BelowCut. When Fixed
// alone exceeds Budget no row is considered and every row gets BelowCut.
//
// Scores must not be NaN but for barred rows; costs must be finite and >= 0; Budget and Fixed
// must be finite and >= 0; MaxRows must be >= 0 and MinScore not NaN.
func Pick(scores []float64, costs []float64, opt Options) ([]Decision, Summary, error) {
	if err := checkWithCosts(scores, costs, opt); err != nil {
		return nil, Summary{}, err
	}
	return pick(scores, func(i int) float64 { return costs[i] }, opt)
}

// PickFunc is Pick with each row's cost asked of cost when the walk comes to the row (once, in
// rank order) rather than held for every row at once: 8 bytes a row less at the pick's peak. The
// cost of a row barred (Options.Barred) or met after the walk's end is not asked, since its
// decision does not depend on it. A cost that is not finite and >= 0 fails the pick when it is met.
func PickFunc(scores []float64, cost func(row int) float64, opt Options) ([]Decision, Summary, error) {
	if err := check(scores, opt); err != nil {
		return nil, Summary{}, err
	}
	return pick(scores, cost, opt)
}

// pick is Pick's walk over checked scores and options.
func pick(scores []float64, cost func(row int) float64, opt Options) ([]Decision, Summary, error) {
	order := rankedRows(scores)
	dec := make([]Decision, len(scores))
	w := NewWalker(opt)
	for _, row := range order {
		i := int(row)
		barred, group := Kept, int32(0)
		if opt.Barred != nil {
			barred = opt.Barred[i]
		}
		if opt.Group != nil {
			group = opt.Group[i]
		}
		// A barred row, or one after the walk's end, is decided without its cost: not asked.
		c := 0.0
		if barred == Kept && !w.stopped {
			if c = cost(i); !finiteNonNeg(c) {
				return nil, Summary{}, fmt.Errorf("pick: row %d: cost %v: must be finite and >= 0: %w", i, c, ErrBadInput)
			}
		}
		dec[i] = w.Step(scores[i], c, barred, group)
	}
	return dec, w.Summary(), nil
}

// A Walker makes Pick's decisions one row at a time, for rows given to it in the order Order
// ranks them: Pick is a Walker over its rows, so rows that come from elsewhere in that order (the
// merged rankings of several shards, say) are decided to the bit as Pick would decide them. Its
// memory is Options.Caps' and nothing per row; Options.Barred and Options.Group are not read
// (Step takes a row's bar and group), and the rows' checks Pick makes are the caller's.
type Walker struct {
	opt     Options
	total   float64
	count   float64   // with Unit, the kept counts so far
	spent   []float64 // per group, with Caps
	sum     Summary
	stopped bool
	byScore bool // the walk ended on a score limit, so later rows are judged by score
	rank    uint32
}

// NewWalker starts a walk within opt's limits.
func NewWalker(opt Options) *Walker {
	w := &Walker{opt: opt, total: opt.Fixed, sum: Summary{Stop: StopExhausted}}
	if opt.Caps != nil {
		w.spent = make([]float64, len(opt.Caps))
	}
	if opt.Fixed > opt.Budget {
		w.sum.Stop = StopFixedOverBudget
	}
	w.stopped = w.sum.Stop != StopExhausted
	return w
}

// fits returns the ledger total were a row of cost c kept, and whether it is within the budget.
func (w *Walker) fits(c float64) (float64, bool) {
	if w.opt.Unit > 0 {
		t := w.opt.Fixed + w.opt.Unit*(w.count+c)
		return t, t <= w.opt.Budget
	}
	return w.total + c, w.total+c <= w.opt.Budget
}

// Step decides the next row of the ranking: its score, cost, the reason it is barred (Kept if it
// is not) and its group (read only with Caps).
func (w *Walker) Step(score, cost float64, barred Reason, group int32) Decision {
	opt := &w.opt
	w.rank++
	d := Decision{Rank: w.rank}
	next, fit := w.fits(cost)
	switch {
	case barred != Kept:
		d.Reason = barred
	case w.byScore:
		d.Reason = scoreReason(score, *opt)
	case w.stopped:
		d.Reason = BelowCut
	case opt.MaxRows > 0 && w.sum.Kept == opt.MaxRows:
		d.Reason = MaxRows
		w.sum.Stop, w.sum.StopRank, w.stopped = StopMaxRows, int(d.Rank), true
	case scoreReason(score, *opt) != Kept:
		d.Reason = scoreReason(score, *opt)
		w.sum.Stop, w.sum.StopRank, w.stopped, w.byScore = StopNoMatch, int(d.Rank), true, true
		if d.Reason == MinScore {
			w.sum.Stop = StopMinScore
		}
	case w.spent != nil && w.spent[group]+cost > opt.Caps[group]:
		d.Reason = GroupCap
	case opt.MaxCount > 0 && w.count+cost > opt.MaxCount:
		d.Reason = MaxCount
		if !opt.Fill {
			w.sum.Stop, w.sum.StopRank, w.stopped = StopMaxCount, int(d.Rank), true
		}
	case fit:
		w.total = next
		w.count += cost
		if w.spent != nil {
			w.spent[group] += cost
		}
		d.Kept = true
		w.sum.Kept++
		w.sum.KeptCost += cost
	default:
		d.Reason = Budget
		if !opt.Fill {
			w.sum.Stop, w.sum.StopRank, w.stopped = StopBudget, int(d.Rank), true
		}
	}
	d.LedgerAfter = w.total
	return d
}

// Summary totals the walk so far.
func (w *Walker) Summary() Summary {
	sum := w.sum
	sum.Total = w.total
	sum.Left = w.opt.Budget - w.total
	if w.opt.Unit > 0 {
		sum.KeptCost = w.opt.Unit * w.count
	}
	return sum
}

// scoreReason is the reason a score alone bars a row, or Kept if it does not.
func scoreReason(s float64, opt Options) Reason {
	switch {
	case !opt.KeepUnmatched && s <= 0:
		return NoMatch
	case s < opt.MinScore:
		return MinScore
	}
	return Kept
}

func check(scores []float64, opt Options) error {
	if len(scores) > MaxPickRows {
		return fmt.Errorf("pick: %d rows, at most %d: %w", len(scores), MaxPickRows, ErrBadInput)
	}
	if !finiteNonNeg(opt.Budget) {
		return fmt.Errorf("pick: budget %v: must be finite and >= 0: %w", opt.Budget, ErrBadInput)
	}
	if !finiteNonNeg(opt.Fixed) {
		return fmt.Errorf("pick: fixed cost %v: must be finite and >= 0: %w", opt.Fixed, ErrBadInput)
	}
	if opt.MaxRows < 0 {
		return fmt.Errorf("pick: max rows %d: must be >= 0: %w", opt.MaxRows, ErrBadInput)
	}
	if !finiteNonNeg(opt.MaxCount) || (opt.MaxCount > 0 && opt.Unit == 0) {
		return fmt.Errorf("pick: max count %v: must be finite and >= 0, and counted in Unit: %w", opt.MaxCount, ErrBadInput)
	}
	if !finiteNonNeg(opt.Unit) {
		return fmt.Errorf("pick: unit cost %v: must be finite and >= 0: %w", opt.Unit, ErrBadInput)
	}
	if math.IsNaN(opt.MinScore) {
		return fmt.Errorf("pick: min score is NaN: %w", ErrBadInput)
	}
	if (opt.Group == nil) != (opt.Caps == nil) || (opt.Group != nil && len(opt.Group) != len(scores)) {
		return fmt.Errorf("pick: groups and caps go together, a group per row: %w", ErrBadInput)
	}
	for i, g := range opt.Group {
		if g < 0 || int(g) >= len(opt.Caps) {
			return fmt.Errorf("pick: row %d: group %d has no cap: %w", i, g, ErrBadInput)
		}
	}
	if opt.Barred != nil && len(opt.Barred) != len(scores) {
		return fmt.Errorf("pick: %d scores but %d barred reasons: %w", len(scores), len(opt.Barred), ErrBadInput)
	}
	for i, s := range scores {
		if math.IsNaN(s) && (opt.Barred == nil || opt.Barred[i] == Kept) {
			return fmt.Errorf("pick: row %d: score is NaN: %w", i, ErrBadInput)
		}
	}
	return nil
}

// checkWithCosts is check with a cost for every row, each finite and >= 0.
func checkWithCosts(scores, costs []float64, opt Options) error {
	if len(scores) != len(costs) {
		return fmt.Errorf("pick: %d scores but %d costs: %w", len(scores), len(costs), ErrBadInput)
	}
	if err := check(scores, opt); err != nil {
		return err
	}
	for i, c := range costs {
		if !finiteNonNeg(c) {
			return fmt.Errorf("pick: row %d: cost %v: must be finite and >= 0: %w", i, c, ErrBadInput)
		}
	}
	return nil
}

func finiteNonNeg(v float64) bool { return v >= 0 && !math.IsInf(v, 1) }
