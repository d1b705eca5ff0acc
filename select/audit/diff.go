package audit

import (
	"bufio"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"sort"
	"strings"

	"sluice/budget"
	selection "sluice/select"
	"sluice/select/run"
)

// Side is one run of a comparison: what it kept and what it spent.
type Side struct {
	Run        string         `json:"run"`
	Kept       int            `json:"kept"`
	KeptTokens int64          `json:"kept_tokens"`
	Budget     float64        `json:"budget_flops"`
	Used       float64        `json:"used_flops"`
	Index      string         `json:"index"`   // the index the run was made on, by its identity
	Dropped    map[string]int `json:"dropped"` // rows not kept, by reason
	rows       map[rowKey]sideRow
}

// rowKey names a row across two runs: its id and which occurrence of that id it is, so that a
// repeated id pairs with the same occurrence in the other run and no id can pose as another's
// repetition.
type rowKey struct {
	id string
	n  int
}

type sideRow struct {
	rank   int
	kept   bool
	tokens int64
}

// Moved is a row whose rank differs between the two runs.
type Moved struct {
	ID         string `json:"id"`
	Occurrence int    `json:"occurrence,omitempty"` // 2 for the second row with this id, and so on
	RankA      int    `json:"rank_a"`
	RankB      int    `json:"rank_b"`
	KeptA      bool   `json:"kept_a"`
	KeptB      bool   `json:"kept_b"`
}

// Diff compares two runs: rows kept in both or one, their tokens and Jaccard index, and the rank
// correlation over the rows both scored.
type Diff struct {
	A            Side    `json:"a"`
	B            Side    `json:"b"`
	Both         int     `json:"kept_both"`
	OnlyA        int     `json:"kept_only_a"`
	OnlyB        int     `json:"kept_only_b"`
	BothTokens   int64   `json:"kept_both_tokens"`
	OnlyATokens  int64   `json:"kept_only_a_tokens"`
	OnlyBTokens  int64   `json:"kept_only_b_tokens"`
	Jaccard      float64 `json:"jaccard"`
	Common       int     `json:"rows_in_both"`
	Spearman     float64 `json:"spearman"`
	Moved        []Moved `json:"moved"`
	SpearmanNote string  `json:"spearman_note,omitempty"`
}

// readSide reads the scores, ledger and manifest of the run folder dir. Rows are keyed by id and
// occurrence.
func readSide(dir string) (Side, error) {
	s := Side{Run: dir, rows: map[rowKey]sideRow{}, Dropped: map[string]int{}}
	m, err := run.ReadManifest(dir)
	if err != nil {
		return s, err
	}
	s.Index = m.Index.Identity
	if s.Index == "" {
		s.Index = m.Index.SHA256 // a run from before identities: meta.json's hash
	}
	seen := map[string]int{}
	err = run.EachScoreLine(dir, func(_ int, line []byte) error {
		var r struct {
			ID     string `json:"id"`
			Rank   int    `json:"rank"`
			Kept   bool   `json:"kept"`
			Tokens int64  `json:"tokens"`
			Reason string `json:"reason"`
		}
		if err := json.Unmarshal(line, &r); err != nil {
			return err
		}
		seen[r.ID]++
		key := rowKey{r.ID, seen[r.ID]}
		s.rows[key] = sideRow{rank: r.Rank, kept: r.Kept, tokens: r.Tokens}
		if r.Kept {
			s.Kept++
			s.KeptTokens += r.Tokens
		} else {
			s.Dropped[r.Reason]++
		}
		return nil
	})
	if err != nil {
		return s, err
	}
	l, err := run.ReadLedger(dir)
	if err != nil {
		return s, err
	}
	s.Budget, s.Used = l.Budget, l.Total
	return s, nil
}

// ErrOtherIndex is returned by Compare for runs made on different indexes: their rows are other
// rows, and matching them by id would compare nothing with nothing.
var ErrOtherIndex = errors.New("the runs were made on different indexes")

// Compare compares the run folders a and b, listing at most top of the rows whose rank moved most.
// Runs made on different indexes are refused unless acrossIndexes is set.
func Compare(a, b string, top int, acrossIndexes bool) (*Diff, error) {
	var d Diff
	var err error
	if d.A, err = readSide(a); err != nil {
		return nil, err
	}
	if d.B, err = readSide(b); err != nil {
		return nil, err
	}
	if d.A.Index != d.B.Index && !acrossIndexes {
		return nil, fmt.Errorf("diff %s %s: %w (identities %.12s and %.12s): rows are matched by id, which only means the same row on the same pool", a, b, ErrOtherIndex, d.A.Index, d.B.Index)
	}
	var ra, rb []float64
	for id, x := range d.A.rows {
		y, ok := d.B.rows[id]
		switch {
		case ok && x.kept && y.kept:
			d.Both++
			d.BothTokens += x.tokens
		case x.kept:
			d.OnlyA++
			d.OnlyATokens += x.tokens
		}
		if ok {
			ra = append(ra, float64(x.rank))
			rb = append(rb, float64(y.rank))
			if x.rank != y.rank {
				m := Moved{ID: id.id, RankA: x.rank, RankB: y.rank, KeptA: x.kept, KeptB: y.kept}
				if id.n > 1 {
					m.Occurrence = id.n
				}
				d.Moved = append(d.Moved, m)
			}
		}
	}
	for id, y := range d.B.rows {
		if x, ok := d.A.rows[id]; y.kept && !(ok && x.kept) {
			d.OnlyB++
			d.OnlyBTokens += y.tokens
		}
	}
	if u := d.Both + d.OnlyA + d.OnlyB; u > 0 {
		d.Jaccard = float64(d.Both) / float64(u)
	}
	d.Common = len(ra)
	if d.Spearman = pearson(ra, rb); math.IsNaN(d.Spearman) {
		d.Spearman = 0
		d.SpearmanNote = fmt.Sprintf("undefined over %d common rows", d.Common)
	}
	sort.Slice(d.Moved, func(i, j int) bool {
		di, dj := absInt(d.Moved[i].RankA-d.Moved[i].RankB), absInt(d.Moved[j].RankA-d.Moved[j].RankB)
		if di != dj {
			return di > dj
		}
		return d.Moved[i].RankA < d.Moved[j].RankA // ranks are distinct, so the order is total
	})
	if len(d.Moved) > top {
		d.Moved = d.Moved[:top]
	}
	return &d, nil
}

func absInt(x int) int {
	if x < 0 {
		return -x
	}
	return x
}

// pearson is the Pearson correlation of x and y; over ranks it is Spearman's rho. NaN when either
// has no spread.
func pearson(x, y []float64) float64 {
	n := float64(len(x))
	if len(x) < 2 {
		return math.NaN()
	}
	var mx, my float64
	for i := range x {
		mx += x[i]
		my += y[i]
	}
	mx, my = mx/n, my/n
	var sxy, sxx, syy float64
	for i := range x {
		dx, dy := x[i]-mx, y[i]-my
		sxy += dx * dy
		sxx += dx * dx
		syy += dy * dy
	}
	if sxx == 0 || syy == 0 {
		return math.NaN()
	}
	return sxy / math.Sqrt(sxx*syy)
}

// WriteText writes the comparison for people: each run's kept rows and spending, the overlap,
// Write writes the comparison for people (WriteText) or, with asJSON, as one indented JSON object.
func (d *Diff) Write(w io.Writer, asJSON bool) error {
	if asJSON {
		b, err := json.MarshalIndent(d, "", "  ")
		if err != nil {
			return err
		}
		_, err = w.Write(append(b, '\n'))
		return err
	}
	bw := bufio.NewWriter(w)
	d.WriteText(bw)
	return bw.Flush()
}

// what each did not keep and why, the rank correlation and the rows that moved most.
func (d *Diff) WriteText(w io.Writer) {
	pct := func(a, b float64) string {
		if b == 0 {
			return "-"
		}
		return fmt.Sprintf("%.1f%%", 100*a/b)
	}
	fmt.Fprintf(w, "A %s: %d rows kept, %d tokens, %s of %s FLOPs used (%s)\n", d.A.Run, d.A.Kept, d.A.KeptTokens, budget.FormatFLOPs(d.A.Used), budget.FormatFLOPs(d.A.Budget), pct(d.A.Used, d.A.Budget))
	fmt.Fprintf(w, "B %s: %d rows kept, %d tokens, %s of %s FLOPs used (%s)\n", d.B.Run, d.B.Kept, d.B.KeptTokens, budget.FormatFLOPs(d.B.Used), budget.FormatFLOPs(d.B.Budget), pct(d.B.Used, d.B.Budget))
	fmt.Fprintf(w, "kept in both %d (%d tokens), only in A %d (%d tokens), only in B %d (%d tokens); Jaccard %.4f\n",
		d.Both, d.BothTokens, d.OnlyA, d.OnlyATokens, d.OnlyB, d.OnlyBTokens, d.Jaccard)
	for _, side := range []struct {
		name string
		s    Side
	}{{"A", d.A}, {"B", d.B}} {
		var parts []string
		for _, why := range selection.Reasons() {
			if n := side.s.Dropped[why.String()]; n > 0 {
				parts = append(parts, fmt.Sprintf("%d %s", n, why))
			}
		}
		fmt.Fprintf(w, "%s not kept: %s\n", side.name, strings.Join(parts, ", "))
	}
	if d.SpearmanNote != "" {
		fmt.Fprintf(w, "rank correlation: %s\n", d.SpearmanNote)
	} else {
		fmt.Fprintf(w, "rank correlation over the %d rows both scored: Spearman's rho %.4f\n", d.Common, d.Spearman)
	}
	if len(d.Moved) > 0 {
		fmt.Fprintf(w, "rows that moved most:\n")
		for _, m := range d.Moved {
			id := m.ID
			if m.Occurrence > 1 {
				id = fmt.Sprintf("%s (occurrence %d)", m.ID, m.Occurrence)
			}
			fmt.Fprintf(w, "  %-28s rank %7d -> %-7d  kept %s -> %s\n", id, m.RankA, m.RankB, yesNo(m.KeptA), yesNo(m.KeptB))
		}
	}
}

func yesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}
