package budget

import (
	"encoding/json"
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Kinds of ledger lines.
const (
	KindSelection = "selection"
	KindTraining  = "training"
)

// A Line is one entry of a Ledger: Count units of work at UnitFLOPs each.
type Line struct {
	What      string  `json:"what"`       // what the work was, e.g. "score pool: postings visited"
	Count     float64 `json:"count"`      // units of work done
	Unit      string  `json:"unit"`       // e.g. "posting", "token"
	UnitFLOPs float64 `json:"unit_flops"` // FLOPs charged per unit
	FLOPs     float64 `json:"flops"`      // Count × UnitFLOPs
	Formula   string  `json:"formula"`    // how FLOPs was worked out, for people
	Kind      string  `json:"kind"`       // KindSelection or KindTraining
	// Declared marks work done elsewhere (embeddings, gradients, a classifier) and charged at the
	// cost the user declared for it, not counted by sluice.
	Declared bool `json:"declared,omitempty"`
}

// A Ledger accounts for a FLOP budget: what selection cost, what training the
// kept rows will cost, and what is left.
//
// All FLOP figures are float64. Above 2^53 (about 9.007e15) not every integer
// is representable, so a total of 1e21 is held to within about one part in
// 2^53 (1.1e-16) rather than exactly. That is fine: the unit costs are
// estimates good to a few percent at best, and the budget itself is usually
// derived from hours, peak rates and utilisation, so no digit past the
// fifteenth carries meaning.
type Ledger struct {
	Budget float64
	Lines  []Line
	Stop   string   // why selection stopped; filled by the caller
	Notes  []string // free-form remarks for the report; filled by the caller
}

// AddSelection records selection work: count units of unit at unitFLOPs
// each. An empty formula is replaced by one built from the numbers.
func (l *Ledger) AddSelection(what, unit string, count, unitFLOPs float64, formula string) {
	l.add(KindSelection, what, unit, count, unitFLOPs, formula)
}

// AddDeclared records selection work done elsewhere, charged at the cost the caller declares for
// it; the line is marked so that a reader can tell it from work sluice counted.
func (l *Ledger) AddDeclared(what, unit string, count, unitFLOPs float64, formula string) {
	l.add(KindSelection, what, unit, count, unitFLOPs, formula)
	l.Lines[len(l.Lines)-1].Declared = true
}

// AddTraining records training work in the same form as AddSelection; for
// training on D tokens, unit is "token" and unitFLOPs is 6·N·E.
func (l *Ledger) AddTraining(what, unit string, count, unitFLOPs float64, formula string) {
	l.add(KindTraining, what, unit, count, unitFLOPs, formula)
}

func (l *Ledger) add(kind, what, unit string, count, unitFLOPs float64, formula string) {
	if formula == "" {
		formula = fmt.Sprintf("%s FLOPs × %s %s", num(unitFLOPs), num(count), plural(unit, count))
	}
	l.Lines = append(l.Lines, Line{
		What: what, Count: count, Unit: unit, UnitFLOPs: unitFLOPs,
		FLOPs: count * unitFLOPs, Formula: formula, Kind: kind,
	})
}

// num formats v the shortest way that reads back exactly, writing whole
// numbers below 1e15 in full since people compare them digit by digit.
func num(v float64) string {
	if v == math.Trunc(v) && math.Abs(v) < 1e15 {
		return strconv.FormatFloat(v, 'f', -1, 64)
	}
	return strings.Replace(strconv.FormatFloat(v, 'g', -1, 64), "e+", "e", 1)
}

// plural is deliberately naive: units are short English nouns chosen by
// sluice itself ("token", "posting", "row").
func plural(unit string, count float64) string {
	if count == 1 || unit == "" || strings.HasSuffix(unit, "s") {
		return unit
	}
	return unit + "s"
}

func (l *Ledger) sum(kind string) float64 {
	var t float64
	for _, ln := range l.Lines {
		if ln.Kind == kind {
			t += ln.FLOPs
		}
	}
	return t
}

// Selection is the total FLOPs of the selection lines.
func (l *Ledger) Selection() float64 { return l.sum(KindSelection) }

// Training is the total FLOPs of the training lines.
func (l *Ledger) Training() float64 { return l.sum(KindTraining) }

// Total is Selection plus Training.
func (l *Ledger) Total() float64 { return l.Selection() + l.Training() }

// Left is Budget minus Total; it is negative when the budget is overspent.
func (l *Ledger) Left() float64 { return l.Budget - l.Total() }

// MarshalJSON writes the ledger with its totals worked out, so a reader of
// the report need not add the lines up: budget, lines, selection_flops,
// training_flops, total_flops, left_flops, over_budget, stop and notes. It fails if any figure is NaN or
// infinite, which JSON cannot represent.
func (l Ledger) MarshalJSON() ([]byte, error) {
	lines := l.Lines
	if lines == nil {
		lines = []Line{}
	}
	notes := l.Notes
	if notes == nil {
		notes = []string{}
	}
	sel, tr := l.Selection(), l.Training()
	total := sel + tr
	return json.Marshal(struct {
		Budget         float64  `json:"budget"`
		Lines          []Line   `json:"lines"`
		SelectionFLOPs float64  `json:"selection_flops"`
		TrainingFLOPs  float64  `json:"training_flops"`
		TotalFLOPs     float64  `json:"total_flops"`
		LeftFLOPs      float64  `json:"left_flops"`
		OverBudget     bool     `json:"over_budget"`
		Stop           string   `json:"stop"`
		Notes          []string `json:"notes"`
	}{
		Budget: l.Budget, Lines: lines,
		SelectionFLOPs: sel, TrainingFLOPs: tr, TotalFLOPs: total,
		LeftFLOPs:  l.Budget - total,
		OverBudget: total > l.Budget, Stop: l.Stop, Notes: notes,
	})
}
