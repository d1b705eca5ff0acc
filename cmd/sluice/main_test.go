package main

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"sluice/budget"
	"sluice/cmd/sluice/demodata"
	"sluice/index"
	"sluice/index/jsonl"
	"sluice/score"
	"sluice/select/audit"
	"sluice/select/run"
)

// sluice runs the command in-process and returns its exit status, stdout and stderr.
func sluice(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errb bytes.Buffer
	code := dispatch(context.Background(), args, &env{stdin: strings.NewReader(""), stdout: &out, stderr: &errb})
	return code, out.String(), errb.String()
}

type scoreLine struct {
	ID     string   `json:"id"`
	Score  float64  `json:"score"`
	Rank   int      `json:"rank"`
	Kept   bool     `json:"kept"`
	Reason string   `json:"reason"`
	Tokens int64    `json:"tokens"`
	Target *string  `json:"target"`
	Ledger *float64 `json:"ledger"`
}

func readScores(t *testing.T, path string) []scoreLine {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var out []scoreLine
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		var s scoreLine
		if err := json.Unmarshal(sc.Bytes(), &s); err != nil {
			t.Fatalf("%s: %v", path, err)
		}
		out = append(out, s)
	}
	return out
}

// demoIndex writes the demo pool and target to a new folder and indexes the pool there.
func demoIndex(t *testing.T) (dir, idx, target string) {
	t.Helper()
	dir = t.TempDir()
	pool, target := filepath.Join(dir, "pool.jsonl"), filepath.Join(dir, "target.jsonl")
	os.WriteFile(pool, demodata.Pool(), 0o644)
	os.WriteFile(target, demodata.Target(), 0o644)
	idx = filepath.Join(dir, "idx")
	if code, _, stderr := sluice(t, "index", "--quiet", "--id", "id", "--out", idx, pool); code != 0 {
		t.Fatal(stderr)
	}
	return dir, idx, target
}

// TestIndexAndPick runs the two commands on the demo data and checks the promises of a run folder:
// kept rows byte-identical to the pool, every row scored once, the ledger within the budget.
func TestIndexAndPick(t *testing.T) {
	dir := t.TempDir()
	pool, target := filepath.Join(dir, "pool.jsonl"), filepath.Join(dir, "target.jsonl")
	os.WriteFile(pool, demodata.Pool(), 0o644)
	os.WriteFile(target, demodata.Target(), 0o644)
	idx := filepath.Join(dir, "idx")
	if code, _, stderr := sluice(t, "index", "--quiet", "--id", "id", "--out", idx, pool); code != 0 {
		t.Fatalf("index: exit %d: %s", code, stderr)
	}
	poolLines := map[string]string{}
	for _, l := range strings.SplitAfter(string(demodata.Pool()), "\n") {
		if l == "" {
			continue
		}
		var r struct{ ID string }
		json.Unmarshal([]byte(l), &r)
		poolLines[r.ID] = l
	}
	for _, method := range []string{"bm25", "tfidf"} {
		for _, agg := range []string{"sum", "max"} {
			for _, fill := range []string{"--fill=false", "--fill"} {
				t.Run(method+"/"+agg+fill, func(t *testing.T) {
					out := filepath.Join(dir, "run-"+method+agg+fill)
					code, stdout, stderr := sluice(t, "pick", "--index", idx, "--target", target, "--method", method,
						"--aggregate", agg, fill, "--budget", "5e12", "--train-params", "125M", "--out", out)
					if code != 0 {
						t.Fatalf("pick: exit %d: %s", code, stderr)
					}
					if !strings.Contains(stdout, "picked") || stderr != "" {
						t.Errorf("the summary belongs on stdout, nothing on stderr: %q, %q", stdout, stderr)
					}
					scores := readScores(t, filepath.Join(out, "scores.jsonl"))
					if len(scores) != len(poolLines) {
						t.Fatalf("%d score lines for %d rows", len(scores), len(poolLines))
					}
					var want strings.Builder
					seen := map[string]bool{}
					ranks := map[int]bool{}
					var kept int
					for _, s := range scores {
						if seen[s.ID] {
							t.Fatalf("row %s scored twice", s.ID)
						}
						seen[s.ID] = true
						ranks[s.Rank] = true
						if s.Ledger == nil || *s.Ledger > 5e12 {
							t.Fatalf("row %s: ledger %v over the budget", s.ID, s.Ledger)
						}
						if s.Kept {
							kept++
							want.WriteString(poolLines[s.ID])
						} else if s.Reason == "" {
							t.Errorf("row %s not kept without a reason", s.ID)
						}
					}
					if len(ranks) != len(scores) || kept == 0 {
						t.Errorf("ranks not a permutation (%d distinct) or nothing kept (%d)", len(ranks), kept)
					}
					got, _ := os.ReadFile(filepath.Join(out, "kept.jsonl"))
					if string(got) != want.String() {
						t.Errorf("kept.jsonl is not the kept pool lines byte for byte")
					}
					var led struct {
						Budget float64       `json:"budget"`
						Total  float64       `json:"total_flops"`
						Lines  []budget.Line `json:"lines"`
						Stop   string        `json:"stop"`
					}
					b, _ := os.ReadFile(filepath.Join(out, "ledger.json"))
					if err := json.Unmarshal(b, &led); err != nil {
						t.Fatal(err)
					}
					if led.Total > led.Budget || led.Stop == "" || len(led.Lines) < 4 {
						t.Errorf("ledger: total %g budget %g stop %q lines %d", led.Total, led.Budget, led.Stop, len(led.Lines))
					}
					var sum float64
					for _, l := range led.Lines {
						sum += l.FLOPs
					}
					if sum != led.Total {
						t.Errorf("ledger lines add to %g, total says %g", sum, led.Total)
					}
				})
			}
		}
	}
}

func TestDemo(t *testing.T) {
	out := filepath.Join(t.TempDir(), "demo")
	code, stdout, stderr := sluice(t, "demo", "--out", out)
	if code != 0 {
		t.Fatalf("demo: exit %d: %s", code, stderr)
	}
	for _, want := range []string{"sluice index", "sluice pick", "precision", "kept.jsonl"} {
		if !strings.Contains(stdout, want) {
			t.Errorf("demo output lacks %q:\n%s", want, stdout)
		}
	}
}

func TestUsageErrors(t *testing.T) {
	dir := t.TempDir()
	for _, tc := range []struct {
		args []string
		code int
		msg  string
	}{
		{nil, 2, "Usage"},
		{[]string{"nope"}, 2, "no command"},
		{[]string{"index"}, 2, "--out is required"},
		{[]string{"index", "--out", dir + "/i"}, 2, "no pool files"},
		{[]string{"index", "--out", dir + "/i", "--mem", "lots", "x"}, 2, "--mem"},
		{[]string{"index", "--out", dir + "/i", dir + "/missing.jsonl"}, 1, "missing.jsonl"},
		{[]string{"index", "--out", dir + "/i", "--workers", "257", "x"}, 2, "--workers 257: give 0 (one per core) to 256"},
		{[]string{"index", "--out", dir + "/i", "--tokens", "n", "--tokenizer", "t.json", "x"}, 2, "not both"},
		{[]string{"pick", "--index", dir, "--target", "t", "--out", "o", "--train-params", "1B"}, 2, "a budget is required"},
		{[]string{"pick", "--index", dir, "--target", "t", "--out", "o", "--budget", "-1", "--train-params", "1B"}, 2, "--budget"},
		{[]string{"pick", "--index", dir, "--target", "t", "--out", "o", "--budget", "1e18", "--train-params", "1B", "--gpu-hours", "3"}, 2, "either --budget"},
		{[]string{"pick", "--index", dir, "--target", "t", "--out", "o", "--gpu-hours", "3", "--train-params", "1B"}, 2, "no defaults"},
		{[]string{"pick", "--index", dir, "--target", "t", "--out", "o", "--budget", "1e18", "--train-params", "1B", "--epochs", "0"}, 2, "--epochs"},
		{[]string{"pick", "--index", dir, "--target", "t", "--out", dir + "/o", "--budget", "1e18", "--train-params", "1B"}, 1, "not a sluice index"},
		{[]string{"pick", "--help"}, 0, ""},
		{[]string{"help", "index"}, 0, ""},
	} {
		code, stdout, stderr := sluice(t, tc.args...)
		if code != tc.code || !strings.Contains(stdout+stderr, tc.msg) {
			t.Errorf("sluice %q: exit %d (want %d), output %q lacks %q", tc.args, code, tc.code, stdout+stderr, tc.msg)
		}
	}
}

// TestCompressedKept checks that kept.jsonl.gz and kept.jsonl.zst decompress to kept.jsonl.
func TestCompressedKept(t *testing.T) {
	dir, idx, target := demoIndex(t)
	runs := map[string][]byte{}
	for _, c := range []string{"none", "gzip", "zstd"} {
		out := filepath.Join(dir, "run-"+c)
		if code, _, stderr := sluice(t, "pick", "--quiet", "--index", idx, "--target", target, "--budget", "5e12",
			"--train-params", "125M", "--compress", c, "--out", out); code != 0 {
			t.Fatal(stderr)
		}
		rc, _, err := jsonl.Open(filepath.Join(out, run.KeptName(c)))
		if err != nil {
			t.Fatal(err)
		}
		runs[c], _ = io.ReadAll(rc)
		rc.Close()
	}
	if len(runs["none"]) == 0 || !bytes.Equal(runs["gzip"], runs["none"]) || !bytes.Equal(runs["zstd"], runs["none"]) {
		t.Errorf("compressed kept rows differ: %d / %d / %d bytes", len(runs["none"]), len(runs["gzip"]), len(runs["zstd"]))
	}
}

// TestBudgetBelowSelection: a budget the selection cost alone exceeds is an error, and no run
// folder is written, so no ledger ever shows more than its budget.
func TestBudgetBelowSelection(t *testing.T) {
	dir, idx, target := demoIndex(t)
	out := filepath.Join(dir, "run")
	code, _, stderr := sluice(t, "pick", "--index", idx, "--target", target, "--budget", "1000", "--train-params", "125M", "--out", out)
	if code != 1 || !strings.Contains(stderr, "selection cost alone") {
		t.Errorf("exit %d, %q", code, stderr)
	}
	if _, err := os.Stat(out); !os.IsNotExist(err) {
		t.Errorf("run folder written: %v", err)
	}
}

// TestSameBytesWhateverTheCores builds and picks with GOMAXPROCS 1 and 2 and compares every file of
// the index and run folders byte for byte.
func TestSameBytesWhateverTheCores(t *testing.T) {
	dir := t.TempDir()
	pool, target := filepath.Join(dir, "pool.jsonl"), filepath.Join(dir, "target.jsonl")
	os.WriteFile(pool, demodata.Pool(), 0o644)
	os.WriteFile(target, demodata.Target(), 0o644)
	t.Chdir(dir)
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	var first map[string][]byte
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		for _, args := range [][]string{
			{"index", "--quiet", "--id", "id", "--out", "idx", "pool.jsonl"},
			{"pick", "--quiet", "--index", "idx", "--target", "target.jsonl", "--aggregate", "max", "--budget", "5e12", "--train-params", "125M", "--out", "run"},
		} {
			if code, _, stderr := sluice(t, args...); code != 0 {
				t.Fatalf("GOMAXPROCS=%d %v: %s", procs, args, stderr)
			}
		}
		files := map[string][]byte{}
		for _, d := range []string{"idx", "run"} {
			entries, _ := os.ReadDir(d)
			for _, e := range entries {
				files[d+"/"+e.Name()], _ = os.ReadFile(filepath.Join(d, e.Name()))
			}
		}
		if first == nil {
			first = files
			continue
		}
		if len(files) != len(first) {
			t.Fatalf("GOMAXPROCS=%d wrote %d files, GOMAXPROCS=1 wrote %d", procs, len(files), len(first))
		}
		for name, b := range files {
			if !bytes.Equal(b, first[name]) {
				t.Errorf("%s differs between GOMAXPROCS=1 and %d", name, procs)
			}
		}
	}
}

// TestWhyAgreesWithScores explains every row of a demo run, for both methods and both aggregates:
// each recomputed score must equal scores.jsonl's to the last bit (audit.Explain fails otherwise), and
// the parts must add up to it.
func TestWhyAgreesWithScores(t *testing.T) {
	dir, idx, target := demoIndex(t)
	for _, method := range []string{"bm25", "tfidf"} {
		for _, agg := range []string{"sum", "max"} {
			out := filepath.Join(dir, "run-"+method+agg)
			if code, _, stderr := sluice(t, "pick", "--quiet", "--index", idx, "--target", target, "--method", method,
				"--aggregate", agg, "--budget", "5e12", "--train-params", "125M", "--out", out); code != 0 {
				t.Fatal(stderr)
			}
			var ids []string
			for _, s := range readScores(t, filepath.Join(out, "scores.jsonl")) {
				ids = append(ids, s.ID)
			}
			rows, err := audit.Explain(context.Background(), out, run.Inputs{}, ids, 1)
			if err != nil {
				t.Fatalf("%s/%s: %v", method, agg, err)
			}
			if len(rows) != len(ids) {
				t.Fatalf("%s/%s: %d explanations for %d rows", method, agg, len(rows), len(ids))
			}
			for _, r := range rows {
				var sum float64
				for _, p := range r.Parts {
					sum += p.Contribution
				}
				if sum != r.Score {
					t.Fatalf("%s/%s: row %s: parts add to %v, score %v", method, agg, r.ID, sum, r.Score)
				}
				if r.Why == "" {
					t.Fatalf("row %s: no fate", r.ID)
				}
			}
		}
	}
	// why and verify through the command line.
	code, stdout, stderr := sluice(t, "why", "--run", filepath.Join(dir, "run-bm25sum"), "pool-0028")
	if code != 0 || !strings.Contains(stdout, "contribution") || !strings.Contains(stdout, "fate") {
		t.Errorf("why: exit %d, %s%s", code, stdout, stderr)
	}
	if code, _, stderr := sluice(t, "verify", filepath.Join(dir, "run-bm25sum")); code != 0 {
		t.Errorf("verify of an untouched run: exit %d: %s", code, stderr)
	}
	os.WriteFile(filepath.Join(dir, "run-bm25sum", "kept.jsonl"), []byte("{}\n"), 0o644)
	if code, _, stderr := sluice(t, "verify", filepath.Join(dir, "run-bm25sum")); code != 1 || !strings.Contains(stderr, "kept.jsonl: changed") {
		t.Errorf("verify of a changed run: exit %d: %s", code, stderr)
	}
	// A damaged index file that no command has read yet: verify reads every byte of the index.
	ids := filepath.Join(idx, "ids")
	b, _ := os.ReadFile(ids)
	b[len(b)/2] ^= 0x20
	os.WriteFile(ids, b, 0o644)
	if code, _, stderr := sluice(t, "verify", filepath.Join(dir, "run-bm25max")); code != 1 || !strings.Contains(stderr, "ids bytes 0 to") || !strings.Contains(stderr, "index is damaged") {
		t.Errorf("verify over a damaged index: exit %d: %s", code, stderr)
	}
}

// TestTargetTextMustMatch: a target read from other fields than the pool's is refused unless the
// user says so, or asks for the index's settings.
func TestTargetTextMustMatch(t *testing.T) {
	dir, idx, target := demoIndex(t)
	base := []string{"pick", "--quiet", "--index", idx, "--target", target, "--budget", "5e12", "--train-params", "125M"}
	run := func(name string, extra ...string) (int, string) {
		code, _, stderr := sluice(t, append(append(base, "--out", filepath.Join(dir, name)), extra...)...)
		return code, stderr
	}
	if code, stderr := run("r1", "--target-text", "instruction,output"); code != 1 || !strings.Contains(stderr, "differs from the index's text fields instruction,input,output") {
		t.Errorf("other spec: exit %d: %s", code, stderr)
	}
	if code, stderr := run("r2", "--target-text", "instruction,output", "--other-target-text"); code != 0 {
		t.Errorf("other spec, said so: exit %d: %s", code, stderr)
	}
	if code, stderr := run("r3", "--target-text", "instruction,output", "--analyzer", "plain", "--index-settings"); code != 0 {
		t.Errorf("--index-settings: exit %d: %s", code, stderr)
	}
	if code, stderr := run("r4", "--target-text", "instruction, input ,output"); code != 0 {
		t.Errorf("the same spec written otherwise: exit %d: %s", code, stderr)
	}
}

// TestStoredNormsMatchScoring ties the TF-IDF norms the index stores at build time to the weights
// score gives a query: the same smooth idf is written in both packages. Each of 20 pool rows, used as
// a target row, must have cosine 1 with itself, and no row can score above 1.
func TestStoredNormsMatchScoring(t *testing.T) {
	dir, idx, _ := demoIndex(t)
	lines := strings.SplitAfter(string(demodata.Pool()), "\n")[:20]
	target := filepath.Join(dir, "self.jsonl")
	os.WriteFile(target, []byte(strings.Join(lines, "")), 0o644)
	ix, err := index.Open(idx)
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	an, _ := ix.NewAnalyzer()
	targets, _, err := index.ReadTargets(target, ix.Meta().Text, "", an, 0)
	if err != nil {
		t.Fatal(err)
	}
	qs := make([]score.Query, len(targets))
	for i, tg := range targets {
		qs[i] = score.Query{ID: tg.ID, Terms: tg.Terms}
	}
	p := score.DefaultParams()
	p.Method, p.Aggregate = score.TFIDF, score.Max
	res, err := score.Score(context.Background(), ix, qs, p)
	if err != nil {
		t.Fatal(err)
	}
	for r, s := range res.Scores {
		if s > 1+1e-12 {
			t.Fatalf("row %d: cosine %v above 1", r, s)
		}
		if r < len(lines) && math.Abs(s-1) > 1e-12 {
			t.Errorf("row %d against itself: cosine %v, want 1", r, s)
		}
	}
}

// TestMovedInputs moves a run's index and target away from where its manifest says: why, report
// and verify say so and point to the flags, and with --index and --target they work, still
// checking the hashes.
func TestMovedInputs(t *testing.T) {
	dir, idx, target := demoIndex(t)
	run := filepath.Join(dir, "run")
	if code, _, stderr := sluice(t, "pick", "--quiet", "--index", idx, "--target", target, "--budget", "1e15", "--train-params", "1M", "--out", run); code != 0 {
		t.Fatal(stderr)
	}
	id := readScores(t, filepath.Join(run, "scores.jsonl"))[0].ID
	idx2, target2 := filepath.Join(dir, "moved.idx"), filepath.Join(dir, "moved-target.jsonl")
	if err := os.Rename(idx, idx2); err != nil {
		t.Fatal(err)
	}
	if err := os.Rename(target, target2); err != nil {
		t.Fatal(err)
	}
	report := filepath.Join(dir, "r.html")
	for _, args := range [][]string{{"why", "--run", run, id}, {"report", "--quiet", run, "--out", report}} {
		if code, _, stderr := sluice(t, args...); code != 1 || !strings.Contains(stderr, "--index") {
			t.Errorf("%s with the index moved: exit %d: %s", args[0], code, stderr)
		}
		if code, _, stderr := sluice(t, append(args, "--index", idx2)...); code != 1 || !strings.Contains(stderr, "--target") {
			t.Errorf("%s with the target moved: exit %d: %s", args[0], code, stderr)
		}
		if code, _, stderr := sluice(t, append(args, "--index", idx2, "--target", target2)...); code != 0 {
			t.Errorf("%s told where both are: exit %d: %s", args[0], code, stderr)
		}
		// Another file at the given path is refused, not explained against.
		if code, _, stderr := sluice(t, append(args, "--index", idx2, "--target", filepath.Join(run, "kept.jsonl"))...); code != 1 || !strings.Contains(stderr, "changed since the run") {
			t.Errorf("%s with another target: exit %d: %s", args[0], code, stderr)
		}
	}
	if code, _, stderr := sluice(t, "verify", run); code != 1 || !strings.Contains(stderr, "index") {
		t.Errorf("verify with both moved: exit %d: %s", code, stderr)
	}
	if code, stdout, stderr := sluice(t, "verify", run, "--index", idx2, "--target", target2); code != 0 || !strings.Contains(stdout, "ok") {
		t.Errorf("verify told where both are: exit %d: %s%s", code, stdout, stderr)
	}
}

// TestPickMemSameBytes picks with lists that fit the default memory and with --mem so small that
// they are read a span of rows at a time: the run's files are the same bytes. (Internal property;
// the pool is generated.)
func TestPickMemSameBytes(t *testing.T) {
	dir := t.TempDir()
	words := strings.Fields("tide ferry harbour rope knot storm wind oven bread ledger tax engine sail deck crew chart buoy gull")
	var pool, target bytes.Buffer
	for i := range 20000 {
		fmt.Fprintf(&pool, `{"id":"p%d","text":"`, i)
		for j := range 6 + i%9 {
			fmt.Fprintf(&pool, "%s w%d ", words[(i*j+i/7)%len(words)], (i*31+j*17)%5000)
		}
		pool.WriteString("\"}\n")
	}
	for i := range 40 {
		fmt.Fprintf(&target, `{"id":"t%d","text":"%s %s w%d w%d"}`+"\n", i, words[i%len(words)], words[(i*5)%len(words)], i*37%5000, i*101%5000)
	}
	pp, tp := filepath.Join(dir, "pool.jsonl"), filepath.Join(dir, "target.jsonl")
	os.WriteFile(pp, pool.Bytes(), 0o644)
	os.WriteFile(tp, target.Bytes(), 0o644)
	idx := filepath.Join(dir, "idx")
	if code, _, stderr := sluice(t, "index", "--quiet", "--id", "id", "--text", "text", "--out", idx, pp); code != 0 {
		t.Fatal(stderr)
	}
	for _, agg := range []string{"sum", "max"} {
		var runs []string
		for _, mem := range []string{"512MiB", "1MiB"} {
			run := filepath.Join(dir, "run-"+agg+"-"+mem)
			if code, _, stderr := sluice(t, "pick", "--quiet", "--index", idx, "--target", tp, "--aggregate", agg, "--mem", mem,
				"--budget", "1e15", "--train-params", "1M", "--out", run); code != 0 {
				t.Fatal(stderr)
			}
			runs = append(runs, run)
		}
		for _, name := range []string{"kept.jsonl", "scores.jsonl", "ledger.json"} {
			a, _ := os.ReadFile(filepath.Join(runs[0], name))
			b, _ := os.ReadFile(filepath.Join(runs[1], name))
			if !bytes.Equal(a, b) || len(a) == 0 {
				t.Errorf("%s %s: differs between --mem 512MiB and 1MiB (or is empty)", agg, name)
			}
		}
	}
}

// Every command has a help file whose first line is its synopsis, and every help file a command.
func TestHelpFiles(t *testing.T) {
	names := map[string]bool{"sluice": true} // the overview
	for _, c := range commands() {
		names[c.name()] = true
		b, err := helpFiles.ReadFile("help/" + c.name() + ".txt")
		if err != nil {
			t.Errorf("%s: %v", c.name(), err)
			continue
		}
		if first, _, _ := strings.Cut(string(b), "\n"); !strings.HasPrefix(first, "sluice "+c.name()) {
			t.Errorf("help/%s.txt starts %q, want its synopsis", c.name(), first)
		}
	}
	entries, _ := helpFiles.ReadDir("help")
	for _, e := range entries {
		if !names[strings.TrimSuffix(e.Name(), ".txt")] {
			t.Errorf("help/%s belongs to no command", e.Name())
		}
	}
}

// TestMaxMem checks pick's memory bound from the command line: a bound below what the pick's
// estimate needs is a usage error (exit 2) saying how much it needs, before anything is written;
// a bound below the least allowed is refused as a flag; a wide one lets the pick run.
func TestMaxMem(t *testing.T) {
	dir, idx, target := demoIndex(t)
	for i, tc := range []struct {
		maxMem string
		code   int
		msg    string
	}{
		{"64MiB", 2, "needs about"},
		{"1KiB", 2, "--max-mem"},
		{"1TiB", 0, ""},
	} {
		out := filepath.Join(dir, fmt.Sprintf("run%d", i))
		code, stdout, stderr := sluice(t, "pick", "--quiet", "--index", idx, "--target", target, "--budget", "1e18",
			"--train-params", "1B", "--max-mem", tc.maxMem, "--out", out)
		if code != tc.code || !strings.Contains(stdout+stderr, tc.msg) {
			t.Errorf("--max-mem %s: exit %d (want %d), output %q lacks %q", tc.maxMem, code, tc.code, stdout+stderr, tc.msg)
		}
		if _, err := os.Stat(out); tc.code != 0 && !os.IsNotExist(err) {
			t.Errorf("--max-mem %s: %s was made", tc.maxMem, out)
		}
	}
}
