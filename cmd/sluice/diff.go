package main

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"

	"github.com/spf13/pflag"
)

type diffCmd struct{}

func (*diffCmd) name() string    { return "diff" }
func (*diffCmd) summary() string { return "compare the kept sets and rankings of two runs" }

func (*diffCmd) flags() *pflag.FlagSet {
	fs := newFlags("diff", "sluice diff [--json] [--top N] RUN_A RUN_B",
		`Compares two runs, usually two target sets or two methods on the same index: the rows kept in
both, only in A and only in B (counts, tokens, Jaccard index), the budget each used, the rank
correlation of their scores over the rows both scored (Spearman's rho: the Pearson correlation of
the ranks), and the rows whose rank moved most. Rows are matched by id; a repeated id is matched by
its occurrence.`,
		`  sluice diff run-support run-billing
  sluice diff --json --top 50 run-bm25 run-tfidf | jq .moved`)
	fs.Bool("json", false, "print one JSON object instead of text")
	fs.Int("top", 10, "how many of the rows that moved most to list")
	return fs
}

type runRow struct {
	rank   int
	kept   bool
	tokens int64
}

type runSide struct {
	Run        string  `json:"run"`
	Kept       int     `json:"kept"`
	KeptTokens int64   `json:"kept_tokens"`
	Budget     float64 `json:"budget_flops"`
	Used       float64 `json:"used_flops"`
	rows       map[string]runRow
}

type moved struct {
	ID    string `json:"id"`
	RankA int    `json:"rank_a"`
	RankB int    `json:"rank_b"`
	KeptA bool   `json:"kept_a"`
	KeptB bool   `json:"kept_b"`
}

type runDiff struct {
	A, B         runSide
	Both         int     `json:"kept_both"`
	OnlyA        int     `json:"kept_only_a"`
	OnlyB        int     `json:"kept_only_b"`
	BothTokens   int64   `json:"kept_both_tokens"`
	OnlyATokens  int64   `json:"kept_only_a_tokens"`
	OnlyBTokens  int64   `json:"kept_only_b_tokens"`
	Jaccard      float64 `json:"jaccard"`
	Common       int     `json:"rows_in_both"`
	Spearman     float64 `json:"spearman"`
	Moved        []moved `json:"moved"`
	SpearmanNote string  `json:"spearman_note,omitempty"`
}

func (c *diffCmd) run(ctx context.Context, e *env, fs *pflag.FlagSet) error {
	asJSON, _ := fs.GetBool("json")
	top, _ := fs.GetInt("top")
	if fs.NArg() != 2 {
		return usagef("give two run folders")
	}
	if top < 0 {
		return usagef("--top %d: must be 0 or more", top)
	}
	d, err := diffRuns(fs.Arg(0), fs.Arg(1), top)
	if err != nil {
		return err
	}
	if asJSON {
		b, err := json.MarshalIndent(struct {
			A *runSide `json:"a"`
			B *runSide `json:"b"`
			*runDiff
		}{&d.A, &d.B, d}, "", "  ")
		if err != nil {
			return err
		}
		_, err = e.stdout.Write(append(b, '\n'))
		return err
	}
	w := bufio.NewWriter(e.stdout)
	defer w.Flush()
	pct := func(a, b float64) string {
		if b == 0 {
			return "-"
		}
		return fmt.Sprintf("%.1f%%", 100*a/b)
	}
	fmt.Fprintf(w, "A %s: %d rows kept, %d tokens, %s of %s FLOPs used (%s)\n", d.A.Run, d.A.Kept, d.A.KeptTokens, fmtFLOPs(d.A.Used), fmtFLOPs(d.A.Budget), pct(d.A.Used, d.A.Budget))
	fmt.Fprintf(w, "B %s: %d rows kept, %d tokens, %s of %s FLOPs used (%s)\n", d.B.Run, d.B.Kept, d.B.KeptTokens, fmtFLOPs(d.B.Used), fmtFLOPs(d.B.Budget), pct(d.B.Used, d.B.Budget))
	fmt.Fprintf(w, "kept in both %d (%d tokens), only in A %d (%d tokens), only in B %d (%d tokens); Jaccard %.4f\n",
		d.Both, d.BothTokens, d.OnlyA, d.OnlyATokens, d.OnlyB, d.OnlyBTokens, d.Jaccard)
	if d.SpearmanNote != "" {
		fmt.Fprintf(w, "rank correlation: %s\n", d.SpearmanNote)
	} else {
		fmt.Fprintf(w, "rank correlation over the %d rows both scored: Spearman's rho %.4f\n", d.Common, d.Spearman)
	}
	if len(d.Moved) > 0 {
		fmt.Fprintf(w, "rows that moved most:\n")
		for _, m := range d.Moved {
			fmt.Fprintf(w, "  %-28s rank %7d -> %-7d  kept %s -> %s\n", m.ID, m.RankA, m.RankB, yesNo(m.KeptA), yesNo(m.KeptB))
		}
	}
	return nil
}

func yesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}

func readRunSide(run string) (runSide, error) {
	s := runSide{Run: run, rows: map[string]runRow{}}
	seen := map[string]int{}
	err := eachScoreLine(run, func(_ int, line []byte) error {
		var r struct {
			ID     string `json:"id"`
			Rank   int    `json:"rank"`
			Kept   bool   `json:"kept"`
			Tokens int64  `json:"tokens"`
		}
		if err := json.Unmarshal(line, &r); err != nil {
			return err
		}
		key := r.ID
		if n := seen[r.ID]; n > 0 {
			key = r.ID + "#" + strconv.Itoa(n+1)
		}
		seen[r.ID]++
		s.rows[key] = runRow{rank: r.Rank, kept: r.Kept, tokens: r.Tokens}
		if r.Kept {
			s.Kept++
			s.KeptTokens += r.Tokens
		}
		return nil
	})
	if err != nil {
		return s, err
	}
	b, err := os.ReadFile(filepath.Join(run, "ledger.json"))
	if err != nil {
		return s, fmt.Errorf("read run %s: %w", run, err)
	}
	var l struct {
		Budget float64 `json:"budget"`
		Total  float64 `json:"total_flops"`
	}
	if err := json.Unmarshal(b, &l); err != nil {
		return s, fmt.Errorf("read %s: %w", filepath.Join(run, "ledger.json"), err)
	}
	s.Budget, s.Used = l.Budget, l.Total
	return s, nil
}

func diffRuns(a, b string, top int) (*runDiff, error) {
	var d runDiff
	var err error
	if d.A, err = readRunSide(a); err != nil {
		return nil, err
	}
	if d.B, err = readRunSide(b); err != nil {
		return nil, err
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
				d.Moved = append(d.Moved, moved{ID: id, RankA: x.rank, RankB: y.rank, KeptA: x.kept, KeptB: y.kept})
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
		return d.Moved[i].RankA < d.Moved[j].RankA
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
