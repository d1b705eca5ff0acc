package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"syscall"
	"testing"

	"sluice/budget"
	"sluice/cmd/sluice/demodata"
	"sluice/index"
	"sluice/select/audit"
	"sluice/select/run"
)

// TestNgramAndCascadeThroughTheCommandLine picks by n-gram models, alone and after a lexical
// prefilter, from the command line; every row is explained again to the last bit (audit.Explain
// fails otherwise), why prints the tokens that moved a score, and report and diff read the runs.
func TestNgramAndCascadeThroughTheCommandLine(t *testing.T) {
	dir, idx, target := demoIndex(t)
	runs := map[string][]string{
		"ngram":    {"--method", "ngram"},
		"target":   {"--method", "ngram", "--ngram-score", "target", "--order", "4"},
		"cascade":  {"--method", "ngram", "--prefilter", "bm25:25%"},
		"cascade2": {"--method", "ngram", "--prefilter", "tfidf:20k"},
	}
	for name, extra := range runs {
		out := filepath.Join(dir, name)
		args := append([]string{"pick", "--quiet", "--index", idx, "--target", target, "--budget", "6e12", "--train-params", "125M", "--out", out}, extra...)
		if code, _, stderr := sluice(t, args...); code != 0 {
			t.Fatalf("%s: %s", name, stderr)
		}
		var ids []string
		seen := map[string]bool{}
		for _, s := range readScores(t, filepath.Join(out, "scores.jsonl")) {
			if !seen[s.ID] {
				seen[s.ID] = true
				ids = append(ids, s.ID)
			}
		}
		rows, err := audit.Explain(context.Background(), out, run.Inputs{}, ids, 1)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		for _, r := range rows {
			if math.IsNaN(r.Score) != (r.Reason == "prefilter") || r.Why == "" {
				t.Errorf("%s: row %s: score %v, reason %q, why %q", name, r.ID, r.Score, r.Reason, r.Why)
			}
			if !math.IsNaN(r.Score) && len(r.Words) == 0 {
				t.Errorf("%s: row %s has no words", name, r.ID)
			}
		}
	}
	code, stdout, stderr := sluice(t, "why", "--run", filepath.Join(dir, "ngram"), "pool-0028")
	if code != 0 || !strings.Contains(stdout, "tokens  that moved the score most") || !strings.Contains(stdout, "ngram-3") {
		t.Errorf("why: exit %d, %s%s", code, stdout, stderr)
	}
	code, stdout, stderr = sluice(t, "why", "--json", "--run", filepath.Join(dir, "cascade"), "pool-0001")
	var w map[string]any
	if code != 0 || json.Unmarshal([]byte(stdout), &w) != nil {
		t.Errorf("why --json: exit %d, %s%s", code, stdout, stderr)
	}
	for _, args := range [][]string{
		{"report", "-q", "--out", filepath.Join(dir, "ngram.html"), filepath.Join(dir, "ngram")},
		{"report", "-q", "--out", filepath.Join(dir, "cascade.html"), filepath.Join(dir, "cascade")},
		{"diff", filepath.Join(dir, "ngram"), filepath.Join(dir, "cascade")},
		{"verify", filepath.Join(dir, "ngram"), filepath.Join(dir, "cascade")},
	} {
		if code, _, stderr := sluice(t, args...); code != 0 {
			t.Errorf("%v: exit %d: %s", args, code, stderr)
		}
	}
	for _, tc := range []struct{ args, want string }{
		{"--method ngram --order 2", "--order 2"},
		{"--method bm25 --order 4", "--order is for --method ngram"},
		{"--method bm25 --prefilter bm25:10%", "--prefilter goes before"},
		{"--method ngram --prefilter bm25:0%", "above 0%"},
		{"--method ngram --prefilter bm25:101%", "at most 100%"},
		{"--method ngram --prefilter lexical:10%", "METHOD bm25 or tfidf"},
		{"--method ngram --ngram-score both", "difference or target"},
		{"--method nope", "bm25, tfidf, ngram"},
	} {
		args := append([]string{"pick", "--index", idx, "--target", target, "--budget", "6e12", "--train-params", "125M", "--out", filepath.Join(dir, "x")}, strings.Fields(tc.args)...)
		if code, _, stderr := sluice(t, args...); code != 2 || !strings.Contains(stderr, tc.want) {
			t.Errorf("%s: exit %d, %q lacks %q", tc.args, code, stderr, tc.want)
		}
	}
}

// TestPipedTarget: a target read from stdin or a pipe is kept in the run folder and hashed as read,
// so verify, why and report work on the run; before, the manifest held the hash of nothing and all
// three refused.
func TestPipedTarget(t *testing.T) {
	dir, idx, target := demoIndex(t)
	want, err := os.ReadFile(target)
	if err != nil {
		t.Fatal(err)
	}
	fifo := filepath.Join(dir, "fifo")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Fatal(err)
	}
	go func() {
		f, err := os.OpenFile(fifo, os.O_WRONLY, 0)
		if err == nil {
			f.Write(want)
			f.Close()
		}
	}()
	for name, tgt := range map[string]string{"stdin": "-", "fifo": fifo} {
		out := filepath.Join(dir, "run-"+name)
		var stdout, stderr bytes.Buffer
		e := &env{stdin: bytes.NewReader(want), stdout: &stdout, stderr: &stderr}
		args := []string{"pick", "--quiet", "--index", idx, "--target", tgt, "--budget", "6e12", "--train-params", "125M", "--out", out}
		if code := dispatch(context.Background(), args, e); code != 0 {
			t.Fatalf("%s: exit %d: %s", name, code, stderr.String())
		}
		if got, err := os.ReadFile(filepath.Join(out, run.TargetCopy)); err != nil || !bytes.Equal(got, want) {
			t.Errorf("%s: the run's copy of the target differs (%v)", name, err)
		}
		m, err := run.ReadManifest(out)
		if err != nil {
			t.Fatal(err)
		}
		if m.Target.Path != filepath.Join(out, run.TargetCopy) {
			t.Errorf("%s: manifest names the target %s", name, m.Target.Path)
		}
		for _, args := range [][]string{{"verify", out}, {"why", "--run", out, "pool-0028"}, {"report", "-q", "--out", out + ".html", out}} {
			if code, _, stderr := sluice(t, args...); code != 0 {
				t.Errorf("%s: %v: exit %d: %s", name, args, code, stderr)
			}
		}
	}
}

// TestIndexIdentityIsItsContent: rebuilding an index with the same content, asked for with other
// flags (-q), keeps every run made on it valid; before, the command line was part of the identity
// and verify refused every earlier run. A rebuild of other content says it breaks them.
func TestIndexIdentityIsItsContent(t *testing.T) {
	dir, idx, target := demoIndex(t)
	out := filepath.Join(dir, "run")
	if code, _, stderr := sluice(t, "pick", "--quiet", "--index", idx, "--target", target, "--budget", "6e12", "--train-params", "125M", "--out", out); code != 0 {
		t.Fatal(stderr)
	}
	pool := filepath.Join(dir, "pool.jsonl")
	if code, _, stderr := sluice(t, "index", "--id", "id", "--workers", "1", "--out", idx, pool); code != 0 || strings.Contains(stderr, "replaced") {
		t.Fatalf("rebuild: exit %d: %s", code, stderr)
	}
	if code, _, stderr := sluice(t, "verify", out); code != 0 {
		t.Errorf("verify after a rebuild of the same content: exit %d: %s", code, stderr)
	}
	code, _, stderr := sluice(t, "index", "--out", idx, pool) // no --id: other content
	if code != 0 || !strings.Contains(stderr, "runs made on it no longer verify") {
		t.Errorf("rebuild of other content: exit %d: %s", code, stderr)
	}
	if code, _, stderr := sluice(t, "verify", out); code != 1 || !strings.Contains(stderr, "not the index the run used") {
		t.Errorf("verify after a rebuild of other content: exit %d: %s", code, stderr)
	}
}

// TestCommandLineManners: results on stdout and nothing else there; every missing flag named at
// once; help about help; an interrupted command says so and exits 130 with nothing published.
func TestCommandLineManners(t *testing.T) {
	code, _, stderr := sluice(t, "pick")
	if code != 2 || !strings.Contains(stderr, "these are required: --index, --target, --out, --train-params, a budget") {
		t.Errorf("pick with nothing: exit %d: %s", code, stderr)
	}
	if code, stdout, _ := sluice(t, "help", "help"); code != 0 || !strings.Contains(stdout, "sluice help [COMMAND]") {
		t.Errorf("help help: exit %d: %s", code, stdout)
	}
	dir, idx, target := demoIndex(t)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	var out, errb bytes.Buffer
	args := []string{"pick", "--index", idx, "--target", target, "--budget", "6e12", "--train-params", "125M", "--out", filepath.Join(dir, "run")}
	if code := dispatch(ctx, args, &env{stdin: strings.NewReader(""), stdout: &out, stderr: &errb}); code != 130 || !strings.Contains(errb.String(), "interrupted") {
		t.Errorf("interrupted pick: exit %d: %s", code, errb.String())
	}
	if _, err := os.Stat(filepath.Join(dir, "run")); !os.IsNotExist(err) {
		t.Errorf("an interrupted pick published its run: %v", err)
	}
	code, stdout, stderr := sluice(t, "pick", "--index", idx, "--target", target, "--budget", "6e12", "--train-params", "125M", "--out", filepath.Join(dir, "run"))
	if code != 0 || !strings.Contains(stdout, "picked") || !strings.Contains(stdout, "40 target rows") || !strings.Contains(stdout, "manifest.json") || stderr != "" {
		t.Errorf("pick: exit %d, stdout %q, stderr %q", code, stdout, stderr)
	}
}

// TestBudgetsAsPeopleStateThem: rates as GPUs are quoted, named accelerators, and wall-clock hours
// on several GPUs all give the FLOPs they should (hours x 3600 x peak x MFU).
func TestBudgetsAsPeopleStateThem(t *testing.T) {
	dir, idx, target := demoIndex(t)
	for i, tc := range []struct {
		flags string
		want  float64
	}{
		{"--gpu-hours 1 --gpu-flops 989TF --mfu 0.4", 1 * 3600 * 989e12 * 0.4},
		{"--gpu-hours 1 --gpu-flops h100-sxm --mfu 0.4", 1 * 3600 * 989e12 * 0.4},
		{"--gpus 8 --hours 2 --gpu-flops 312t --mfu 0.5", 16 * 3600 * 312e12 * 0.5},
		{"--budget 400p", 4e17},
	} {
		out := filepath.Join(dir, fmt.Sprintf("run%d", i))
		args := append([]string{"pick", "-q", "--index", idx, "--target", target, "--train-params", "125M", "--out", out}, strings.Fields(tc.flags)...)
		if code, _, stderr := sluice(t, args...); code != 0 {
			t.Fatalf("%s: exit %d: %s", tc.flags, code, stderr)
		}
		l, err := run.ReadLedger(out)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(l.Budget-tc.want) > 1e-9*tc.want {
			t.Errorf("%s: budget %v, want %v", tc.flags, l.Budget, tc.want)
		}
	}
	for _, tc := range []struct{ flags, want string }{
		{"--gpus 8 --gpu-flops a100 --mfu 0.4", "--gpus and --hours go together"},
		{"--gpu-hours 3 --gpus 8 --hours 2 --gpu-flops a100 --mfu 0.4", "not both"},
		{"--gpu-hours 3 --gpu-flops abacus --mfu 0.4", "or name an accelerator: a100"},
	} {
		args := append([]string{"pick", "--index", idx, "--target", target, "--train-params", "125M", "--out", filepath.Join(dir, "x")}, strings.Fields(tc.flags)...)
		if code, _, stderr := sluice(t, args...); code != 2 || !strings.Contains(stderr, tc.want) {
			t.Errorf("%s: exit %d: %q lacks %q", tc.flags, code, stderr, tc.want)
		}
	}
}

// writeVectors writes a JSONL vector file with a seeded random vector per id: inputs for checking
// that a pick and its explanations agree, not values checked against anything.
func writeVectors(t *testing.T, path string, ids []string, dim int, seed uint64) {
	t.Helper()
	r := rand.New(rand.NewPCG(seed, 1))
	var b bytes.Buffer
	for _, id := range ids {
		v := make([]float32, dim)
		for i := range v {
			v[i] = float32(r.NormFloat64())
		}
		line, _ := json.Marshal(map[string]any{"id": id, "vector": v})
		b.Write(append(line, '\n'))
	}
	if err := os.WriteFile(path, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestScoresAndVectors picks by scores brought in and by vectors (made elsewhere, and static word
// vectors averaged here): the runs verify, every score is explained again to the bit, a declared
// cost is marked so, and a selector as large as the trained model run forward and backward (3
// passes) costs exactly one training epoch over the pool (common practice: 6 FLOPs per parameter
// per token for training, 2 per forward pass).
func TestScoresAndVectors(t *testing.T) {
	dir, idx, target := demoIndex(t)
	var poolIDs, targetIDs []string
	for _, line := range strings.Split(strings.TrimSpace(string(demodata.Pool())), "\n") {
		var r struct{ ID string }
		json.Unmarshal([]byte(line), &r)
		poolIDs = append(poolIDs, r.ID)
	}
	for i := range strings.Split(strings.TrimSpace(string(demodata.Target())), "\n") {
		targetIDs = append(targetIDs, fmt.Sprintf("t%d", i))
	}
	var sb bytes.Buffer
	for i, id := range poolIDs {
		fmt.Fprintf(&sb, "{\"id\":%q,\"score\":%d.5}\n", id, (i*7919)%1000)
	}
	scores := filepath.Join(dir, "scores.jsonl")
	os.WriteFile(scores, sb.Bytes(), 0o644)
	pv, tv := filepath.Join(dir, "pool.vec.jsonl"), filepath.Join(dir, "target.vec.jsonl")
	writeVectors(t, pv, poolIDs, 16, 1)
	writeVectors(t, tv, targetIDs, 16, 2)
	words := map[string]bool{}
	for _, w := range strings.Fields(strings.ToLower(string(demodata.Pool()) + string(demodata.Target()))) {
		w = strings.Trim(w, `{}[]":,.?!'()`)
		if w != "" && !strings.ContainsAny(w, `":,.?!'(){}`) {
			words[w] = true
		}
	}
	var ws []string
	for w := range words {
		ws = append(ws, w)
	}
	slices.Sort(ws)
	wvJSON := filepath.Join(dir, "words.jsonl")
	writeVectors(t, wvJSON, ws, 8, 3)
	var wv bytes.Buffer
	fmt.Fprintf(&wv, "%d 8\n", len(ws))
	for _, line := range strings.Split(strings.TrimSpace(mustRead(t, wvJSON)), "\n") {
		var r struct {
			ID     string
			Vector []float32
		}
		json.Unmarshal([]byte(line), &r)
		fmt.Fprint(&wv, r.ID)
		for _, x := range r.Vector {
			fmt.Fprintf(&wv, " %v", x)
		}
		wv.WriteByte('\n')
	}
	wordVec := filepath.Join(dir, "words.vec")
	os.WriteFile(wordVec, wv.Bytes(), 0o644)

	runs := map[string][]string{
		"scores":  {"--method", "scores", "--scores", scores, "--selector-params", "125M", "--passes", "3", "--budget", "2e14"},
		"vectors": {"--method", "vectors", "--aggregate", "max", "--pool-vectors", pv, "--target-vectors", tv, "--selector-params", "22M", "--budget", "6e12"},
		"words":   {"--method", "vectors", "--word-vectors", wordVec, "--idf", "--budget", "6e12"},
		"cascade": {"--method", "vectors", "--word-vectors", wordVec, "--prefilter", "bm25:30%", "--budget", "6e12"},
	}
	for name, extra := range runs {
		out := filepath.Join(dir, "run-"+name)
		args := append([]string{"pick", "-q", "--index", idx, "--target", target, "--train-params", "125M", "--out", out}, extra...)
		if code, _, stderr := sluice(t, args...); code != 0 {
			t.Fatalf("%s: exit %d: %s", name, code, stderr)
		}
		if code, _, stderr := sluice(t, "verify", out); code != 0 {
			t.Errorf("%s: verify: %s", name, stderr)
		}
		rows, err := audit.Explain(context.Background(), out, run.Inputs{}, poolIDs, 1)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if len(rows) != len(poolIDs) {
			t.Errorf("%s: %d explanations", name, len(rows))
		}
	}
	l, _ := run.ReadLedger(filepath.Join(dir, "run-scores"))
	var declared, poolTokens float64
	for _, line := range l.Lines {
		if line.Declared {
			declared += line.FLOPs
		}
	}
	for _, s := range readScores(t, filepath.Join(dir, "run-scores", "scores.jsonl")) {
		poolTokens += float64(s.Tokens)
	}
	if want := budget.TrainFLOPs(125e6, poolTokens, 1); declared != want {
		t.Errorf("a 125M selector run 3 passes over the pool is charged %v, one epoch of training it costs %v", declared, want)
	}
	for _, tc := range []struct{ args, want string }{
		{"--method scores --scores " + scores, "declare what making the scores"},
		{"--method scores", "needs --scores"},
		{"--method vectors --pool-vectors " + pv + " --selector-params 1M", "needs --pool-vectors and --target-vectors"},
		{"--method bm25 --scores " + scores, "--scores is for --method scores"},
	} {
		args := append([]string{"pick", "--index", idx, "--target", target, "--budget", "6e12", "--train-params", "125M", "--out", filepath.Join(dir, "x")}, strings.Fields(tc.args)...)
		if code, _, stderr := sluice(t, args...); code != 2 || !strings.Contains(stderr, tc.want) {
			t.Errorf("%s: exit %d: %q lacks %q", tc.args, code, stderr, tc.want)
		}
	}
}

func mustRead(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// TestPlanAsPeopleAsk: plan reads the pool's tokens from an index, takes the budget as GPU time,
// names the pilots' model sizes when it has none at the size asked, and prints a pick command with
// the flags the recommended method needs.
func TestPlanAsPeopleAsk(t *testing.T) {
	dir, idx, _ := demoIndex(t)
	pilots := "../../testdata/plan/pilots.csv"
	code, stdout, stderr := sluice(t, "plan", "--pilots", pilots, "--index", idx, "--train-params", "1B",
		"--gpu-hours", "2000", "--gpu-flops", "a100", "--mfu", "0.4", "--out", filepath.Join(dir, "plan"))
	if code != 0 {
		t.Fatalf("plan: exit %d: %s", code, stderr)
	}
	if !strings.Contains(stdout, "sluice pick --index "+idx+" --target TARGET.jsonl --method") {
		t.Errorf("no pick command: %s", stdout)
	}
	var p struct {
		Config struct {
			PoolTokens float64 `json:"pool_tokens"`
		}
	}
	json.Unmarshal([]byte(mustRead(t, filepath.Join(dir, "plan", "plan.json"))), &p)
	ix, err := index.Open(idx)
	if err != nil {
		t.Fatal(err)
	}
	var want int64
	for r := 0; r < ix.NumRows(); r++ {
		_, _, tb := ix.RowTokens(r)
		want += int64(budget.EstimateTokens(int(tb))) // the demo pool has no token field
	}
	ix.Close()
	if p.Config.PoolTokens != float64(want) {
		t.Errorf("pool tokens from the index: %v, the pool holds %d", p.Config.PoolTokens, want)
	}
	code, _, stderr = sluice(t, "plan", "--pilots", pilots, "--pool-tokens", "4B", "--train-params", "7B", "--out", filepath.Join(dir, "plan7"))
	if code != 1 || !strings.Contains(stderr, "the pilots trained 1B parameters") {
		t.Errorf("plan for a size without pilots: exit %d: %s", code, stderr)
	}
	var cmd string
	for _, budget := range []string{"1e16", "1e18", "1e20", "1e21"} {
		_, stdout, _ := sluice(t, "plan", "--pilots", pilots, "--pool-tokens", "4B", "--train-params", "1B", "--budget", budget, "--out", filepath.Join(dir, "plan-"+budget))
		for _, line := range strings.Split(stdout, "\n") {
			if strings.Contains(line, "--method scores") {
				cmd = line
			}
		}
	}
	if cmd != "" && !strings.Contains(cmd, "--selector-params") {
		t.Errorf("a model-based method's pick command lacks its declared cost: %s", cmd)
	}
}

// TestStopsAsPeopleStateThem: a floor as a share of the best score or a percentile, and a token
// cap, stop the pick where they say, and the ledger says why.
func TestStopsAsPeopleStateThem(t *testing.T) {
	dir, idx, target := demoIndex(t)
	pickWith := func(name string, flags ...string) []run.Score {
		out := filepath.Join(dir, name)
		args := append([]string{"pick", "-q", "--index", idx, "--target", target, "--budget", "1e15", "--train-params", "125M", "--keep-duplicates", "--out", out}, flags...)
		if code, _, stderr := sluice(t, args...); code != 0 {
			t.Fatalf("%v: %s", flags, stderr)
		}
		var s []run.Score
		run.EachScore(out, func(x run.Score) error { s = append(s, x); return nil })
		return s
	}
	all := pickWith("all")
	best, matched := 0.0, 0
	for _, s := range all {
		best = max(best, s.Score)
		if s.Score > 0 {
			matched++
		}
	}
	for _, s := range pickWith("half", "--min-score", "50%") {
		if s.Kept != (s.Score >= best/2) {
			t.Errorf("50%% of the best (%v): row %s scores %v, kept %v", best, s.ID, s.Score, s.Kept)
		}
	}
	kept := 0
	for _, s := range pickWith("p90", "--min-score", "p90") {
		if s.Kept {
			kept++
		}
	}
	if want := matched / 10; kept < want-2 || kept > want+2 {
		t.Errorf("p90 kept %d of %d matching rows, want about %d", kept, matched, want)
	}
	var tokens int64
	capped := pickWith("cap", "--max-tokens", "2000")
	for _, s := range capped {
		if s.Kept {
			tokens += s.Tokens
		}
	}
	if tokens > 2000 || tokens < 1800 {
		t.Errorf("--max-tokens 2000 kept %d tokens", tokens)
	}
	if l, _ := run.ReadLedger(filepath.Join(dir, "cap")); !strings.HasPrefix(l.Stop, "max-tokens") {
		t.Errorf("stop %q", l.Stop)
	}
	// The knee: rows kept are exactly those at or above run.Knee of the matching rows' scores.
	var scores []float64
	for _, s := range all {
		if s.Score > 0 {
			scores = append(scores, s.Score)
		}
	}
	slices.Sort(scores)
	knee := run.Knee(scores)
	for _, s := range pickWith("knee", "--min-score", "knee") {
		if s.Kept != (s.Score >= knee) {
			t.Errorf("knee %v: row %s scores %v, kept %v", knee, s.ID, s.Score, s.Kept)
		}
	}
	if l, _ := run.ReadLedger(filepath.Join(dir, "knee")); !strings.Contains(l.Stop, "knee") {
		t.Errorf("stop %q does not say the floor is the knee", l.Stop)
	}
}
