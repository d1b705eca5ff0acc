package audit

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"sluice/cmd/sluice/demodata"
	"sluice/index"
	"sluice/score"
	"sluice/select/run"
)

// TestExplainSeveralSets explains every row of a pick for two target sets: each score is
// recomputed against the set its line names and agrees to the bit (Explain refuses otherwise), the
// explanation names that set, and a kept row's fate says it was kept for it. The second set is the
// demo pool's first twelve weather rows (invented demo data; the check is Explain's recomputation).
func TestExplainSeveralSets(t *testing.T) {
	dir := t.TempDir()
	pool, target, weather := filepath.Join(dir, "pool.jsonl"), filepath.Join(dir, "target.jsonl"), filepath.Join(dir, "weather.jsonl")
	var w []byte
	for _, line := range bytes.SplitAfter(demodata.Pool(), []byte("\n")) {
		if bytes.Contains(line, []byte(`"topic":"weather"`)) && bytes.Count(w, []byte("\n")) < 12 {
			w = append(w, line...)
		}
	}
	for path, b := range map[string][]byte{pool: demodata.Pool(), target: demodata.Target(), weather: w} {
		if err := os.WriteFile(path, b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	idx, out := filepath.Join(dir, "idx"), filepath.Join(dir, "run")
	ctx := context.Background()
	if _, err := index.Build(ctx, idx, []string{pool}, index.Options{ID: "id"}); err != nil {
		t.Fatal(err)
	}
	prm := score.DefaultParams()
	prm.Method, prm.Aggregate = score.TFIDF, score.Max
	if _, err := run.Pick(ctx, run.Options{Index: idx, Target: target, ExtraTargets: []string{weather}, Weights: []float64{0.5, 0.5},
		Params: prm, Budget: 6e12, BudgetHow: "test", TrainParams: 125e6, Epochs: 1, Out: out, Version: "test"}); err != nil {
		t.Fatal(err)
	}
	x, err := NewExplainer(ctx, out, run.Inputs{})
	if err != nil {
		t.Fatal(err)
	}
	defer x.Close()
	keptFor := map[string]int{}
	if err := run.EachScore(out, func(s run.Score) error {
		r, err := x.Explain(s, 2)
		if err != nil {
			return err
		}
		if r.Set != s.Set || r.SetWeight != 0.5 {
			t.Errorf("row %s: explained against set %q (weight %v), scores.jsonl says %q", s.ID, r.Set, r.SetWeight, s.Set)
		}
		if s.Kept {
			keptFor[s.Set]++
			if !strings.HasPrefix(r.Why, "kept for target set "+s.Set) {
				t.Errorf("row %s: fate %q", s.ID, r.Why)
			}
		}
		if len(r.Targets) > 0 && s.Target != nil && r.Targets[0].ID != *s.Target {
			t.Errorf("row %s: best target %s, scores.jsonl says %s", s.ID, r.Targets[0].ID, *s.Target)
		}
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	if keptFor["target"] == 0 || keptFor["weather"] == 0 {
		t.Errorf("kept by set: %v", keptFor)
	}
	// A run moved elsewhere is explained with its targets named again, in their order.
	moved := filepath.Join(dir, "moved")
	if err := os.Mkdir(moved, 0o755); err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{target, weather} {
		b, _ := os.ReadFile(f)
		if err := os.WriteFile(filepath.Join(moved, filepath.Base(f)), b, 0o644); err != nil {
			t.Fatal(err)
		}
		os.Remove(f)
	}
	if _, err := Explain(ctx, out, run.Inputs{}, []string{"pool-0001"}, 1); err == nil {
		t.Errorf("explained a run whose targets are gone")
	}
	in := run.Inputs{Target: filepath.Join(moved, "target.jsonl"), MoreTargets: []string{filepath.Join(moved, "weather.jsonl")}}
	if rows, err := Explain(ctx, out, in, []string{"pool-0001"}, 1); err != nil || len(rows) != 1 || rows[0].Set == "" {
		t.Errorf("explain a moved run: %v %+v", err, rows)
	}
}
