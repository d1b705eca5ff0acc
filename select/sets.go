package selection

import (
	"fmt"
	"math"
)

// A Set is one target set of a pick made for several tasks at once: every row's score against it,
// and its weight, the part of the training budget its ranking is walked within.
type Set struct {
	Scores   []float64 // by row, as Pick takes them
	Weight   float64   // above 0; the weights are normalised to sum 1
	Barred   []Reason  // bars of this set alone, as Options.Barred; nil for none
	MinScore float64   // as Options.MinScore, for this set's scores
}

// A SetSummary is what one set's walk was given, kept and spent. Counts are in cost units (tokens,
// with Options.Unit).
type SetSummary struct {
	Share    float64 // what it started with: its weight's part of the training budget, rounded down
	Given    float64 // what sets whose rankings ran out gave it
	Returned float64 // what it gave back when its own ranking ran out
	Kept     int     // rows it kept
	Count    float64 // their counts
	KeptCost float64 // Unit × Count
	Stop     Stop    // why its last walk ended, as Pick's Stop
	StopRank int     // in its own ranking; 0 when it did not stop at a row
	// Bound says the walk ended because a row did not fit in what it was given, rather than
	// because its ranking ran out of rows it may keep.
	Bound bool
}

// MaxSets is the most target sets PickSets takes: a row's keeper is held in a byte.
const MaxSets = 255

// PickSets keeps rows for several target sets under one budget. The training budget, what is left
// of Budget once Fixed is paid, is split by weight, each set's share rounded down to whole counts.
// The sets walk their own rankings (as Order ranks their scores) in the order given, each as Pick
// walks one, within its share: a row another set has kept is skipped (reason Taken); with cluster
// not nil, a row whose cluster (cluster[i], the same number for rows of one cluster) already has a
// kept row is skipped as a Duplicate; Options.Barred and the group caps apply to all sets together,
// Set.Barred to its set alone.
//
// A set whose walk ends because its ranking ran out (it was exhausted, or reached rows scoring too
// low) gives what it did not spend back; that is shared among the sets whose walks ended on their
// share (a row that did not fit), by weight and rounded down, and those walk on from the top of
// their rankings, keeping what they kept. This repeats until nothing is given back or no set is
// bound by its share: at most one round per set. What rounding leaves is not spent.
//
// decisions[s][i] is set s's decision for row i: kept by that set, or why not. A row's Rank there
// is its place in set s's ranking; LedgerAfter is the ledger (Fixed plus the cost of every row kept
// so far, by any set) once set s last considered the row, or for a kept row, once it was kept. The
// summary totals all sets. Options.MaxRows and MaxCount must be 0 and Unit above 0; MinScore is
// each Set's.
func PickSets(sets []Set, costs []float64, cluster []int32, opt Options) ([][]Decision, []SetSummary, Summary, error) {
	if err := checkSets(sets, costs, cluster, opt); err != nil {
		return nil, nil, Summary{}, err
	}
	n := len(costs)
	w := &setWalk{sets: sets, costs: costs, cluster: cluster, opt: opt,
		keeper: make([]uint8, n), dec: make([][]Decision, len(sets)), sum: make([]SetSummary, len(sets))}
	if cluster != nil {
		w.clusterKept = make([]bool, n)
	}
	if opt.Caps != nil {
		w.spent = make([]float64, len(opt.Caps))
	}
	var weights float64
	for _, s := range sets {
		weights += s.Weight
	}
	training := (opt.Budget - opt.Fixed) / opt.Unit
	w.allow = make([]float64, len(sets))
	open := make([]int, len(sets))
	for s := range sets {
		w.dec[s] = make([]Decision, n)
		w.order = append(w.order, rankedRows(sets[s].Scores))
		open[s] = s
		if training > 0 {
			w.allow[s] = math.Floor(sets[s].Weight / weights * training)
		}
		w.sum[s].Share = w.allow[s]
	}
	if opt.Fixed > opt.Budget {
		for s := range sets {
			for r, row := range w.order[s] {
				d := Decision{Rank: uint32(r + 1), Reason: BelowCut, LedgerAfter: opt.Fixed}
				if why := bar(opt.Barred, sets[s].Barred, int(row)); why != Kept {
					d.Reason = why
				}
				w.dec[s][row] = d
			}
		}
		return w.dec, w.sum, Summary{Total: opt.Fixed, Left: opt.Budget - opt.Fixed, Stop: StopFixedOverBudget}, nil
	}
	for len(open) > 0 {
		for _, s := range open {
			w.walk(s)
		}
		open = w.giveBack()
	}
	w.relabel()
	return w.dec, w.sum, w.summary(), nil
}

// setWalk is PickSets in progress.
type setWalk struct {
	sets        []Set
	costs       []float64
	cluster     []int32
	opt         Options
	order       [][]uint32
	dec         [][]Decision
	sum         []SetSummary
	allow       []float64 // each set's counts allowed so far
	keeper      []uint8   // by row: 1 + the set that kept it, 0 for none
	clusterKept []bool    // by cluster number: one of its rows is kept
	spent       []float64 // by group, as Pick's
	count       float64   // counts kept by all sets
}

// walk walks set s's ranking from the top within what it is allowed, keeping the rows it kept
// before.
func (w *setWalk) walk(s int) {
	set, opt, sum := &w.sets[s], &w.opt, &w.sum[s]
	so := *opt
	so.MinScore = set.MinScore
	sum.Bound, sum.Stop, sum.StopRank = false, StopExhausted, 0
	stopped, byScore := false, false
	for r, row := range w.order[s] {
		i := int(row)
		d := &w.dec[s][i]
		d.Rank = uint32(r + 1)
		if int(w.keeper[i]) == s+1 {
			continue // kept on an earlier walk
		}
		c := w.costs[i]
		d.Kept, d.Reason = false, Kept
		switch why := bar(opt.Barred, set.Barred, i); {
		case why != Kept:
			d.Reason = why
		case w.keeper[i] != 0:
			d.Reason = Taken
		case byScore:
			d.Reason = scoreReason(set.Scores[i], so)
		case stopped:
			d.Reason = BelowCut
		case w.clusterKept != nil && w.clusterKept[w.cluster[i]]:
			d.Reason = Duplicate
		case scoreReason(set.Scores[i], so) != Kept:
			d.Reason = scoreReason(set.Scores[i], so)
			sum.Stop, sum.StopRank, stopped, byScore = StopNoMatch, r+1, true, true
			if d.Reason == MinScore {
				sum.Stop = StopMinScore
			}
		case w.spent != nil && w.spent[opt.Group[i]]+c > opt.Caps[opt.Group[i]]:
			d.Reason = GroupCap
		case sum.Count+c <= w.allow[s] && opt.Fixed+opt.Unit*(w.count+c) <= opt.Budget:
			w.keeper[i] = uint8(s + 1)
			w.count += c
			sum.Count += c
			sum.Kept++
			if w.spent != nil {
				w.spent[opt.Group[i]] += c
			}
			if w.clusterKept != nil {
				w.clusterKept[w.cluster[i]] = true
			}
			d.Kept = true
		default:
			d.Reason = Budget
			sum.Bound = true
			if !opt.Fill {
				sum.Stop, sum.StopRank, stopped = StopBudget, r+1, true
			}
		}
		d.LedgerAfter = opt.Fixed + opt.Unit*w.count
	}
	sum.KeptCost = opt.Unit * sum.Count
}

// giveBack takes back what sets whose rankings ran out did not spend, shares it among the sets
// bound by their shares by weight, and returns those sets, to walk again; none when nothing is
// given.
func (w *setWalk) giveBack() []int {
	var free, weights float64
	var bound []int
	for s := range w.sets {
		sum := &w.sum[s]
		if sum.Bound {
			bound = append(bound, s)
			weights += w.sets[s].Weight
			continue
		}
		if left := w.allow[s] - sum.Count; left > 0 {
			free += left
			sum.Returned += left
			w.allow[s] = sum.Count
		}
	}
	var given float64
	for _, s := range bound {
		g := math.Floor(free * w.sets[s].Weight / weights)
		w.allow[s] += g
		w.sum[s].Given += g
		given += g
	}
	if given == 0 {
		return nil
	}
	return bound
}

// relabel says of every row a set did not keep, once all walks are done, that another set kept it
// or a row of its cluster, where that came after the set's last walk.
func (w *setWalk) relabel() {
	for s := range w.sets {
		for i := range w.dec[s] {
			d := &w.dec[s][i]
			if d.Kept || bar(w.opt.Barred, w.sets[s].Barred, i) != Kept {
				continue
			}
			switch {
			case w.keeper[i] != 0:
				d.Reason = Taken
			case w.clusterKept != nil && w.clusterKept[w.cluster[i]]:
				d.Reason = Duplicate
			}
		}
	}
}

// summary totals the sets: Stop is StopBudget when any set ended on its share, StopNoMatch (at
// the best of their stop ranks) when every set ran out of rows sharing a term, else
// StopExhausted.
func (w *setWalk) summary() Summary {
	sum := Summary{Stop: StopNoMatch}
	for _, s := range w.sum {
		sum.Kept += s.Kept
		switch {
		case s.Bound:
			sum.Stop, sum.StopRank = StopBudget, 0
		case sum.Stop == StopNoMatch && s.Stop == StopNoMatch:
			if sum.StopRank == 0 || s.StopRank < sum.StopRank {
				sum.StopRank = s.StopRank
			}
		case sum.Stop != StopBudget:
			sum.Stop, sum.StopRank = StopExhausted, 0
		}
	}
	sum.KeptCost = w.opt.Unit * w.count
	sum.Total = w.opt.Fixed + w.opt.Unit*w.count
	sum.Left = w.opt.Budget - sum.Total
	return sum
}

func checkSets(sets []Set, costs []float64, cluster []int32, opt Options) error {
	if len(sets) == 0 || len(sets) > MaxSets {
		return fmt.Errorf("pick sets: %d sets, give 1 to %d: %w", len(sets), MaxSets, ErrBadInput)
	}
	if !(opt.Unit > 0) || opt.MaxRows != 0 || opt.MaxCount != 0 {
		return fmt.Errorf("pick sets: costs in units (Unit > 0) and neither MaxRows nor MaxCount: %w", ErrBadInput)
	}
	if cluster != nil && len(cluster) != len(costs) {
		return fmt.Errorf("pick sets: %d cluster numbers for %d rows: %w", len(cluster), len(costs), ErrBadInput)
	}
	for _, c := range cluster {
		if c < 0 || int(c) >= len(costs) {
			return fmt.Errorf("pick sets: cluster number %d: must be a row number: %w", c, ErrBadInput)
		}
	}
	for s, set := range sets {
		if !(set.Weight > 0) || math.IsInf(set.Weight, 1) {
			return fmt.Errorf("pick sets: set %d: weight %v: must be above 0 and finite: %w", s+1, set.Weight, ErrBadInput)
		}
		if set.Barred != nil && len(set.Barred) != len(costs) {
			return fmt.Errorf("pick sets: set %d: %d barred reasons for %d rows: %w", s+1, len(set.Barred), len(costs), ErrBadInput)
		}
		o := opt
		o.MinScore, o.Barred = set.MinScore, merged(opt.Barred, set.Barred)
		if err := checkWithCosts(set.Scores, costs, o); err != nil {
			return fmt.Errorf("set %d: %w", s+1, err)
		}
	}
	return nil
}

// bar is row i's bar in shared, else in own, else Kept.
func bar(shared, own []Reason, i int) Reason {
	if shared != nil && shared[i] != Kept {
		return shared[i]
	}
	if own != nil {
		return own[i]
	}
	return Kept
}

// merged is a bar per row from either list, for the check; nil when both are.
func merged(a, b []Reason) []Reason {
	if a == nil || b == nil {
		if a == nil {
			return b
		}
		return a
	}
	m := make([]Reason, len(a))
	for i := range a {
		m[i] = a[i]
		if m[i] == Kept {
			m[i] = b[i]
		}
	}
	return m
}
