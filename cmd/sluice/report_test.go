package main

import (
	"bytes"
	"context"
	"encoding/json"
	"encoding/xml"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"testing"
	"time"
	"unicode/utf8"

	"sluice/budget"
	"sluice/cmd/sluice/demodata"
	"sluice/select/report"
)

var updateReport = flag.Bool("update-report", false, "rewrite testdata/report/report.png and report-cascade.png from the browser test")

// reportLedger is the part of ledger.json the report must show.
type reportLedger struct {
	Budget    float64 `json:"budget"`
	Selection float64 `json:"selection_flops"`
	Training  float64 `json:"training_flops"`
	Left      float64 `json:"left_flops"`
	Total     float64 `json:"total_flops"`
}

// reportRuns are the runs the page is checked on: the README's worked example (lexical, scores of
// one sign) and an n-gram cascade, whose scores have either sign and whose rows left out by the
// prefilter have none.
var reportRuns = []struct {
	name, method string // method is the label the page must show
	pick         []string
}{
	{"bm25", "bm25/sum", nil},
	{"cascade", "ngram-3 after bm25:25%", []string{"--method", "ngram", "--prefilter", "bm25:25%"}},
}

// demoReport picks on the demo data as the README's worked example does, with the extra pick
// flags, and writes its report.
func demoReport(t *testing.T, pick ...string) (run, page string) {
	t.Helper()
	dir, idx, target := demoIndex(t)
	// Relative names, so the page (and the committed screenshot) shows "run" and not a temporary path.
	t.Chdir(dir)
	run = "run"
	args := append([]string{"pick", "--quiet", "--index", filepath.Base(idx), "--target", filepath.Base(target), "--budget", "6e12",
		"--train-params", "125M", "--out", run}, pick...)
	if code, _, stderr := sluice(t, args...); code != 0 {
		t.Fatal(stderr)
	}
	page = filepath.Join(dir, "report.html")
	if code, _, stderr := sluice(t, "report", "--quiet", "--sample", "3", "--out", page, run); code != 0 {
		t.Fatalf("report: exit %d: %s", code, stderr)
	}
	return run, page
}

func readLedger(t *testing.T, run string) reportLedger {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(run, "ledger.json"))
	if err != nil {
		t.Fatal(err)
	}
	var l reportLedger
	if err := json.Unmarshal(b, &l); err != nil {
		t.Fatal(err)
	}
	return l
}

// pageElem is an element of the page: its name, attributes, the text inside it (its children's
// too), and the place in the page's list of the card (article) it is in, or -1.
type pageElem struct {
	Name  string
	Attrs map[string]string
	Text  string
	Card  int
}

// parsePage reads the page with a strict XML parser (the report is written as well-formed markup)
// and returns the attributes of every element by its id, the number of elements of each name, all
// the page's text and every element in page order.
func parsePage(t *testing.T, page []byte) (byID map[string]map[string]string, elems map[string]int, text string, all []pageElem) {
	t.Helper()
	d := xml.NewDecoder(bytes.NewReader(page))
	d.Strict = true
	byID, elems = map[string]map[string]string{}, map[string]int{}
	var sb strings.Builder
	var open []int // indexes into all of the elements not yet closed
	texts := []*strings.Builder{}
	for {
		tok, err := d.Token()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatalf("the page does not parse: %v", err)
		}
		switch tok := tok.(type) {
		case xml.StartElement:
			elems[tok.Name.Local]++
			attrs := map[string]string{}
			for _, a := range tok.Attr {
				attrs[a.Name.Local] = a.Value
				switch strings.ToLower(a.Name.Local) {
				case "src", "href", "action", "formaction", "poster", "data", "srcset", "background", "manifest":
					t.Errorf("<%s %s=%q>: the page must load nothing", tok.Name.Local, a.Name.Local, a.Value)
				}
				if strings.Contains(strings.ToLower(a.Value), "url(") {
					t.Errorf("<%s %s=%q>: the page must load nothing", tok.Name.Local, a.Name.Local, a.Value)
				}
			}
			if id := attrs["id"]; id != "" {
				byID[id] = attrs
			}
			card := -1
			for _, i := range open {
				if all[i].Name == "article" {
					card = i
				}
			}
			all = append(all, pageElem{Name: tok.Name.Local, Attrs: attrs, Card: card})
			texts = append(texts, &strings.Builder{})
			open = append(open, len(all)-1)
		case xml.EndElement:
			i := open[len(open)-1]
			open = open[:len(open)-1]
			all[i].Text = texts[i].String()
		case xml.CharData:
			sb.Write(tok)
			for _, i := range open {
				texts[i].Write(tok)
			}
		}
	}
	for _, e := range []string{"script", "link", "img", "iframe", "object", "embed", "image", "use", "base"} {
		if elems[e] > 0 {
			t.Errorf("the page has %d <%s> elements: it must be self-contained and run nothing", elems[e], e)
		}
	}
	return byID, elems, sb.String(), all
}

func float(t *testing.T, attrs map[string]string, name string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(attrs[name], 64)
	if err != nil {
		t.Fatalf("attribute %s: %v", name, err)
	}
	return v
}

// runFacts are what scores.jsonl says the page must show.
type runFacts struct {
	scores      []scoreLine
	nulls       []bool // the line's score is null
	kept        int
	keptTokens  int64
	cut         float64
	cutRank     int
	unscored    map[string]int // rows without a score, by reason
	zeroApart   bool           // a lexical run: rows scoring 0 are counted apart
	zero        int
	ranks       map[string]int // rank by id (the demo's ids are unique)
	scoresByRow map[string]*float64
}

func readFacts(t *testing.T, run string, lexical bool) runFacts {
	t.Helper()
	f := runFacts{scores: readScores(t, filepath.Join(run, "scores.jsonl")), cut: math.Inf(1), unscored: map[string]int{},
		zeroApart: lexical, ranks: map[string]int{}}
	// readScores reads null as 0; the raw lines tell them apart.
	b, err := os.ReadFile(filepath.Join(run, "scores.jsonl"))
	if err != nil {
		t.Fatal(err)
	}
	for _, l := range strings.Split(strings.TrimSpace(string(b)), "\n") {
		var raw struct{ Score *float64 }
		if err := json.Unmarshal([]byte(l), &raw); err != nil {
			t.Fatal(err)
		}
		f.nulls = append(f.nulls, raw.Score == nil)
	}
	for i, s := range f.scores {
		f.ranks[s.ID] = s.Rank
		switch {
		case f.nulls[i]:
			f.unscored[s.Reason]++
		case lexical && s.Score == 0:
			f.zero++
		}
		if s.Kept {
			f.kept++
			f.keptTokens += s.Tokens
			f.cut = min(f.cut, s.Score)
			f.cutRank = max(f.cutRank, s.Rank)
		}
	}
	return f
}

// binned counts the finite scores into the bins [lo, hi) the page drew, and fails when a score falls
// in none.
func (f runFacts) binned(t *testing.T, lo, hi []float64) (kept, dropped []float64) {
	t.Helper()
	kept, dropped = make([]float64, len(lo)), make([]float64, len(lo))
	for i, s := range f.scores {
		if f.nulls[i] || (f.zeroApart && s.Score == 0) {
			continue
		}
		j := sort.Search(len(lo), func(j int) bool { return hi[j] > s.Score })
		if j == len(lo) || s.Score < lo[j] {
			t.Fatalf("score %v of %s falls in no bin drawn", s.Score, s.ID)
		}
		if s.Kept {
			kept[j]++
		} else {
			dropped[j]++
		}
	}
	return kept, dropped
}

// checkSamples checks the page's four samples, given each card's sample, id, rank and kept flag:
// the top of the ranking, the kept rows just above the cut, the best rows not kept, and kept rows
// at random, none of them shown twice.
func (f runFacts) checkSamples(t *testing.T, cards []sampleCard) {
	t.Helper()
	by := map[string][]sampleCard{}
	for _, c := range cards {
		by[c.Sample] = append(by[c.Sample], c)
		if want, ok := f.ranks[c.ID]; !ok || float64(want) != c.Rank {
			t.Errorf("sample row %s at rank %v; scores.jsonl says %d", c.ID, c.Rank, want)
		}
		// Rows above the cut may be dropped by a guard (a duplicate, say); none below it is kept.
		if c.Kept && c.Rank > float64(f.cutRank) {
			t.Errorf("sample row %s at rank %v: kept, but the cut is at rank %d", c.ID, c.Rank, f.cutRank)
		}
	}
	for _, s := range []string{"top", "above", "below", "random"} {
		if len(by[s]) != 3 {
			t.Errorf("%d rows in the %s sample, want 3", len(by[s]), s)
		}
	}
	for i, c := range by["top"] {
		if c.Rank != float64(i+1) {
			t.Errorf("the top sample's row %d is at rank %v", i, c.Rank)
		}
	}
	// Kept rows need not have consecutive ranks: rows a guard dropped sit between them.
	for i, c := range by["above"] {
		last := i == len(by["above"])-1
		if !c.Kept || c.Rank > float64(f.cutRank) || (last && c.Rank != float64(f.cutRank)) || (i > 0 && c.Rank <= by["above"][i-1].Rank) {
			t.Errorf("row %s at rank %v is not among the last kept (cut at rank %d)", c.ID, c.Rank, f.cutRank)
		}
	}
	for i, c := range by["below"] {
		if c.Kept || c.Rank <= float64(f.cutRank) || (i > 0 && c.Rank <= by["below"][i-1].Rank) {
			t.Errorf("row %s at rank %v is not among the first not kept (cut at rank %d)", c.ID, c.Rank, f.cutRank)
		}
	}
	shown := map[string]bool{}
	for _, c := range append(by["top"], by["above"]...) {
		shown[c.ID] = true
	}
	for _, c := range by["random"] {
		if !c.Kept || shown[c.ID] {
			t.Errorf("random sample row %s: kept %v, shown above %v", c.ID, c.Kept, shown[c.ID])
		}
		shown[c.ID] = true
	}
	for _, c := range cards {
		// The demo's rows are instruction, input and output: each is shown as text under its name.
		if c.Raw || len(c.Fields) == 0 {
			t.Errorf("sample row %s: shown raw %v, text fields %q", c.ID, c.Raw, c.Fields)
		}
		for _, l := range c.Fields {
			if l != "instruction" && l != "input" && l != "output" {
				t.Errorf("sample row %s: a text field labelled %q", c.ID, l)
			}
		}
		if c.Explained == 0 {
			t.Errorf("sample row %s: no terms or tokens explain its score", c.ID)
		}
	}
}

// sampleCard is what a check needs of one sample row's card.
type sampleCard struct {
	Sample, ID string
	Rank       float64
	Kept, Raw  bool
	Fields     []string // the labels of its text fields
	Explained  int      // rows of its terms or tokens table
}

// TestReportPage checks the page without a browser: it parses, loads nothing from anywhere, and
// its ledger and histogram figures are the run's, to the last bit, on a lexical run and on an
// n-gram cascade.
func TestReportPage(t *testing.T) {
	for _, rr := range reportRuns {
		t.Run(rr.name, func(t *testing.T) {
			run, path := demoReport(t, rr.pick...)
			page, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			checkPage(t, run, page, rr.method, rr.pick == nil)
			// The same run gives the same page, random sample and all.
			again := path + ".again.html"
			if code, _, stderr := sluice(t, "report", "--quiet", "--sample", "3", "--out", again, run); code != 0 {
				t.Fatalf("report: exit %d: %s", code, stderr)
			}
			if b, err := os.ReadFile(again); err != nil || !bytes.Equal(b, page) {
				t.Errorf("a second page of the same run differs (%v)", err)
			}
		})
	}
}

func checkPage(t *testing.T, run string, page []byte, method string, lexical bool) {
	byID, _, text, all := parsePage(t, page)
	// The demo rows hold no URL, so none may appear anywhere: not in CSS, not as a namespace.
	for _, s := range []string{"http://", "https://", "@import", "url("} {
		if bytes.Contains(page, []byte(s)) {
			t.Errorf("the page holds %q", s)
		}
	}
	if want := "picked with " + method + " by sluice"; !strings.Contains(strings.Join(strings.Fields(text), " "), want) {
		t.Errorf("the page does not say %q", want)
	}

	led := readLedger(t, run)
	bar := byID["ledger-bar"]
	for _, c := range []struct {
		attr string
		want float64
	}{
		{"data-budget-flops", led.Budget}, {"data-selection-flops", led.Selection},
		{"data-training-flops", led.Training}, {"data-left-flops", led.Left}, {"data-total-flops", led.Total},
	} {
		if got := float(t, bar, c.attr); got != c.want {
			t.Errorf("ledger bar %s = %v, ledger.json says %v", c.attr, got, c.want)
		}
	}
	// The numbers are also written as text, for people.
	for _, v := range []float64{led.Budget, led.Selection, led.Training, led.Left} {
		if !strings.Contains(text, budget.FormatFLOPs(v)+" FLOPs") {
			t.Errorf("the page does not show %s FLOPs", budget.FormatFLOPs(v))
		}
	}

	// Every reason a row was not kept is counted on the page, as scores.jsonl counts it.
	notKept := map[string]int{}
	for _, s := range readScores(t, filepath.Join(run, "scores.jsonl")) {
		if !s.Kept {
			notKept[s.Reason]++
		}
	}
	onPage := map[string]bool{}
	for _, e := range all {
		if e.Name == "li" && e.Attrs["data-not-kept"] != "" {
			n, _ := strconv.Atoi(e.Attrs["data-not-kept-rows"])
			onPage[e.Attrs["data-not-kept"]+"="+strconv.Itoa(n)] = true
		}
	}
	for why, n := range notKept {
		if !onPage[why+"="+strconv.Itoa(n)] {
			t.Errorf("the page does not count the %d rows not kept for %q", n, why)
		}
	}

	f := readFacts(t, run, lexical)
	hist := byID["histogram"]
	var unscored int
	for _, n := range f.unscored {
		unscored += n
	}
	for _, c := range []struct {
		attr string
		want float64
	}{
		{"data-rows", float64(len(f.scores))}, {"data-kept-rows", float64(f.kept)}, {"data-cut-score", f.cut},
		{"data-cut-rank", float64(f.cutRank)}, {"data-unscored-rows", float64(unscored)}, {"data-zero-rows", float64(f.zero)},
		{"data-scored-rows", float64(len(f.scores) - unscored)},
	} {
		if got := float(t, hist, c.attr); got != c.want {
			t.Errorf("histogram %s = %v, scores.jsonl says %v", c.attr, got, c.want)
		}
	}
	if !lexical && unscored == 0 {
		t.Error("the cascade left no row without a score: the check of them checks nothing")
	}
	if hist["data-count-scale"] != "log10(1+count)" {
		t.Errorf("histogram count scale %q", hist["data-count-scale"])
	}
	// Rows without a score are listed apart, by reason.
	listed := map[string]int{}
	for _, e := range all {
		if e.Name == "li" && e.Attrs["data-reason"] != "" {
			n, _ := strconv.Atoi(e.Attrs["data-rows"])
			listed[e.Attrs["data-reason"]] = n
			if e.Attrs["data-reason"] == "prefilter" && !strings.Contains(e.Text, "fell at the prefilter (bm25:25%)") {
				t.Errorf("prefilter rows explained as %q", e.Text)
			}
		}
	}
	if fmt.Sprint(listed) != fmt.Sprint(f.unscored) {
		t.Errorf("rows without a score listed %v; scores.jsonl: %v", listed, f.unscored)
	}

	// Every finite score is in the bin whose counts the page states, and each bar's height is
	// log10(1 + its count) on one scale.
	var lo, hi, keptN, droppedN []float64
	var heights [][2]float64 // height, count
	inBin := -1
	for i, e := range all {
		switch {
		case e.Name == "g" && e.Attrs["class"] == "bin":
			inBin = i
			lo, hi = append(lo, float(t, e.Attrs, "data-lo")), append(hi, float(t, e.Attrs, "data-hi"))
			keptN, droppedN = append(keptN, float(t, e.Attrs, "data-kept")), append(droppedN, float(t, e.Attrs, "data-dropped"))
		case e.Name == "rect" && inBin >= 0 && i <= inBin+4 && (e.Attrs["class"] == "kept" || e.Attrs["class"] == "drop"):
			n := keptN[len(keptN)-1]
			if e.Attrs["class"] == "drop" {
				n = droppedN[len(droppedN)-1]
			}
			heights = append(heights, [2]float64{float(t, e.Attrs, "height"), n})
		}
	}
	kept, dropped := f.binned(t, lo, hi)
	for i := range lo {
		if keptN[i] != kept[i] || droppedN[i] != dropped[i] {
			t.Errorf("bin [%v, %v): %v kept, %v not in the page; scores.jsonl: %v, %v", lo[i], hi[i], keptN[i], droppedN[i], kept[i], dropped[i])
		}
	}
	checkLogHeights(t, heights, 1e-6)

	// The kept tokens by file add up, and a long file name is cut in its middle.
	var fileTokens float64
	for i, e := range all {
		if e.Name == "g" && e.Attrs["class"] == "file" {
			fileTokens += float(t, e.Attrs, "data-kept-tokens")
			for _, l := range all[i+1:] {
				if l.Name == "text" {
					checkMiddleCut(t, e.Attrs["data-file"], l.Text)
					// The demo's pool is indexed by its absolute, temporary path: long enough to cut.
					if utf8.RuneCountInString(e.Attrs["data-file"]) > 34 && l.Text == e.Attrs["data-file"] {
						t.Errorf("file label %q is not cut", l.Text)
					}
					break
				}
			}
		}
	}
	if fileTokens != float64(f.keptTokens) {
		t.Errorf("kept tokens by file add to %v; scores.jsonl's kept rows hold %d", fileTokens, f.keptTokens)
	}

	var cards []sampleCard
	for _, e := range all {
		switch {
		case e.Name == "article":
			rank, _ := strconv.ParseFloat(e.Attrs["data-rank"], 64)
			cards = append(cards, sampleCard{Sample: e.Attrs["data-sample"], ID: e.Attrs["data-id"], Rank: rank, Kept: e.Attrs["data-kept"] == "true"})
		case e.Card < 0 || len(cards) == 0:
		case e.Name == "div" && e.Attrs["class"] == "label":
			cards[len(cards)-1].Fields = append(cards[len(cards)-1].Fields, e.Text)
		case e.Name == "pre" && strings.Contains(e.Attrs["class"], "raw"):
			cards[len(cards)-1].Raw = true
		case e.Name == "tr":
			cards[len(cards)-1].Explained++
		case e.Name == "thead":
			cards[len(cards)-1].Explained--
		}
	}
	f.checkSamples(t, cards)
}

// checkLogHeights checks that each bar's height, against its count, is log10(1 + count) times one
// factor for all, within tol of the tallest, and that a bar of a single row is in sight: a tenth of
// the tallest at least, where a linear axis of the demo's counts would draw it under 1%.
func checkLogHeights(t *testing.T, bars [][2]float64, tol float64) {
	t.Helper()
	if len(bars) == 0 {
		t.Fatal("no bars drawn")
	}
	var tallest, top float64
	for _, b := range bars {
		if b[0] > tallest {
			tallest, top = b[0], b[1]
		}
	}
	k := tallest / math.Log10(1+top)
	for _, b := range bars {
		if b[1] < 1 {
			t.Errorf("a bar of %v rows is drawn", b[1])
			continue
		}
		if want := k * math.Log10(1+b[1]); math.Abs(b[0]-want) > tol*tallest {
			t.Errorf("a bar of %v rows is %v high, want %v on the log10(1+count) scale of the tallest (%v rows, %v high)", b[1], b[0], want, top, tallest)
		}
		if b[0] < tallest/10 {
			t.Errorf("a bar of %v rows is %v high beside the tallest's %v: it cannot be seen", b[1], b[0], tallest)
		}
	}
}

// TestReportEscapes: ids and text from rows are shown as text, never as markup.
func TestReportEscapes(t *testing.T) {
	dir := t.TempDir()
	pool := filepath.Join(dir, "pool.jsonl")
	target := filepath.Join(dir, "target.jsonl")
	os.WriteFile(pool, []byte(`{"id":"<script>alert(1)</script>","text":"ferry ticket refund <img src=http://example.invalid/x.png>"}
{"id":"a&b\"c'd","text":"ferry ticket </pre></article> refund `+"\x01"+` \"quoted\""}
{"id":"plain","text":"weather forecast rain"}
`), 0o644) // a raw control byte: the page must still be well-formed
	os.WriteFile(target, []byte(`{"text":"ferry ticket refund"}`+"\n"), 0o644)
	idx, run, page := filepath.Join(dir, "idx"), filepath.Join(dir, "run"), filepath.Join(dir, "r.html")
	for _, args := range [][]string{
		{"index", "--quiet", "--id", "id", "--text", "text", "--out", idx, pool},
		{"pick", "--quiet", "--index", idx, "--target", target, "--budget", "1e12", "--train-params", "1M", "--max-rows", "1", "--out", run},
		{"report", "--quiet", "--out", page, run},
	} {
		if code, _, stderr := sluice(t, args...); code != 0 {
			t.Fatalf("%v: exit %d: %s", args, code, stderr)
		}
	}
	b, err := os.ReadFile(page)
	if err != nil {
		t.Fatal(err)
	}
	_, elems, text, _ := parsePage(t, b)
	if elems["article"] != 4 {
		t.Errorf("%d sample rows, want the kept one and the dropped one that matched, at the top and either side of the cut", elems["article"])
	}
	for _, want := range []string{"<script>alert(1)</script>", `a&b"c'd`, "<img src=http://example.invalid/x.png>", "</pre></article>"} {
		if !strings.Contains(text, want) && !strings.Contains(text, strings.ReplaceAll(want, `"`, `\"`)) {
			t.Errorf("the page's text lacks %q", want)
		}
	}
}

func TestReportUsage(t *testing.T) {
	for _, tc := range []struct {
		args []string
		code int
		msg  string
	}{
		{[]string{"report", "--out", "x.html"}, 2, "name one run folder"},
		{[]string{"report", "run"}, 2, "--out is required"},
		{[]string{"report", "--sample", "-1", "--out", "x.html", "run"}, 2, "--sample"},
		{[]string{"report", "--out", filepath.Join(t.TempDir(), "x.html"), filepath.Join(t.TempDir(), "none")}, 1, "manifest.json"},
	} {
		code, stdout, stderr := sluice(t, tc.args...)
		if code != tc.code || !strings.Contains(stdout+stderr, tc.msg) {
			t.Errorf("sluice %q: exit %d (want %d), output %q lacks %q", tc.args, code, tc.code, stdout+stderr, tc.msg)
		}
	}
}

// browserResult is what testdata/report/check.mjs prints.
type browserResult struct {
	Fatal         string   `json:"fatal"`
	ConsoleErrors []string `json:"consoleErrors"`
	PageErrors    []string `json:"pageErrors"`
	Requests      []string `json:"requests"`
	Ledger        struct {
		Budget, Selection, Training, Left, Total float64
		Parts                                    []struct {
			Part  string
			FLOPs float64
			Width float64
		}
	}
	Histogram struct {
		Rows, KeptRows, ZeroRows, UnscoredRows float64
		CountScale                             string
		Unscored                               []struct {
			Reason string
			Rows   float64
			Text   string
		}
		CutScore, CutRank *float64
		BinWidth          float64
		Bins              []struct {
			Lo, Hi, Kept, Dropped float64
			Bars                  []struct{ Count, Height float64 }
		}
	}
	Files []struct {
		File, Label                      string
		KeptTokens, PoolTokens, KeptRows float64
	}
	Terms  []struct{ Term string }
	Sample []struct {
		sampleCard
		WhiteSpace []string
	}
	Method               string
	PageWidth, ViewWidth float64
}

// needBrowser skips the test when the browser check cannot run here, or fails it under CI, which
// installs everything with testdata/report/install.sh.
func needBrowser(t *testing.T) (node, script string) {
	t.Helper()
	missing := func(what string) {
		msg := what + " is missing; run 'bash testdata/report/install.sh' to install Chromium and playwright-core"
		if os.Getenv("CI") != "" {
			t.Fatal("CI is set, so the browser test must run: " + msg)
		}
		t.Skip(msg)
	}
	node, err := exec.LookPath("node")
	if err != nil {
		missing("node")
	}
	if _, err := os.Stat("/usr/bin/chromium"); err != nil {
		missing("/usr/bin/chromium")
	}
	root, err := filepath.Abs(filepath.Join("..", ".."))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(filepath.Join(root, "testdata", "report", "node_modules", "playwright-core", "package.json")); err != nil {
		missing("playwright-core (testdata/report/node_modules)")
	}
	return node, filepath.Join(root, "testdata", "report", "check.mjs")
}

// TestReportInBrowser loads the reports of a lexical run and of an n-gram cascade in headless
// Chromium: no console or page errors, no request for anything, and the charts as drawn carry the
// runs' figures.
func TestReportInBrowser(t *testing.T) {
	node, script := needBrowser(t)
	for _, rr := range reportRuns {
		t.Run(rr.name, func(t *testing.T) {
			run, page := demoReport(t, rr.pick...)
			shot := filepath.Join(t.TempDir(), "report.png")
			res := runCheck(t, node, script, page, shot)
			checkBrowser(t, res, run, rr.method, rr.pick == nil)
			if *updateReport {
				name := "report.png"
				if rr.pick != nil {
					name = "report-" + rr.name + ".png"
				}
				b, err := os.ReadFile(shot)
				if err != nil {
					t.Fatal(err)
				}
				if err := os.WriteFile(filepath.Join(filepath.Dir(script), name), b, 0o644); err != nil {
					t.Fatal(err)
				}
			}
		})
	}
}

func runCheck(t *testing.T, node, script, page, shot string) browserResult {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 3*time.Minute)
	defer cancel()
	cmd := exec.CommandContext(ctx, node, script, page, shot)
	cmd.Dir = filepath.Dir(script)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	var res browserResult
	if jerr := json.Unmarshal(out, &res); jerr != nil {
		t.Fatalf("check.mjs: %v (%v)\nstdout: %s\nstderr: %s", err, jerr, out, stderr.String())
	}
	if err != nil || res.Fatal != "" {
		t.Fatalf("check.mjs: %v: %s\nstderr: %s", err, res.Fatal, stderr.String())
	}
	return res
}

func checkBrowser(t *testing.T, res browserResult, run, method string, lexical bool) {
	t.Helper()
	if len(res.ConsoleErrors)+len(res.PageErrors) > 0 {
		t.Errorf("console errors %q, page errors %q", res.ConsoleErrors, res.PageErrors)
	}
	if len(res.Requests) > 0 {
		t.Errorf("the page asked for %q: it must load nothing", res.Requests)
	}
	if res.PageWidth > res.ViewWidth {
		t.Errorf("the page is %v px wide in a %v px window: something overflows", res.PageWidth, res.ViewWidth)
	}
	if want := "picked with " + method + " by sluice"; !strings.Contains(res.Method, want) {
		t.Errorf("the page's lead %q does not say %q", res.Method, want)
	}

	led := readLedger(t, run)
	l := res.Ledger
	if l.Budget != led.Budget || l.Selection != led.Selection || l.Training != led.Training || l.Left != led.Left || l.Total != led.Total {
		t.Errorf("ledger in the browser %+v, ledger.json %+v", l, led)
	}
	for _, p := range l.Parts {
		if p.FLOPs > 0 && p.Width < 1 {
			t.Errorf("ledger part %s (%v FLOPs) is drawn %v px wide: it cannot be seen", p.Part, p.FLOPs, p.Width)
		}
	}

	f := readFacts(t, run, lexical)
	h := res.Histogram
	var lo, hi []float64
	var bars [][2]float64
	for _, b := range h.Bins {
		lo, hi = append(lo, b.Lo), append(hi, b.Hi)
		for _, bar := range b.Bars {
			bars = append(bars, [2]float64{bar.Height, bar.Count})
		}
	}
	kept, dropped := f.binned(t, lo, hi)
	for i, b := range h.Bins {
		if b.Kept != kept[i] || b.Dropped != dropped[i] {
			t.Errorf("bin [%v, %v): %v kept, %v not in the page; scores.jsonl: %v, %v", b.Lo, b.Hi, b.Kept, b.Dropped, kept[i], dropped[i])
		}
	}
	// As drawn on screen, to a pixel's rounding: the count axis is log10(1 + rows).
	checkLogHeights(t, bars, 0.01)
	if h.CountScale != "log10(1+count)" {
		t.Errorf("count scale %q", h.CountScale)
	}
	var unscored float64
	got := map[string]int{}
	for _, u := range h.Unscored {
		unscored += u.Rows
		got[u.Reason] = int(u.Rows)
		if u.Text == "" {
			t.Errorf("rows without a score for reason %s are not explained", u.Reason)
		}
	}
	if h.Rows != float64(len(f.scores)) || h.KeptRows != float64(f.kept) || h.ZeroRows != float64(f.zero) ||
		h.UnscoredRows != unscored || fmt.Sprint(got) != fmt.Sprint(f.unscored) {
		t.Errorf("histogram rows %v kept %v zero %v unscored %v %v; scores.jsonl: %d, %d, %d, %v",
			h.Rows, h.KeptRows, h.ZeroRows, h.UnscoredRows, got, len(f.scores), f.kept, f.zero, f.unscored)
	}
	if h.CutScore == nil || *h.CutScore != f.cut || h.CutRank == nil || *h.CutRank != float64(f.cutRank) {
		t.Errorf("cut at %v rank %v; scores.jsonl: the last kept row scores %v at rank %d", h.CutScore, h.CutRank, f.cut, f.cutRank)
	}

	var fileTokens float64
	for _, file := range res.Files {
		fileTokens += file.KeptTokens
		checkMiddleCut(t, file.File, file.Label)
	}
	if fileTokens != float64(f.keptTokens) {
		t.Errorf("kept tokens by file add to %v; scores.jsonl's kept rows hold %d", fileTokens, f.keptTokens)
	}
	if len(res.Terms) == 0 {
		t.Error("no target terms shown")
	}
	var cards []sampleCard
	for _, c := range res.Sample {
		cards = append(cards, c.sampleCard)
		for _, ws := range c.WhiteSpace {
			if ws != "pre-wrap" {
				t.Errorf("sample row %s: a text field has white-space %q, which does not keep its line breaks and wraps", c.ID, ws)
			}
		}
	}
	f.checkSamples(t, cards)
}

// checkMiddleCut checks that a chart label shows a name whole or with its middle cut: the start and
// the end kept, "…" between.
func checkMiddleCut(t *testing.T, full, label string) {
	t.Helper()
	if label == full {
		return
	}
	head, tail, ok := strings.Cut(label, "…")
	if !ok || head == "" || tail == "" || !strings.HasPrefix(full, head) || !strings.HasSuffix(full, tail) || utf8.RuneCountInString(label) >= utf8.RuneCountInString(full) {
		t.Errorf("label %q of %q: want its start and end with \"…\" between", label, full)
	}
	if d := utf8.RuneCountInString(tail) - utf8.RuneCountInString(head); d < 0 || d > 1 {
		t.Errorf("label %q of %q: the start and end are not kept evenly", label, full)
	}
}

// BenchmarkReport times the report of a demo run, in scores.jsonl rows per second. On the demo's
// 753 rows the fixed costs (explaining the sample rows, analysing the target) dominate.
func BenchmarkReport(b *testing.B) {
	dir := b.TempDir()
	pool, target := filepath.Join(dir, "pool.jsonl"), filepath.Join(dir, "target.jsonl")
	os.WriteFile(pool, demodata.Pool(), 0o644)
	os.WriteFile(target, demodata.Target(), 0o644)
	idx, run, page := filepath.Join(dir, "idx"), filepath.Join(dir, "run"), filepath.Join(dir, "r.html")
	e := &env{stdin: strings.NewReader(""), stdout: io.Discard, stderr: io.Discard}
	for _, args := range [][]string{
		{"index", "--quiet", "--id", "id", "--out", idx, pool},
		{"pick", "--quiet", "--index", idx, "--target", target, "--budget", "6e12", "--train-params", "125M", "--out", run},
	} {
		if code := runSluice(args, e); code != 0 {
			b.Fatalf("%v: exit %d", args, code)
		}
	}
	var rows int
	for b.Loop() {
		rep, err := report.Build(context.Background(), run, report.Options{Sample: 5, Terms: 20, Files: 12})
		if err != nil {
			b.Fatal(err)
		}
		if err := rep.WriteFile(page); err != nil {
			b.Fatal(err)
		}
		rows = rep.Rows
	}
	b.ReportMetric(float64(rows)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
}

func runSluice(args []string, e *env) int { return dispatch(context.Background(), args, e) }
