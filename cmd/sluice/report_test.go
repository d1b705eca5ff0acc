package main

import (
	"bytes"
	"context"
	"encoding/json"
	"encoding/xml"
	"errors"
	"flag"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"sluice/budget"
	"sluice/cmd/sluice/demodata"
	"sluice/select/report"
)

var updateReport = flag.Bool("update-report", false, "rewrite testdata/report/report.png from the browser test")

// reportLedger is the part of ledger.json the report must show.
type reportLedger struct {
	Budget    float64 `json:"budget"`
	Selection float64 `json:"selection_flops"`
	Training  float64 `json:"training_flops"`
	Left      float64 `json:"left_flops"`
	Total     float64 `json:"total_flops"`
}

// demoReport picks on the demo data as the README's worked example does and writes its report.
func demoReport(t *testing.T) (run, page string) {
	t.Helper()
	dir, idx, target := demoIndex(t)
	// Relative names, so the page (and the committed screenshot) shows "run" and not a temporary path.
	t.Chdir(dir)
	run = "run"
	if code, _, stderr := sluice(t, "pick", "--quiet", "--index", filepath.Base(idx), "--target", filepath.Base(target), "--budget", "6e12",
		"--train-params", "125M", "--out", run); code != 0 {
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

// parsePage reads the page with a strict XML parser (the report is written as well-formed markup)
// and returns the attributes of every element by its id, and the names of all elements.
func parsePage(t *testing.T, page []byte) (byID map[string]map[string]string, elems map[string]int, text string) {
	t.Helper()
	d := xml.NewDecoder(bytes.NewReader(page))
	d.Strict = true
	byID, elems = map[string]map[string]string{}, map[string]int{}
	var sb strings.Builder
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
		case xml.CharData:
			sb.Write(tok)
		}
	}
	for _, e := range []string{"script", "link", "img", "iframe", "object", "embed", "image", "use", "base"} {
		if elems[e] > 0 {
			t.Errorf("the page has %d <%s> elements: it must be self-contained and run nothing", elems[e], e)
		}
	}
	return byID, elems, sb.String()
}

func float(t *testing.T, attrs map[string]string, name string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(attrs[name], 64)
	if err != nil {
		t.Fatalf("attribute %s: %v", name, err)
	}
	return v
}

// TestReportPage checks the page without a browser: it parses, loads nothing from anywhere, and
// its ledger and histogram figures are the run's, to the last bit.
func TestReportPage(t *testing.T) {
	run, path := demoReport(t)
	page, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	byID, elems, text := parsePage(t, page)
	// The demo rows hold no URL, so none may appear anywhere: not in CSS, not as a namespace.
	for _, s := range []string{"http://", "https://", "@import", "url("} {
		if bytes.Contains(page, []byte(s)) {
			t.Errorf("the page holds %q", s)
		}
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

	scores := readScores(t, filepath.Join(run, "scores.jsonl"))
	hist := byID["histogram"]
	kept, cut := 0, math.Inf(1)
	for _, s := range scores {
		if s.Kept {
			kept++
			cut = min(cut, s.Score)
		}
	}
	if got := float(t, hist, "data-rows"); got != float64(len(scores)) {
		t.Errorf("histogram: %v rows, scores.jsonl has %d", got, len(scores))
	}
	if got := float(t, hist, "data-kept-rows"); got != float64(kept) {
		t.Errorf("histogram: %v kept rows, scores.jsonl has %d", got, kept)
	}
	if got := float(t, hist, "data-cut-score"); got != cut {
		t.Errorf("histogram: cut at %v, the lowest kept score is %v", got, cut)
	}
	if elems["article"] != 6 {
		t.Errorf("%d sample rows, want 3 on each side of the cut", elems["article"])
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
	_, elems, text := parsePage(t, b)
	if elems["article"] != 2 {
		t.Errorf("%d sample rows, want the kept one and the dropped one that matched", elems["article"])
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
		Rows, KeptRows, ZeroRows float64
		CutScore, CutRank        *float64
		BinWidth                 float64
		Bins                     []struct{ Lo, Hi, Kept, Dropped float64 }
	}
	Files []struct {
		File                             string
		KeptTokens, PoolTokens, KeptRows float64
	}
	Terms  []struct{ Term string }
	Sample []struct {
		ID   string
		Rank float64
		Kept bool
	}
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

// TestReportInBrowser loads the demo report in headless Chromium: no console or page errors, no
// request for anything, and the charts as drawn carry the run's figures.
func TestReportInBrowser(t *testing.T) {
	node, script := needBrowser(t)
	run, page := demoReport(t)
	shot := filepath.Join(t.TempDir(), "report.png")
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
	if len(res.ConsoleErrors)+len(res.PageErrors) > 0 {
		t.Errorf("console errors %q, page errors %q", res.ConsoleErrors, res.PageErrors)
	}
	if len(res.Requests) > 0 {
		t.Errorf("the page asked for %q: it must load nothing", res.Requests)
	}
	if res.PageWidth > res.ViewWidth {
		t.Errorf("the page is %v px wide in a %v px window: something overflows", res.PageWidth, res.ViewWidth)
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

	scores := readScores(t, filepath.Join(run, "scores.jsonl"))
	h := res.Histogram
	var kept, zero int
	var keptTokens int64
	cut, cutRank := math.Inf(1), 0
	bins := make([]struct{ kept, dropped float64 }, len(h.Bins))
	for _, s := range scores {
		if s.Kept {
			kept++
			keptTokens += s.Tokens
			cut = min(cut, s.Score)
			cutRank = max(cutRank, s.Rank)
		}
		if s.Score <= 0 {
			zero++
			continue
		}
		i := int(s.Score / h.BinWidth)
		if i >= len(bins) || s.Score < h.Bins[i].Lo || s.Score >= h.Bins[i].Hi {
			t.Fatalf("score %v of %s falls in no bin drawn", s.Score, s.ID)
		}
		if s.Kept {
			bins[i].kept++
		} else {
			bins[i].dropped++
		}
	}
	if h.Rows != float64(len(scores)) || h.KeptRows != float64(kept) || h.ZeroRows != float64(zero) {
		t.Errorf("histogram rows %v kept %v zero %v; scores.jsonl: %d, %d, %d", h.Rows, h.KeptRows, h.ZeroRows, len(scores), kept, zero)
	}
	for i, b := range h.Bins {
		if b.Kept != bins[i].kept || b.Dropped != bins[i].dropped {
			t.Errorf("bin [%v, %v): %v kept, %v not in the page; scores.jsonl: %v, %v", b.Lo, b.Hi, b.Kept, b.Dropped, bins[i].kept, bins[i].dropped)
		}
	}
	if h.CutScore == nil || *h.CutScore != cut || h.CutRank == nil || *h.CutRank != float64(cutRank) {
		t.Errorf("cut at %v rank %v; scores.jsonl: the last kept row scores %v at rank %d", h.CutScore, h.CutRank, cut, cutRank)
	}
	var fileTokens float64
	for _, f := range res.Files {
		fileTokens += f.KeptTokens
	}
	if fileTokens != float64(keptTokens) {
		t.Errorf("kept tokens by file add to %v; scores.jsonl's kept rows hold %d", fileTokens, keptTokens)
	}
	if len(res.Terms) == 0 {
		t.Error("no target terms shown")
	}
	if len(res.Sample) != 6 {
		t.Errorf("%d sample rows, want 6", len(res.Sample))
	}
	for _, s := range res.Sample {
		if s.Kept != (s.Rank <= float64(cutRank)) {
			t.Errorf("sample row %s at rank %v: kept %v, but the cut is at rank %d", s.ID, s.Rank, s.Kept, cutRank)
		}
	}

	if *updateReport {
		b, err := os.ReadFile(shot)
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(filepath.Dir(script), "report.png"), b, 0o644); err != nil {
			t.Fatal(err)
		}
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
