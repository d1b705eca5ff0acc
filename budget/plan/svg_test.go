package plan

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The demo plan of the README, as 'sluice plan --pilots testdata/plan/pilots.csv
// --pool-tokens 4B --train-params 1B --budget 1.5e18' makes it.
func demoPlan(t *testing.T) *Plan {
	t.Helper()
	f, err := os.Open("../../testdata/plan/pilots.csv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	pilots, err := ReadPilots(f, "pilots.csv")
	if err != nil {
		t.Fatal(err)
	}
	curves, err := Fit(pilots, FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	p, err := Make(curves, Config{PoolTokens: 4e9, TrainParams: 1e9, Epochs: 1, Points: 25})
	if err != nil {
		t.Fatal(err)
	}
	s := p.StepAt(1.5e18)
	p.Asked = &s
	return p
}

// The charts and the table are the committed ones byte for byte; the command's
// plan test rewrites them with -update-plan.
func TestDemoPlanGolden(t *testing.T) {
	p := demoPlan(t)
	var text bytes.Buffer
	if err := p.WriteText(&text); err != nil {
		t.Fatal(err)
	}
	// The golden table also holds the pick command, which the command adds.
	wantText := readGolden(t, "plan.txt")
	if i := strings.Index(wantText, "  sluice pick "); i < 0 || text.String() != wantText[:i] {
		t.Errorf("WriteText differs from plan.txt up to its pick command:\n%s", text.String())
	}
	for name, got := range map[string][]byte{"plan.svg": p.SVG(), "residuals.svg": p.ResidualSVG()} {
		if want := readGolden(t, name); string(got) != want {
			t.Errorf("%s differs from testdata/plan/%s", name, name)
		}
	}
}

func readGolden(t *testing.T, name string) string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("../../testdata/plan", name))
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// A plan with no affordable budget, a change from none and no pilots still
// draws whole documents, and the asked budget says nothing is affordable.
func TestPlanDrawsEdgeCases(t *testing.T) {
	p := demoPlan(t)
	p.Curves = p.Curves[:1]
	p.Curves[0].Residuals = nil
	p.Config.Lo, p.Config.Hi = 1, 10 // nothing affordable anywhere
	p.Changes = []Change{{Budget: 5, From: "", To: "a<b"}}
	for name, svg := range map[string][]byte{"plan": p.SVG(), "residuals": p.ResidualSVG()} {
		s := string(svg)
		if !strings.HasPrefix(s, "<svg") || !strings.HasSuffix(s, "</svg>\n") || strings.Contains(s, "NaN") {
			t.Errorf("%s chart is not a whole document:\n%s", name, s)
		}
	}
	if s := string(p.SVG()); !strings.Contains(s, "1: none → a&lt;b") {
		t.Errorf("change key not spelled out and escaped:\n%s", s)
	}
	step := p.StepAt(1)
	p.Asked = &step
	var b bytes.Buffer
	if err := p.WriteText(&b); err != nil {
		t.Fatal(err)
	}
	if !strings.HasSuffix(b.String(), "no method affords any training\n") {
		t.Errorf("asked budget:\n%s", b.String())
	}
}
