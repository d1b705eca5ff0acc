package report

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"html/template"
	"math"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"

	"github.com/valyala/fastjson"

	"sluice/budget"
	"sluice/index"
	"sluice/index/atomicdir"
	selection "sluice/select"
	"sluice/select/audit"
	"sluice/select/run"
)

// Options say how much the page shows and where the run's inputs are.
type Options struct {
	Sample int        // rows shown in each sample: the top, either side of the cut, at random
	Terms  int        // target terms shown
	Files  int        // pool files shown by name; the rest are summed in one line
	Inputs run.Inputs // where the run's index and target are, if they have moved
}

// Check says what is wrong with o's counts, if anything.
func (o Options) Check() error {
	switch {
	case o.Sample < 0 || o.Sample > 100:
		return fmt.Errorf("--sample %d: give 0 to 100", o.Sample)
	case o.Terms < 0 || o.Terms > 500:
		return fmt.Errorf("--terms %d: give 0 to 500", o.Terms)
	case o.Files < 1 || o.Files > 500:
		return fmt.Errorf("--files %d: give 1 to 500", o.Files)
	}
	return nil
}

// Page is everything the page shows, worked out before the template runs.
type Page struct {
	Run        string
	Sluice     string
	Command    string
	Method     string
	Settings   run.Settings
	Rows       int
	KeptRows   int
	KeptTokens int64
	PoolTokens int64
	Targets    int
	Ledger     run.Ledger
	LedgerBar  ledgerBar
	Hist       histChart
	Files      barChart
	FilesOther string
	Terms      barChart
	TermsNote  string
	CutRank    int
	CutScore   float64
	TermsTFIDF bool // the terms' idf is TF-IDF's, not BM25's
	ByModel    bool // the run's method scores rows by models, not by the terms the terms chart weighs
	Top        []sampleView
	Above      []sampleView
	Below      []sampleView
	Random     []sampleView
	Seed       int
	Dropped    []reasonCount // rows not kept, by reason, in the order a reader asks about them
	Sets       []run.SetRef  // the target sets of a pick made for several, else none
}

// Build reads the run folder dir once (and its sample rows' explanations) and works out everything
// the page shows.
func Build(ctx context.Context, dir string, o Options) (*Page, error) {
	m, err := run.ReadManifest(dir)
	if err != nil {
		return nil, err
	}
	led, err := run.ReadLedger(dir)
	if err != nil {
		return nil, fmt.Errorf("report %s: %w", dir, err)
	}
	o.Inputs.Apply(m)
	if err := run.CheckInputs("report", dir, m); err != nil {
		return nil, err
	}
	x, err := audit.NewExplainer(ctx, dir, o.Inputs)
	if err != nil {
		return nil, err
	}
	defer x.Close()
	ix := x.Index()
	rep := &Page{Run: dir, Sluice: m.Sluice, Command: strings.Join(m.Command, " "), Settings: m.Settings,
		Method: m.Settings.MethodName(), Ledger: *led, CutRank: -1, CutScore: math.NaN(), Seed: sampleSeed, Sets: m.Sets}
	t, err := tallyScores(ctx, dir, ix, rep, o.Sample)
	if err != nil {
		return nil, err
	}
	rep.Hist = newHistChart(&t.hist, rep)
	rep.LedgerBar = newLedgerBar(*led)
	rep.Files, rep.FilesOther = fileChart(ix, t.keptTok, t.poolTok, t.keptRows, o.Files)
	rep.TermsTFIDF, rep.ByModel = termsIDF(m.Settings)
	rep.Terms, rep.TermsNote, rep.Targets = termChart(ix, rep.TermsTFIDF, x.Targets(), o.Terms)
	tx, txErr := newRowTexter(ix.Meta().Text)
	top, above, below := t.top.sorted(), t.above.sorted(), t.below.sorted()
	for _, s := range []struct {
		name string
		rows []sampleRow
		to   *[]sampleView
	}{
		{"top", top, &rep.Top}, {"above", above, &rep.Above}, {"below", below, &rep.Below},
		{"random", t.random.pick(o.Sample, top, above), &rep.Random},
	} {
		if *s.to, err = explainSample(x, tx, txErr, s.name, s.rows); err != nil {
			return nil, err
		}
	}
	// A part of the index that failed its check as it was read answered zeros.
	if err := ix.Err(); err != nil {
		return nil, err
	}
	return rep, nil
}

// tally is what one pass over scores.jsonl gathers: the histogram, per-file sums and the samples.
type tally struct {
	dropped           map[string]int64 // rows not kept, by reason
	hist              scoreHist
	keptTok, poolTok  []int64
	keptRows          []int
	top, above, below rankSample
	random            reservoir
}

// tallyScores streams the run's scores.jsonl, keeping only the tally and the totals of rep.
func tallyScores(ctx context.Context, dir string, ix *index.Index, rep *Page, sample int) (*tally, error) {
	nsrc := len(ix.Meta().Sources)
	lexical := rep.Settings.Method != run.MethodNgram
	t := &tally{dropped: map[string]int64{}, keptTok: make([]int64, nsrc), poolTok: make([]int64, nsrc), keptRows: make([]int, nsrc),
		hist: scoreHist{zeroApart: lexical}, top: rankSample{k: sample}, above: rankSample{k: sample, largest: true},
		below: rankSample{k: sample}, random: newReservoir(3*sample, sampleSeed)}
	var p fastjson.Parser
	row := 0
	err := run.EachScoreLine(dir, func(r int, line []byte) error {
		row = r + 1
		if r%65536 == 0 {
			if err := ctx.Err(); err != nil {
				return err
			}
		}
		if r >= ix.NumRows() {
			return fmt.Errorf("more lines than the index has rows (%d)", ix.NumRows())
		}
		v, err := p.ParseBytes(line)
		if err != nil {
			return err
		}
		tok, rank, kept := v.GetInt64("tokens"), v.GetInt("rank"), v.GetBool("kept")
		if !kept {
			t.dropped[string(v.GetStringBytes("reason"))]++
		}
		src := ix.RowLocation(r).Source
		t.poolTok[src] += tok
		rep.PoolTokens += tok
		sv := v.Get("score")
		if sv == nil || sv.Type() == fastjson.TypeNull {
			// Not scored by the run's method (a cascade's first stage left it out): it has no place
			// on the score axis and cannot have been kept.
			if kept {
				return errors.New("a kept row has no score")
			}
			t.hist.unscored(string(v.GetStringBytes("reason")))
			return nil
		}
		s, err := sv.Float64()
		if err != nil {
			return fmt.Errorf("score: %w", err)
		}
		if math.IsNaN(s) || math.IsInf(s, 0) {
			return fmt.Errorf("score %v", s)
		}
		t.hist.add(s, kept)
		// A lexical score of 0 shares no term with the target: nothing to explain.
		matched := s > 0 || !lexical
		if matched {
			if err := t.top.offer(r, rank, line); err != nil {
				return err
			}
		}
		if kept {
			t.keptTok[src] += tok
			t.keptRows[src]++
			rep.KeptRows++
			rep.KeptTokens += tok
			if rank > rep.CutRank {
				rep.CutRank, rep.CutScore = rank, s
			}
			if err := t.random.offer(r, rank, line); err != nil {
				return err
			}
			return t.above.offer(r, rank, line)
		} else if matched && walkReason(string(v.GetStringBytes("reason"))) {
			return t.below.offer(r, rank, line)
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	if row != ix.NumRows() {
		return nil, fmt.Errorf("read %s: %d lines for the index's %d rows", filepath.Join(dir, run.ScoresFile), row, ix.NumRows())
	}
	rep.Rows = row
	for _, why := range selection.Reasons() {
		if n := t.dropped[why.String()]; n > 0 {
			rep.Dropped = append(rep.Dropped, reasonCount{why.String(), n})
		}
	}
	return t, nil
}

// Chart geometry, in SVG user units; the charts scale to the page's width.
const (
	chartW   = 960
	barRowH  = 26
	barLabel = 250 // width of the label column of bar lists
	// barLabelRunes is the most runes of a bar's label that fit in its column at 13 px.
	barLabelRunes = 34
	barText       = 300 // width of the value column
)

type ledgerSeg struct {
	Kind, Name string
	FLOPs      string // exact, for data attributes
	Text       string // for people
	X, W       float64
	LegendX    float64
}

type ledgerBar struct {
	W                               int
	Budget, Selection, Training     string
	Left, Total                     string
	BudgetText, TotalText, TotalPct string
	Segs                            []ledgerSeg
}

func newLedgerBar(l run.Ledger) ledgerBar {
	lb := ledgerBar{W: chartW, Budget: exact(l.Budget), Selection: exact(l.Selection), Training: exact(l.Training),
		Left: exact(l.Left), Total: exact(l.Total), BudgetText: budget.FormatFLOPs(l.Budget), TotalText: budget.FormatFLOPs(l.Total), TotalPct: pct(l.Total, l.Budget)}
	parts := []struct {
		kind, name string
		v          float64
	}{{"sel", "selection", l.Selection}, {"train", "training", l.Training}, {"left", "left", max(l.Left, 0)}}
	// Widths are to scale, except that a part too small to see gets minW units, taken from the
	// widest part, so it can be found; its number says how small it is.
	const minW = 4
	ws := make([]float64, len(parts))
	widest := 0
	var sum, raised float64
	for i, p := range parts {
		sum += p.v
		if p.v > parts[widest].v {
			widest = i
		}
	}
	for i, p := range parts {
		if sum > 0 {
			ws[i] = p.v / sum * chartW
		}
		if p.v > 0 && ws[i] < minW {
			raised += minW - ws[i]
			ws[i] = minW
		}
	}
	ws[widest] = max(ws[widest]-raised, 0)
	x := 0.0
	for i, p := range parts {
		lb.Segs = append(lb.Segs, ledgerSeg{Kind: p.kind, Name: p.name, FLOPs: exact(p.v), X: x, W: ws[i], LegendX: float64(i) * chartW / 3,
			Text: fmt.Sprintf("%s FLOPs (%s)", budget.FormatFLOPs(p.v), pct(p.v, l.Budget))})
		x += ws[i]
	}
	return lb
}

type barItem struct {
	Label, Full string
	Y, W        float64
	Text        string
	// Data attributes: for files Key is the path, A kept tokens, B pool tokens, C kept rows; for
	// terms Key is the term, A its weight, B target rows holding it, C its document frequency.
	Key     string
	A, B, C string
}

type barChart struct {
	W, H       int
	LabelW     float64
	BarX, MaxW float64
	TextX      float64
	Items      []barItem
}

func newBarChart(n int) barChart {
	return barChart{W: chartW, H: max(n, 1)*barRowH + 4, LabelW: barLabel, BarX: barLabel + 8, MaxW: chartW - barLabel - 16 - barText, TextX: chartW - barText}
}

func fileChart(ix *index.Index, keptTok, poolTok []int64, keptRows []int, show int) (barChart, string) {
	srcs := ix.Meta().Sources
	order := make([]int, len(srcs))
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(i, j int) bool { return keptTok[order[i]] > keptTok[order[j]] })
	var other string
	if len(order) > show {
		var k, p int64
		for _, i := range order[show:] {
			k += keptTok[i]
			p += poolTok[i]
		}
		other = fmt.Sprintf("%d more pool files: %s of their %s tokens kept", len(order)-show, groupDigits(k), groupDigits(p))
		order = order[:show]
	}
	c := newBarChart(len(order))
	var top int64
	for _, i := range order {
		top = max(top, keptTok[i])
	}
	for n, i := range order {
		w := 0.0
		if top > 0 {
			w = float64(keptTok[i]) / float64(top) * c.MaxW
		}
		name := clean(srcs[i].Path)
		c.Items = append(c.Items, barItem{Label: shortenMiddle(name, barLabelRunes), Full: name, Y: float64(n * barRowH), W: w,
			Text: fmt.Sprintf("%s of %s tokens (%s), %d rows", groupDigits(keptTok[i]), groupDigits(poolTok[i]), pct(float64(keptTok[i]), float64(poolTok[i])), keptRows[i]),
			Key:  name, A: strconv.FormatInt(keptTok[i], 10), B: strconv.FormatInt(poolTok[i], 10), C: strconv.Itoa(keptRows[i])})
	}
	return c, other
}

// termsIDF says which idf the terms chart uses: the run's method's, or in a cascade its lexical
// first stage's; notLexical says the run's own method weighs no terms.
func termsIDF(st run.Settings) (tfidf, notLexical bool) {
	method := st.Method
	if method == run.MethodNgram {
		notLexical = true
		method, _, _ = strings.Cut(st.Prefilter, ":")
	}
	return method == run.MethodTFIDF, notLexical
}

// termChart weighs each target term as the summed query does: the number of target rows holding
// it times its idf over the pool, TF-IDF's smooth idf or BM25's.
func termChart(ix *index.Index, tfidf bool, targets []index.Target, show int) (barChart, string, int) {
	rows := map[string]int{}
	for _, t := range targets {
		seen := map[string]bool{}
		for _, term := range t.Terms {
			if !seen[term] {
				seen[term] = true
				rows[term]++
			}
		}
	}
	type tw struct {
		term     string
		rows, df int
		w        float64
	}
	n := ix.NumRows()
	var all []tw
	absent := 0
	for term, r := range rows {
		df := ix.DF(term)
		if df == 0 {
			absent++
			continue
		}
		idf := math.Log1p((float64(n-df) + 0.5) / (float64(df) + 0.5)) // BM25, Robertson and Zaragoza (2009)
		if tfidf {
			idf = math.Log(float64(1+n)/float64(1+df)) + 1 // smooth idf, as scikit-learn's TfidfVectorizer
		}
		all = append(all, tw{term, r, df, float64(r) * idf})
	}
	sort.Slice(all, func(i, j int) bool {
		if all[i].w != all[j].w {
			return all[i].w > all[j].w
		}
		return all[i].term < all[j].term
	})
	note := fmt.Sprintf("%d distinct terms in %d target rows", len(rows), len(targets))
	if absent > 0 {
		note += fmt.Sprintf("; %d of them occur nowhere in the pool and add nothing to any score", absent)
	}
	all = all[:min(show, len(all))]
	c := newBarChart(len(all))
	for i, t := range all {
		name := clean(t.term)
		c.Items = append(c.Items, barItem{Label: shortenMiddle(name, barLabelRunes), Full: name, Y: float64(i * barRowH), W: t.w / all[0].w * c.MaxW,
			Text: fmt.Sprintf("weight %.4g · in %d of %d target rows · df %s", t.w, t.rows, len(targets), groupDigits(int64(t.df))),
			Key:  name, A: exact(t.w), B: strconv.Itoa(t.rows), C: strconv.Itoa(t.df)})
	}
	return c, note, len(targets)
}

// unscoredWhy says in words why rows of a run have no score, by the reason scores.jsonl gives.
func unscoredWhy(reason string, st run.Settings) string {
	switch reason {
	case "prefilter":
		pre := st.Prefilter
		st.Prefilter = ""
		return fmt.Sprintf("fell at the prefilter (%s), so %s never scored them", pre, st.MethodName())
	case "no-score":
		return "the scores brought in have none for them"
	}
	return "reason " + reason
}

// exact formats v so that it reads back to the same float64: data attributes are for checking.
func exact(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// short formats v for a label.
func short(v float64) string { return strconv.FormatFloat(v, 'g', 4, 64) }

func pct(v, of float64) string {
	if of == 0 {
		return "-"
	}
	return fmt.Sprintf("%.1f%%", 100*v/of)
}

func groupDigits(v int64) string {
	s := strconv.FormatInt(v, 10)
	neg := strings.HasPrefix(s, "-")
	s = strings.TrimPrefix(s, "-")
	var b strings.Builder
	for i, c := range s {
		if i > 0 && (len(s)-i)%3 == 0 {
			b.WriteByte(',')
		}
		b.WriteRune(c)
	}
	if neg {
		return "-" + b.String()
	}
	return b.String()
}

// clean makes text from rows fit to show: invalid UTF-8 and control characters other than tab
// and newline become U+FFFD, so the page stays well-formed whatever a pool holds. html/template
// does the escaping.
func clean(s string) string {
	ok := utf8.ValidString(s)
	if ok {
		for _, r := range s {
			if (unicode.IsControl(r) && r != '\t' && r != '\n') || r == 0xFFFE || r == 0xFFFF {
				ok = false
				break
			}
		}
	}
	if ok {
		return s
	}
	return strings.Map(func(r rune) rune {
		if (unicode.IsControl(r) && r != '\t' && r != '\n') || r == 0xFFFE || r == 0xFFFF {
			return utf8.RuneError
		}
		return r
	}, strings.ToValidUTF8(s, "\uFFFD"))
}

// shortenMiddle fits s in n runes by cutting its middle: a file's name is told by its folder at
// the start and its base name at the end, and a term by both ends too. The end keeps the odd rune.
func shortenMiddle(s string, n int) string {
	r := []rune(s)
	if len(r) <= n || n < 1 {
		return s
	}
	head := (n - 1) / 2
	return string(r[:head]) + "…" + string(r[len(r)-(n-1-head):])
}

// generator is the mark every page carries near its start, by which a later report knows the file
// it would replace is a report.
const generator = `<meta name="generator" content="sluice report"/>`

// isReport reports whether the start of a file is a page this package wrote.
func isReport(head []byte) bool {
	return bytes.HasPrefix(head, []byte("<!DOCTYPE html>")) && bytes.Contains(head, []byte(generator))
}

// CheckOut reports, before any work is done, whether the page of the run folder dir may be written
// to out: a new file, or an earlier report, and never the run's files, its index or its target.
func CheckOut(out, dir string, in run.Inputs) error {
	inputs := []string{dir}
	if m, err := run.ReadManifest(dir); err == nil {
		in.Apply(m)
		inputs = append(inputs, m.Index.Path, m.Target.Path)
	}
	return atomicdir.CheckFile(out, "report", isReport, inputs)
}

// WriteFile writes the page beside out and renames it into place, so a reader never sees half.
func (rep *Page) WriteFile(out string) error {
	var buf bytes.Buffer
	if err := reportPage.Execute(&buf, rep); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	if err := atomicdir.ReplaceFile(out, buf.Bytes()); err != nil {
		return fmt.Errorf("write %s: %w", out, err)
	}
	return nil
}

var reportPage = template.Must(template.New("report").Funcs(template.FuncMap{
	"flops":       budget.FormatFLOPs,
	"digits":      groupDigits,
	"int":         func(v int) string { return groupDigits(int64(v)) },
	"pct":         pct,
	"exact":       exact,
	"short":       short,
	"count":       budget.FormatCount,
	"unscoredWhy": unscoredWhy,
	"float":       func(v int64) float64 { return float64(v) },
	"amount": func(v float64) string {
		if v == math.Trunc(v) && math.Abs(v) < 1e15 {
			return groupDigits(int64(v))
		}
		return short(v)
	},
}).Parse(reportHTML))

// reportHTML is written as well-formed markup (every element closed, attributes quoted) so that
// an XML parser reads it too; inline SVG needs no namespace in HTML, so the page names no URL.
const reportHTML = `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8"/>
<meta name="generator" content="sluice report"/>
<meta name="viewport" content="width=device-width, initial-scale=1"/>
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'"/>
<title>sluice report: {{.Run}}</title>
<style>
:root { --ink: #16191d; --muted: #4f5862; --rule: #d4d8dd; --panel: #f5f6f8;
  --kept: #0b6fae; --drop: #e69f00; --sel: #c2410c; --left: #e3e6ea; }
* { box-sizing: border-box; }
body { margin: 0; background: #ffffff; color: var(--ink);
  font: 15px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, "Noto Sans", "DejaVu Sans", Arial, sans-serif; }
main { max-width: 1040px; margin: 0 auto; padding: 28px 32px 48px; }
h1 { font-size: 26px; margin: 0 0 2px; letter-spacing: -0.01em; }
h2 { font-size: 19px; margin: 40px 0 4px; padding-top: 16px; border-top: 2px solid var(--ink); }
h3 { font-size: 16px; margin: 26px 0 8px; }
p.lead, p.note, figcaption { color: var(--muted); margin: 4px 0 12px; max-width: 70ch; }
code, pre, .mono { font-family: ui-monospace, "SFMono-Regular", "DejaVu Sans Mono", Menlo, Consolas, monospace; font-size: 13px; }
.facts { display: grid; grid-template-columns: repeat(auto-fill, minmax(180px, 1fr)); gap: 10px; margin: 20px 0 0; padding: 0; }
.facts div { background: var(--panel); border-left: 4px solid var(--kept); padding: 8px 12px; }
.facts dt { font-size: 12px; text-transform: uppercase; letter-spacing: 0.05em; color: var(--muted); }
.facts dd { margin: 0; font-size: 20px; font-weight: 650; overflow-wrap: anywhere; }
.facts dd small { display: block; font-size: 13px; font-weight: 400; color: var(--muted); }
figure { margin: 12px 0 0; }
svg { display: block; width: 100%; height: auto; overflow: visible; }
svg text { font: 13px system-ui, -apple-system, "Segoe UI", Roboto, "Noto Sans", "DejaVu Sans", Arial, sans-serif; fill: var(--ink); }
svg .small { font-size: 12px; fill: var(--muted); }
svg .strong { font-weight: 700; }
.kept { fill: var(--kept); } .drop { fill: var(--drop); } .sel { fill: var(--sel); } .train { fill: var(--kept); }
.left { fill: var(--left); } .axis { stroke: var(--ink); stroke-width: 1; } .grid { stroke: var(--rule); stroke-width: 1; }
.cut { stroke: var(--ink); stroke-width: 2; stroke-dasharray: 6 4; }
.zero { stroke: var(--muted); stroke-width: 1; }
.pos { fill: var(--kept); } .neg { fill: var(--sel); }
.legend { display: flex; gap: 20px; flex-wrap: wrap; margin: 6px 0; font-size: 14px; }
.sw { display: inline-block; width: 14px; height: 14px; vertical-align: -2px; margin-right: 6px; border: 1px solid rgba(0,0,0,0.25); }
.sw.kept { background: var(--kept); } .sw.drop { background: var(--drop); }
table { border-collapse: collapse; width: 100%; font-size: 13.5px; }
th, td { text-align: left; padding: 4px 8px; border-bottom: 1px solid var(--rule); vertical-align: top; }
th { font-weight: 600; color: var(--muted); font-size: 12.5px; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
.cards { display: grid; gap: 14px; }
.card { border: 1px solid var(--rule); border-left: 6px solid var(--kept); border-radius: 3px; padding: 12px 16px; }
.card.dropped { border-left-color: var(--drop); }
.card header { display: flex; flex-wrap: wrap; gap: 4px 18px; align-items: baseline; }
.card .id { font-weight: 700; font-size: 16px; overflow-wrap: anywhere; }
.card .meta { color: var(--muted); font-size: 13.5px; }
.badge { font-size: 12px; font-weight: 700; padding: 1px 8px; border-radius: 10px; background: var(--kept); color: #ffffff; }
.dropped .badge { background: var(--drop); color: var(--ink); }
.fate { margin: 6px 0 8px; }
pre.row { white-space: pre-wrap; overflow-wrap: anywhere; background: var(--panel); padding: 6px 10px; margin: 0 0 8px; }
pre.raw { max-height: 9.5em; overflow: auto; }
.field .label { font-size: 12px; font-weight: 600; color: var(--muted); letter-spacing: 0.03em; margin-top: 6px; }
.field pre.row { font: 14px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, "Noto Sans", "DejaVu Sans", Arial, sans-serif; }
.field .more { color: var(--muted); font-size: 12.5px; }
table.words { width: auto; min-width: 50%; }
ul.unscored { margin: 0 0 8px; padding-left: 18px; color: var(--muted); }
.why { display: grid; grid-template-columns: minmax(0, 3fr) minmax(0, 2fr); gap: 18px; }
@media (max-width: 760px) { .why { grid-template-columns: 1fr; } main { padding: 16px; } }
.targets ul { margin: 0; padding-left: 18px; } .targets li { margin-bottom: 4px; }
svg.part { display: inline-block; width: 80px; height: 10px; vertical-align: middle; }
footer { margin-top: 44px; padding-top: 12px; border-top: 1px solid var(--rule); color: var(--muted); font-size: 13px; }
footer ul { padding-left: 18px; }
</style>
</head>
<body>
<main>
<h1>Run report</h1>
<p class="lead">Run folder <code>{{.Run}}</code>, picked with {{.Method}} by sluice {{.Sluice}}.</p>
<dl class="facts">
<div><dt>rows kept</dt><dd data-kept-rows="{{.KeptRows}}">{{int .KeptRows}}<small>of {{int .Rows}} pool rows</small></dd></div>
<div><dt>tokens kept</dt><dd data-kept-tokens="{{.KeptTokens}}">{{digits .KeptTokens}}<small>of {{digits .PoolTokens}} ({{pct (float .KeptTokens) (float .PoolTokens)}})</small></dd></div>
<div><dt>budget used</dt><dd>{{.LedgerBar.TotalPct}}<small>of {{.LedgerBar.BudgetText}} FLOPs</small></dd></div>
<div><dt>model trained</dt><dd>{{count .Settings.TrainParams}}<small>parameters, {{.Settings.Epochs}} epoch{{if ne .Settings.Epochs 1.0}}s{{end}}</small></dd></div>
<div><dt>target rows</dt><dd>{{int .Targets}}<small>{{.Method}}</small></dd></div>
</dl>
<p class="note">Stopped: {{.Ledger.Stop}}.</p>

<section id="scores">
<h2>Scores and the cut</h2>
<p class="lead">How many pool rows scored how much against the target set{{if .ByModel}} (higher is more like the target){{end}}. Each bin has two bars, both from zero and not stacked: the rows kept (blue) and the rows not kept (orange); where a bin has both, the smaller is drawn narrower, in front. Rows are counted on a log scale, log10(1 + rows), so that a bin of one row stays in sight beside one of hundreds. The dashed line is the score of the last row kept.</p>
<div class="legend"><span><span class="sw kept"></span>kept</span><span><span class="sw drop"></span>not kept</span></div>
{{with .Hist}}<figure>
<svg id="histogram" viewBox="0 0 {{.W}} {{.H}}" role="img" aria-labelledby="hist-title" data-rows="{{$.Rows}}" data-kept-rows="{{$.KeptRows}}" data-scored-rows="{{.Rows}}" data-zero-rows="{{.Zero}}" data-unscored-rows="{{.UnscoredRows}}" data-bin-width="{{.BinWidth}}" data-min-score="{{.Min}}" data-max-score="{{.Max}}" data-count-scale="log10(1+count)"{{if .HasCut}} data-cut-score="{{.CutScore}}" data-cut-rank="{{$.CutRank}}"{{end}}>
<title id="hist-title">Histogram of scores: {{$.Rows}} rows, {{$.KeptRows}} kept{{if .HasCut}}, cut at score {{.CutScore}}{{end}}</title>
{{range .YTicks}}<line class="grid" x1="{{$.Hist.PlotL}}" x2="{{$.Hist.PlotR}}" y1="{{.Pos}}" y2="{{.Pos}}"></line>
<text class="small" x="{{$.Hist.PlotL}}" dx="-8" y="{{.Pos}}" dy="4" text-anchor="end">{{.Label}}</text>
{{end}}{{if .HasZeroLine}}<line class="zero" x1="{{.ZeroX}}" x2="{{.ZeroX}}" y1="{{.PlotT}}" y2="{{.PlotB}}"></line>
{{end}}{{range .Bars}}<g class="bin" data-lo="{{.Lo}}" data-hi="{{.Hi}}" data-kept="{{.Kept}}" data-dropped="{{.Dropped}}"><title>{{.Label}}</title>{{range .Bars}}<rect class="{{.Class}}" x="{{.X}}" y="{{.Y}}" width="{{.W}}" height="{{.H}}"></rect>{{end}}</g>
{{end}}<line class="axis" x1="{{.PlotL}}" x2="{{.PlotR}}" y1="{{.PlotB}}" y2="{{.PlotB}}"></line>
{{range .XTicks}}<line class="axis" x1="{{.Pos}}" x2="{{.Pos}}" y1="{{$.Hist.PlotB}}" y2="{{$.Hist.TickB}}"></line><text class="small" x="{{.Pos}}" y="{{$.Hist.PlotB}}" dy="17" text-anchor="middle">{{.Label}}</text>
{{end}}<text class="small" x="{{.PlotR}}" y="{{.H}}" dy="-4" text-anchor="end">{{.XTitle}}</text>
<text class="small" x="0" y="14">rows (log scale)</text>
{{if .HasCut}}<line class="cut" x1="{{.CutX}}" x2="{{.CutX}}" y1="{{.CutTop}}" y2="{{.PlotB}}"></line>
<text class="strong" x="{{.CutX}}" dx="{{if eq .CutAnchor "end"}}-6{{else}}6{{end}}" y="{{.CutTop}}" dy="9" text-anchor="{{.CutAnchor}}">{{.CutLabel}}</text>{{end}}
{{if .Empty}}<text x="{{.PlotL}}" y="120">{{if .ZeroApart}}No row shares a term with the target set.{{else}}No row has a score.{{end}}</text>{{end}}
</svg>
<figcaption>{{digits .Rows}} rows with a score{{if not .Empty}}, in {{len .Bars}} bins of width {{.BinWidth}} from {{.MinText}} to {{.MaxText}}{{end}}{{if .Zero}}; {{digits .Zero}} rows scoring 0 (no term shared with the target set) are not drawn{{end}}.{{if .Unscored}} {{digits .UnscoredRows}} rows have no score and are not drawn:{{end}}</figcaption>
{{if .Unscored}}<ul class="unscored" id="unscored">{{range .Unscored}}<li data-reason="{{.Reason}}" data-rows="{{.Rows}}">{{digits .Rows}} rows: {{unscoredWhy .Reason $.Settings}}</li>{{end}}</ul>{{end}}
</figure>{{end}}
</section>

<section id="ledger">
<h2>FLOP ledger</h2>
<p class="lead">The budget as one bar: what choosing the rows cost, what training on them will cost, and what is left. Selection is charged over the whole pool before any row is kept.</p>
{{with .LedgerBar}}<figure>
<svg id="ledger-bar" viewBox="0 0 {{.W}} 118" role="img" aria-labelledby="ledger-title" data-budget-flops="{{.Budget}}" data-selection-flops="{{.Selection}}" data-training-flops="{{.Training}}" data-left-flops="{{.Left}}" data-total-flops="{{.Total}}">
<title id="ledger-title">Ledger: budget {{.BudgetText}} FLOPs, used {{.TotalText}} ({{.TotalPct}})</title>
{{range .Segs}}<rect class="{{.Kind}}" x="{{.X}}" y="0" width="{{.W}}" height="44" data-part="{{.Name}}" data-flops="{{.FLOPs}}"><title>{{.Name}}: {{.Text}}</title></rect>
{{end}}<rect x="0" y="0" width="{{.W}}" height="44" fill="none" stroke="#16191d" stroke-width="1"></rect>
{{range .Segs}}<rect class="{{.Kind}}" x="{{.LegendX}}" y="62" width="14" height="14" stroke="#16191d" stroke-width="0.5"></rect>
<text class="strong" x="{{.LegendX}}" dx="22" y="74">{{.Name}}</text>
<text x="{{.LegendX}}" dx="22" y="94">{{.Text}}</text>
{{end}}<text class="small" x="0" y="114">budget {{.BudgetText}} FLOPs ({{$.Settings.BudgetHow}})</text>
</svg>
</figure>{{end}}
{{if .Sets}}<h3>Target sets</h3>
<p class="note">The training budget split by weight; each set walked its own ranking within its share, in this order, skipping rows an earlier set kept (taken). A set whose ranking ran out gave the rest of its share to the others. Token figures are the training budget's units.</p>
<table id="sets">
<thead><tr><th>set</th><th class="num">weight</th><th class="num">target rows</th><th class="num">share, tokens</th><th class="num">given</th><th class="num">given back</th><th class="num">kept rows</th><th class="num">kept tokens</th><th class="num">training FLOPs</th><th>stopped</th></tr></thead>
<tbody>
{{range .Sets}}<tr data-set="{{.Name}}" data-kept-rows="{{.KeptRows}}" data-kept-tokens="{{.KeptTokens}}"><td>{{.Name}}</td><td class="num">{{.Weight}}</td><td class="num">{{int .Rows}}</td><td class="num">{{amount .Share}}</td><td class="num">{{amount .Given}}</td><td class="num">{{amount .Returned}}</td><td class="num">{{int .KeptRows}}</td><td class="num">{{digits .KeptTokens}}</td><td class="num">{{flops .TrainingFLOPs}}</td><td>{{.Stop}}</td></tr>
{{end}}</tbody>
</table>
{{end}}{{if .Dropped}}<h3>Rows not kept</h3>
<ul id="dropped">{{range .Dropped}}<li data-not-kept="{{.Reason}}" data-not-kept-rows="{{.Rows}}">{{digits .Rows}} {{.Reason}}</li>{{end}}</ul>
<p class="note">duplicate: a better-scored copy was kept instead; contaminated: it shares a run of words with an evaluation file; source-cap: its file had its share; taken: another target set kept it; below-cut and budget: the budget ran out before or at it. <code>sluice why</code> explains any row.</p>
{{end}}<h3>Ledger lines</h3>
<table>
<thead><tr><th>what</th><th>kind</th><th class="num">count</th><th class="num">FLOPs each</th><th class="num">FLOPs</th><th>formula</th></tr></thead>
<tbody>
{{range .Ledger.Lines}}<tr><td>{{.What}}</td><td>{{.Kind}}</td><td class="num">{{amount .Count}} {{.Unit}}</td><td class="num">{{short .UnitFLOPs}}</td><td class="num" data-flops="{{exact .FLOPs}}">{{flops .FLOPs}}</td><td class="mono">{{.Formula}}</td></tr>
{{end}}</tbody>
</table>
</section>

<section id="files">
<h2>Kept tokens by pool file</h2>
<p class="lead">Where the kept rows come from, by the file they were indexed from, largest first; the figure after each bar is the kept tokens of the file's tokens.</p>
{{with .Files}}<figure>
<svg id="files-chart" viewBox="0 0 {{.W}} {{.H}}" role="img" aria-label="Kept tokens by pool file">
{{range .Items}}<g class="file" data-file="{{.Key}}" data-kept-tokens="{{.A}}" data-pool-tokens="{{.B}}" data-kept-rows="{{.C}}"><title>{{.Full}}</title>
<text x="{{$.Files.LabelW}}" y="{{.Y}}" dy="17" text-anchor="end">{{.Label}}</text>
<rect class="kept" x="{{$.Files.BarX}}" y="{{.Y}}" width="{{.W}}" height="18" transform="translate(0 3)"></rect>
<text x="{{$.Files.TextX}}" y="{{.Y}}" dy="17">{{.Text}}</text></g>
{{end}}</svg>
</figure>{{end}}
{{if .FilesOther}}<p class="note">{{.FilesOther}}.</p>{{end}}
</section>

<section id="terms">
<h2>Top terms of the target set</h2>
<p class="lead">The analysed terms that weigh most when the target set is read as one query: the number of target rows holding a term times its idf over the pool ({{if .TermsTFIDF}}ln((1+N)/(1+df)) + 1{{else}}ln(1 + (N − df + 0.5)/(df + 0.5)){{end}}, N = {{int .Rows}} rows).{{if .ByModel}} The run's n-gram models weigh no terms; this is the target set as {{if .Settings.Prefilter}}its lexical first stage{{else}}a lexical method{{end}} reads it.{{end}}</p>
{{with .Terms}}<figure>
<svg id="terms-chart" viewBox="0 0 {{.W}} {{.H}}" role="img" aria-label="Top terms of the target set">
{{range .Items}}<g class="term" data-term="{{.Key}}" data-weight="{{.A}}" data-target-rows="{{.B}}" data-df="{{.C}}"><title>{{.Full}}</title>
<text x="{{$.Terms.LabelW}}" y="{{.Y}}" dy="17" text-anchor="end">{{.Label}}</text>
<rect class="kept" x="{{$.Terms.BarX}}" y="{{.Y}}" width="{{.W}}" height="18" transform="translate(0 3)"></rect>
<text x="{{$.Terms.TextX}}" y="{{.Y}}" dy="17">{{.Text}}</text></g>
{{end}}</svg>
</figure>{{end}}
<p class="note">{{.TermsNote}}.</p>
</section>

<section id="sample">
<h2>Sample rows</h2>
<p class="lead">Rows from four places in the ranking, each with why it was or was not kept and {{if .ByModel}}the tokens that moved its score most, either way (a token's part is its log-probability under the target model{{if .Settings.Ngram}}{{if not .Settings.Ngram.TargetOnly}}, less that under the pool model,{{end}}{{end}} divided by the row's tokens + 1; all parts add up to the score){{else}}the terms that made its score (largest part first; all parts add up to the score) and the target rows it matched best{{end}}.</p>
<h3>Top of the ranking</h3>
<div class="cards" id="sample-top">{{range .Top}}{{template "card" .}}{{else}}<p class="note">No row has a score.</p>{{end}}</div>
<h3>Kept, just above the cut</h3>
<div class="cards" id="sample-kept">{{range .Above}}{{template "card" .}}{{else}}<p class="note">No row was kept.</p>{{end}}</div>
<h3>Not kept, just below the cut</h3>
<div class="cards" id="sample-dropped">{{range .Below}}{{template "card" .}}{{else}}<p class="note">Every row with a score was kept.</p>{{end}}</div>
<h3>Kept, at random</h3>
<p class="note">A uniform random sample of the kept rows not shown above (reservoir sampling over scores.jsonl with the fixed seed {{.Seed}}, so the same run gives the same page).</p>
<div class="cards" id="sample-random">{{range .Random}}{{template "card" .}}{{else}}<p class="note">No other row was kept.</p>{{end}}</div>
</section>

<footer>
<p>Made by <code>sluice report</code> from <code>{{.Run}}</code>. The page loads nothing and runs no script; every chart figure is also in a <code>data-</code> attribute.</p>
<p>Command: <code>{{.Command}}</code></p>
{{if .Ledger.Notes}}<ul>{{range .Ledger.Notes}}<li>{{.}}</li>{{end}}</ul>{{end}}
</footer>
</main>
</body>
</html>
{{define "card"}}<article class="card{{if not .Kept}} dropped{{end}}" data-sample="{{.Sample}}" data-id="{{.ID}}" data-rank="{{.Rank}}" data-kept="{{.Kept}}" data-score="{{.Score}}">
<header><span class="id">{{.ID}}</span><span class="badge">{{if .Kept}}kept{{else}}not kept{{end}}</span><span class="meta">rank {{.Rank}} · score {{.Score}} · {{.Tokens}} tokens · {{.Source}}</span></header>
<p class="fate">{{.Fate}}.</p>
{{if .Blocks}}<div class="text">{{range .Blocks}}<div class="field"><div class="label">{{.Label}}</div><pre class="row">{{.Text}}{{if .More}}<span class="more"> … {{.More}}</span>{{end}}</pre></div>{{end}}{{if .MoreBlocks}}<p class="note">{{.MoreBlocks}} not shown.</p>{{end}}</div>
{{else}}{{if .RawNote}}<p class="note">{{.RawNote}}.</p>{{end}}{{if .Raw}}<pre class="row raw">{{.Raw}}{{if .RawCut}} …{{end}}</pre>{{end}}
{{end}}{{if .Parts}}<div class="why">
<div><table>
<thead><tr><th>term</th><th class="num">tf</th><th class="num">df</th><th class="num">idf</th><th class="num">tf part</th><th class="num">query weight</th><th class="num">part</th><th></th></tr></thead>
<tbody>{{range .Parts}}<tr><td>{{.Term}}</td><td class="num">{{.TF}}</td><td class="num">{{.DF}}</td><td class="num">{{.IDF}}</td><td class="num">{{.TFPart}}</td><td class="num">{{.Weight}}</td><td class="num">{{.Contribution}}</td><td><svg class="part" viewBox="0 0 80 10" aria-hidden="true"><rect class="left" x="0" y="0" width="80" height="10"></rect><rect class="{{if $.Kept}}kept{{else}}drop{{end}}" x="0" y="0" width="{{.BarW}}" height="10"></rect></svg></td></tr>
{{end}}</tbody></table>
{{if .MoreParts}}<p class="note">{{.MoreParts}}.</p>{{end}}</div>
<div class="targets"><strong>Best target rows</strong>{{if .Targets}}<ul>{{range .Targets}}<li><span class="mono">{{.ID}}</span> ({{short .Score}}): {{range $i, $t := .Shared}}{{if $i}}, {{end}}{{$t}}{{end}}</li>{{end}}</ul>{{else}}<p class="note">none shares a term</p>{{end}}</div>
</div>
{{else if .Words}}<table class="words">
<thead><tr><th>token</th><th class="num">at</th><th class="num">ln p, target model</th>{{if not .TargetOnly}}<th class="num">ln p, pool model</th>{{end}}<th class="num">part</th><th></th></tr></thead>
<tbody>{{range .Words}}<tr><td>{{.Token}}</td><td class="num">{{.At}}</td><td class="num">{{.Target}}</td>{{if not $.TargetOnly}}<td class="num">{{.Pool}}</td>{{end}}<td class="num">{{.Part}}</td><td><svg class="part" viewBox="0 0 80 10" aria-hidden="true"><rect class="left" x="0" y="0" width="80" height="10"></rect><rect class="{{if .Neg}}neg{{else}}pos{{end}}" x="0" y="0" width="{{.BarW}}" height="10"></rect></svg></td></tr>
{{end}}</tbody></table>
{{end}}</article>
{{end}}`

// walkReason reports whether a row was not kept because the walk down the ranking stopped before
// it or it did not fit, rather than for a guard (a duplicate, a leaked evaluation row, a source's
// cap) or an earlier stage: only the former stand "below the cut".
func walkReason(reason string) bool {
	r, ok := selection.ParseReason(reason)
	return ok && r.Walk()
}
