package budget

import (
	"bytes"
	"encoding/json"
	"flag"
	"math"
	"os"
	"path/filepath"
	"testing"
)

var update = flag.Bool("update", false, "rewrite golden files in testdata/")

// exampleLedger charges selection at the package's stated conventions and
// training at 6·N·D·E for a 7e9-parameter model on 1e9 tokens, 1 epoch.
func exampleLedger() *Ledger {
	l := &Ledger{Budget: 5e19}
	l.AddSelection("analyse target and pool", "token", 1e6, FLOPsPerToken, "")
	l.AddSelection("score pool: postings visited", "posting", 1234567, FLOPsPerPosting, "")
	l.AddTraining("train on kept rows", "token", 1e9, TrainFLOPs(7e9, 1, 1), "6 × 7e9 params × 1 epoch × 1e9 tokens")
	l.Stop = "budget"
	l.Notes = []string{"example"}
	return l
}

func TestLedger(t *testing.T) {
	l := exampleLedger()
	// Selection: 8 × 1e6 + 4 × 1234567 = 8000000 + 4938268, by hand.
	if got, want := l.Selection(), 12938268.0; got != want {
		t.Errorf("Selection() = %v, want %v", got, want)
	}
	// Training: 6ND, common practice; Narayanan et al. SC'21, from memory.
	// 6 × 7e9 × 1e9 × 1 = 4.2e19, by hand; exact in float64.
	if got, want := l.Training(), 4.2e19; got != want {
		t.Errorf("Training() = %v, want %v", got, want)
	}
	if got, want := l.Training(), TrainFLOPs(7e9, 1e9, 1); got != want {
		t.Errorf("Training() = %v, TrainFLOPs = %v; want equal", got, want)
	}
	// 4.2e19 + 12938268 is not representable: float64 spacing at 4.2e19 is
	// 2^13 = 8192, so the total is within half of that of the true sum.
	total := l.Total()
	if d := math.Abs((total - 4.2e19) - 12938268); d > 4096 {
		t.Errorf("Total() = %v, off from 4.2e19 + 12938268 by %v", total, d)
	}
	if got, want := l.Left(), 5e19-total; got != want {
		t.Errorf("Left() = %v, want %v", got, want)
	}
	if got, want := l.Lines[1].Formula, "4 FLOPs × 1234567 postings"; got != want {
		t.Errorf("generated formula = %q, want %q", got, want)
	}
	for i, want := range []string{KindSelection, KindSelection, KindTraining} {
		if l.Lines[i].Kind != want {
			t.Errorf("line %d kind = %q, want %q", i, l.Lines[i].Kind, want)
		}
	}
}

func TestLedgerEmpty(t *testing.T) {
	var l Ledger
	l.Budget = 10
	if l.Total() != 0 || l.Left() != 10 {
		t.Errorf("empty ledger: total %v left %v, want 0 and 10", l.Total(), l.Left())
	}
	b, err := json.Marshal(l)
	if err != nil {
		t.Fatal(err)
	}
	want := `{"budget":10,"lines":[],"selection_flops":0,"training_flops":0,"total_flops":0,"left_flops":10,"over_budget":false,"stop":"","notes":[]}`
	if string(b) != want {
		t.Errorf("json = %s\nwant   %s", b, want)
	}
}

func TestLedgerOverBudget(t *testing.T) {
	l := Ledger{Budget: 100}
	l.AddTraining("train", "token", 20, 6, "")
	if l.Left() != -20 {
		t.Errorf("Left() = %v, want -20", l.Left())
	}
	var got struct {
		Over bool    `json:"over_budget"`
		Left float64 `json:"left_flops"`
	}
	b, err := json.Marshal(&l)
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &got); err != nil {
		t.Fatal(err)
	}
	if !got.Over || got.Left != -20 {
		t.Errorf("json %s: over_budget %v left %v, want true -20", b, got.Over, got.Left)
	}
}

func TestLedgerNaN(t *testing.T) {
	l := Ledger{Budget: 1}
	l.AddSelection("bad", "token", math.NaN(), 1, "")
	if _, err := json.Marshal(l); err == nil {
		t.Error("marshal of a NaN ledger succeeded, want an error")
	}
}

func TestLedgerJSONGolden(t *testing.T) {
	b, err := json.MarshalIndent(exampleLedger(), "", "  ")
	if err != nil {
		t.Fatal(err)
	}
	b = append(b, '\n')
	path := filepath.Join("testdata", "ledger.golden.json")
	if *update {
		if err := os.WriteFile(path, b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(b, want) {
		t.Errorf("ledger JSON differs from %s (run with -update to accept):\n%s", path, b)
	}
}
