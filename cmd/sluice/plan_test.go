package main

import (
	"encoding/json"
	"flag"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"sluice/budget/plan"
)

var updatePlan = flag.Bool("update-plan", false, "rewrite testdata/plan/plan.txt from the plan test")

const demoPilots = "../../testdata/plan/pilots.csv"

func TestPlanDemo(t *testing.T) {
	out := t.TempDir()
	code, stdout, stderr := sluice(t, "plan", "--pilots", demoPilots, "--pool-tokens", "4B", "--train-params", "1B", "--budget", "1.5e18", "--out", out)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	p := readPlanJSON(t, out)
	if len(p.Curves) != 3 || len(p.Steps) != 25 || len(p.Changes) != 2 {
		t.Fatalf("%d curves, %d steps, %d changes", len(p.Curves), len(p.Steps), len(p.Changes))
	}
	if p.Asked == nil || p.Asked.Best != "bm25" || !strings.Contains(stdout, "sluice pick --index POOL.idx --target TARGET.jsonl --method bm25 --budget 1.5e+18") {
		t.Errorf("asked budget: %+v; stdout lacks the pick line", p.Asked)
	}
	if c := p.Changes; c[0].From != "bm25" || c[0].To != "ppl-125m" || c[1].To != "grad-1b" {
		t.Errorf("changes %+v", c)
	}
	for _, name := range []string{"plan.svg", "residuals.svg"} {
		s, err := os.ReadFile(filepath.Join(out, name))
		if err != nil {
			t.Fatal(err)
		}
		if !strings.HasPrefix(string(s), "<svg") || !strings.HasSuffix(strings.TrimSpace(string(s)), "</svg>") {
			t.Errorf("%s is not an SVG document", name)
		}
	}
	// The golden table is the README's example; the last line names the temporary folder.
	table := stdout[:strings.LastIndex(strings.TrimRight(stdout, "\n"), "\n")+1]
	golden := "../../testdata/plan/plan.txt"
	if *updatePlan {
		if err := os.WriteFile(golden, []byte(table), 0o644); err != nil {
			t.Fatal(err)
		}
		for _, name := range []string{"plan.svg", "residuals.svg"} {
			s, _ := os.ReadFile(filepath.Join(out, name))
			if err := os.WriteFile(filepath.Join("../../testdata/plan", name), s, 0o644); err != nil {
				t.Fatal(err)
			}
		}
	}
	want, err := os.ReadFile(golden)
	if err != nil {
		t.Fatal(err)
	}
	if table != string(want) {
		t.Errorf("table differs from %s (run go test -update-plan):\n%s", golden, table)
	}
}

func TestPlanUsageErrors(t *testing.T) {
	out := t.TempDir()
	base := []string{"plan", "--pilots", demoPilots, "--pool-tokens", "4B", "--train-params", "1B", "--out", out}
	// with is base with flag's value replaced: a flag given twice is refused as such.
	with := func(flag, v string) []string {
		args := slices.Clone(base)
		args[slices.Index(args, flag)+1] = v
		return args
	}
	tests := []struct {
		name string
		args []string
		code int
		say  string
	}{
		{"no pilots", []string{"plan", "--pool-tokens", "4B", "--train-params", "1B", "--out", out}, 2, "--pilots is required"},
		{"bad pool", with("--pool-tokens", "lots"), 2, "--pool-tokens"},
		{"bad budgets", append(append([]string{}, base...), "--budgets", "1e20"), 2, "LO:HI"},
		{"reversed budgets", append(append([]string{}, base...), "--budgets", "1e20:1e19"), 2, "HI must be"},
		{"zero epochs", append(append([]string{}, base...), "--epochs", "0"), 2, "--epochs"},
		{"other model size", with("--train-params", "7B"), 1, "no pilots on a 7B-parameter model"},
		{"pilots and simulate", append(append([]string{}, base...), "--simulate", "a=lexical,0,0.5,1", "--p0", "0.4"), 2, "not both"},
		{"simulate without p0", []string{"plan", "--simulate", "a=lexical,0,0.5,1", "--pool-tokens", "4B", "--train-params", "1B", "--out", out}, 2, "--p0"},
		{"simulate bad spec", []string{"plan", "--simulate", "a=lexical,0,0.5", "--p0", "0.4", "--pool-tokens", "4B", "--train-params", "1B", "--out", out}, 2, "METHOD=COST"},
		{"simulate zero rate", []string{"plan", "--simulate", "a=lexical,0,0.5,0", "--p0", "0.4", "--pool-tokens", "4B", "--train-params", "1B", "--out", out}, 2, "LAMBDA"},
		{"simulate no selector", []string{"plan", "--simulate", "a=forward,0,0.5,1", "--p0", "0.4", "--pool-tokens", "4B", "--train-params", "1B", "--out", out}, 2, "selector size 0"},
		{"missing file", with("--pilots", "nope.csv"), 1, "nope.csv"},
	}
	for _, tt := range tests {
		code, _, stderr := sluice(t, tt.args...)
		if code != tt.code || !strings.Contains(stderr, tt.say) {
			t.Errorf("%s: exit %d, stderr %q; want %d saying %q", tt.name, code, stderr, tt.code, tt.say)
		}
	}
}

// A what-if run has exact curves: the band collapses onto the prediction, and shrinking the
// gradient selector tenfold moves its change budget down.
func TestPlanSimulate(t *testing.T) {
	changeAt := func(selector string) float64 {
		out := t.TempDir()
		code, _, stderr := sluice(t, "plan", "--simulate", "bm25=lexical,0,0.547,10.2",
			"--simulate", "grad=forward+backward,"+selector+",0.657,4.0", "--p0", "0.421",
			"--pool-tokens", "4B", "--train-params", "1B", "--budgets", "1e17:1e20", "--out", out)
		if code != 0 {
			t.Fatalf("exit %d: %s", code, stderr)
		}
		p := readPlanJSON(t, out)
		for _, s := range p.Steps {
			for _, o := range s.Options {
				if o.SE != 0 || o.Low != o.P || o.High != o.P {
					t.Fatalf("simulated option has a band: %+v", o)
				}
			}
		}
		if len(p.Changes) != 1 || p.Changes[0].To != "grad" {
			t.Fatalf("changes %+v", p.Changes)
		}
		if _, err := os.Stat(filepath.Join(out, "residuals.svg")); err == nil {
			t.Error("residuals.svg written without pilots")
		}
		return p.Changes[0].Budget
	}
	big, small := changeAt("1B"), changeAt("100M")
	if !(small < big) {
		t.Errorf("change with a 100M selector at %g, with 1B at %g: want earlier", small, big)
	}
}

func TestPlanHelp(t *testing.T) {
	code, stdout, _ := sluice(t, "plan", "--help")
	if code != 0 || !strings.Contains(stdout, "Examples:") || !strings.Contains(stdout, "--free-p0") {
		t.Errorf("exit %d, help %q", code, stdout)
	}
}

// readPlanJSON reads the plan.json that 'sluice plan' wrote into out.
func readPlanJSON(t *testing.T, out string) plan.Plan {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(out, "plan.json"))
	if err != nil {
		t.Fatal(err)
	}
	var p plan.Plan
	if err := json.Unmarshal(b, &p); err != nil {
		t.Fatal(err)
	}
	return p
}

// demoMetric is an invented pilot result for the README's walk from pilots to plan to pick: a
// saturating curve per method whose level and rate move with the pilot model's size, plus a
// little fixed noise. It is demo data, not a check value.
func demoMetric(method string, n, tokens float64, line int) float64 {
	x := math.Log(n / 125e6)
	p0, pbar, lam := 0.30+0.03*x, 0.50+0.04*x, 4e-4*math.Pow(n/125e6, -0.2)
	if method == "ngram" {
		pbar, lam = 0.55+0.05*x, 2.5e-4*math.Pow(n/125e6, -0.2)
	}
	noise := 0.004 * math.Sin(float64(7*line))
	return pbar - (pbar-p0)*math.Exp(-lam*tokens) + noise
}

// The README's walk: pilots on the demo data, their metrics filled in (invented), a plan for a
// model size no pilot trained, and the pick the plan prints, run as printed.
func TestPilotsToPlanToPick(t *testing.T) {
	dir, idx, target := demoIndex(t)
	pilotsDir := filepath.Join(dir, "pilots")
	code, stdout, stderr := sluice(t, "pilots", "--index", idx, "--target", target, "--method", "bm25,ngram",
		"--train-params", "125M,350M", "--out", pilotsDir)
	if code != 0 || !strings.Contains(stdout, "charged once") {
		t.Fatalf("pilots: exit %d: %s%s", code, stdout, stderr)
	}
	raw := mustRead(t, filepath.Join(pilotsDir, "pilots.csv"))
	var filled []string
	for i, l := range strings.Split(strings.TrimSuffix(raw, "\n"), "\n") {
		f := strings.Split(l, ",")
		if len(f) == 11 && f[0] != "method" && !strings.HasPrefix(l, "#") {
			n, _ := strconv.ParseFloat(f[4], 64)
			k, _ := strconv.ParseFloat(f[5], 64)
			l += strconv.FormatFloat(demoMetric(f[0], n, k, i), 'f', 4, 64)
		}
		filled = append(filled, l)
	}
	got := "# metrics invented for the demo: demoMetric in cmd/sluice/plan_test.go; not measured\n" + strings.Join(filled, "\n") + "\n"
	golden := "../../testdata/plan/demo-pilots.csv"
	if *updatePlan {
		if err := os.WriteFile(golden, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	if want := mustRead(t, golden); got != want {
		t.Errorf("filled pilots differ from %s (run go test -update-plan)", golden)
	}
	code, stdout, stderr = sluice(t, "plan", "--pilots", golden, "--index", idx, "--train-params", "1.3B",
		"--budget", "3e14", "--out", filepath.Join(dir, "plan"))
	if code != 0 {
		t.Fatalf("plan: exit %d: %s", code, stderr)
	}
	p := readPlanJSON(t, filepath.Join(dir, "plan"))
	if len(p.Curves) != 2 || p.Curves[0].Trend != plan.Extrapolated || len(p.Trends) != 2 {
		t.Errorf("plan for 1.3B from pilots on 125M and 350M: %d curves (%q), %d trends", len(p.Curves), p.Curves[0].Trend, len(p.Trends))
	}
	if !strings.Contains(stdout, "extrapolated from 125M, 350M") {
		t.Errorf("the table does not mark the extrapolation:\n%s", stdout)
	}
	var pick string
	for _, l := range strings.Split(stdout, "\n") {
		if strings.Contains(l, "sluice pick ") {
			pick = strings.TrimSpace(l)
		}
	}
	args := strings.Fields(strings.NewReplacer("TARGET.jsonl", target, "RUN", filepath.Join(dir, "run")).Replace(pick))[1:]
	if code, _, stderr := sluice(t, args...); code != 0 {
		t.Errorf("%s: exit %d: %s", pick, code, stderr)
	}
}
