package run

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"sluice/index"
	"sluice/score"
)

// t0Set builds one index segment per part of files, cut at cuts, and a set naming them. The last
// segment holds a copy of the first file too (the set allows the overlap), so that rows of the
// first and last shards tie on every score, and the tie must go to the lower row.
func t0Set(t *testing.T, dir string, files []string, cuts []int) string {
	t.Helper()
	return t0SetWith(t, dir, files, cuts, index.Options{Text: "prompt,completion", NoDups: true})
}

// t0SetWith is t0Set with segments built with opt.
func t0SetWith(t *testing.T, dir string, files []string, cuts []int, opt index.Options) string {
	t.Helper()
	b, err := os.ReadFile(files[0])
	if err != nil {
		t.Fatal(err)
	}
	again := filepath.Join(dir, "again.jsonl")
	if err := os.WriteFile(again, b, 0o644); err != nil {
		t.Fatal(err)
	}
	var segs []string
	from := 0
	for i, to := range append(cuts, len(files)) {
		seg := filepath.Join(dir, fmt.Sprintf("seg%d", i))
		part := files[from:to:to]
		if to == len(files) {
			part = append(part, again)
		}
		if _, err := index.Build(context.Background(), seg, part, opt); err != nil {
			t.Fatal(err)
		}
		segs, from = append(segs, seg), to
	}
	set := filepath.Join(dir, "pool.set")
	if _, err := index.WriteSet(set, segs, true); err != nil {
		t.Fatal(err)
	}
	return set
}

// t0Files are a few T0 files (real rows) and a target of rows from another, or the test skips.
func t0Files(t *testing.T, n int) ([]string, string) {
	t.Helper()
	files, _ := filepath.Glob("../../../shared/data/t0-train-50k-per-template/data_per_template/*.jsonl")
	if len(files) < 3*n {
		t.Skip("../shared/data is absent: the test reads the shared T0 corpus")
	}
	var pool []string
	for i := range n {
		pool = append(pool, files[3*i])
	}
	b, err := os.ReadFile(files[3*n-1])
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.SplitAfter(string(b), "\n")
	target := filepath.Join(t.TempDir(), "target.jsonl")
	if err := os.WriteFile(target, []byte(strings.Join(lines[:min(40, len(lines))], "")), 0o644); err != nil {
		t.Fatal(err)
	}
	return pool, target
}

// t0Eval writes an evaluation file of rows lines apart in pool file: those rows, and any sharing
// a 13-word n-gram with them, are contaminated.
func t0Eval(t *testing.T, pool string, every int) string {
	t.Helper()
	b, err := os.ReadFile(pool)
	if err != nil {
		t.Fatal(err)
	}
	var eval []string
	for i, l := range strings.SplitAfter(string(b), "\n") {
		if i%every == 0 && l != "" {
			eval = append(eval, l)
		}
	}
	path := filepath.Join(t.TempDir(), "eval.jsonl")
	if err := os.WriteFile(path, []byte(strings.Join(eval, "")), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// shardedPick runs the five steps of a sharded pick of opt over its set of shards segments.
func shardedPick(t *testing.T, opt Options, work string, shards int) error {
	t.Helper()
	ctx := context.Background()
	for i := range shards {
		if _, err := ScoreShard(ctx, opt, work, i); err != nil {
			return fmt.Errorf("score shard %d: %w", i, err)
		}
	}
	for i := range shards {
		if _, err := DupsShard(ctx, opt, work, i); err != nil {
			return fmt.Errorf("duplicates, part %d: %w", i, err)
		}
	}
	if _, err := CutShards(ctx, opt, work); err != nil {
		return fmt.Errorf("cut: %w", err)
	}
	for i := range shards {
		if _, err := WriteShard(ctx, opt, work, i); err != nil {
			return fmt.Errorf("write shard %d: %w", i, err)
		}
	}
	_, err := JoinShards(ctx, opt, work)
	return err
}

// shardConfigs are the picks a sharded pick must match: both lexical methods and aggregates, every
// stop (budget, max-rows, max-tokens, min-score), relative floors, source caps, attribution off, compression and the uniform kept format.
func shardConfigs(set, target string, evals ...string) map[string]Options {
	base := func() Options {
		o := Options{Index: set, Target: target, Params: score.DefaultParams(), Budget: 2e16, BudgetHow: "test",
			TrainParams: 1e9, Epochs: 1, Version: "test"}
		o.Guards.KeepDuplicates = true
		return o
	}
	c := map[string]Options{}
	o := base()
	o.Budget = 6e14 // about 100k tokens: the budget stops the walk
	o.Guards.MaxShare = map[string]float64{"": 0.15}
	c["bm25-sum-caps"] = o
	o = base()
	o.Params.Method, o.Params.Aggregate = score.TFIDF, score.Max
	o.Select.Fill, o.Compress, o.Budget = true, "gzip", 9e14
	c["tfidf-max-fill-gzip"] = o
	o = base()
	o.MinScore, o.MinScoreSet, o.Params.SkipBest = MinScore{Kind: "percentile", Value: 80}, true, true
	c["bm25-p80-no-attribution"] = o
	o = base()
	o.Params.Method = score.TFIDF
	o.MinScore, o.MinScoreSet, o.KeptFormat = MinScore{Kind: "share", Value: 0.4}, true, KeptText
	c["tfidf-share-text"] = o
	o = base()
	o.MinScore, o.MinScoreSet = MinScore{Kind: "knee"}, true
	o.Guards.MaxShare = map[string]float64{"": 0.3}
	c["bm25-knee-caps"] = o
	o = base()
	o.Select.MaxRows, o.Compress = 500, "zstd"
	c["bm25-max-rows-zstd"] = o
	o = base()
	o.Params.Method, o.Select.MaxCount, o.Select.Fill = score.TFIDF, 60_000, true
	c["tfidf-max-tokens-fill"] = o
	if len(evals) > 0 {
		o = base()
		o.Budget, o.Guards.Exclude = 6e14, evals
		c["bm25-exclude"] = o
		o = base()
		o.Params.Method, o.Guards.Exclude, o.Guards.ExcludeN = score.TFIDF, evals[:1], 8
		o.MinScore, o.MinScoreSet = MinScore{Kind: "percentile", Value: 50}, true
		c["tfidf-exclude-8-p50"] = o
		o = base()
		// An n-gram longer than every row: only rows equal to an evaluation row, whole, are found,
		// and the ledger notes the longest row, the most over the shards.
		o.MinScore, o.MinScoreSet, o.Guards.Exclude, o.Guards.ExcludeN = MinScore{Kind: "knee"}, true, evals, 5000
		o.Guards.MaxShare = map[string]float64{"": 0.3}
		c["bm25-exclude-knee-caps"] = o
	}
	return c
}

// TestShardedPickMatchesPick checks the sharded pick's run folder against `pick` over the same set,
// byte for byte: scores.jsonl, the kept file, ledger.json and rejected.jsonl, and the manifest but
// for its command line (the one field that must differ). The T0 pool is cut 1, 2, 3 and 7 ways and
// at random places; the picks with --exclude check it against rows of two of its files.
func TestShardedPickMatchesPick(t *testing.T) {
	files, target := t0Files(t, 14)
	evals := []string{t0Eval(t, files[3], 50), t0Eval(t, files[11], 200)}
	splits := map[string][]int{"1 way": nil, "2 ways": {7}, "3 ways": {5, 9}, "7 ways": {2, 4, 6, 8, 10, 12}}
	rng := rand.New(rand.NewPCG(3, 5))
	for i := range 2 {
		var cuts []int
		for c := 1; c < len(files); c++ {
			if rng.IntN(3) == 0 {
				cuts = append(cuts, c)
			}
		}
		splits[fmt.Sprintf("random %d: %v", i, cuts)] = cuts
	}
	for name, cuts := range splits {
		t.Run(name, func(t *testing.T) {
			dir := t.TempDir()
			set := t0Set(t, dir, files, cuts)
			configs := shardConfigs(set, target, evals...)
			if testing.Short() || len(cuts) != 2 {
				configs = map[string]Options{"bm25-sum-caps": configs["bm25-sum-caps"], "tfidf-max-fill-gzip": configs["tfidf-max-fill-gzip"],
					"bm25-exclude": configs["bm25-exclude"]}
			}
			for cname, opt := range configs {
				res, _ := pickBothWays(t, dir, cname, opt, len(cuts)+1)
				if len(opt.Guards.Exclude) > 0 && res.Dropped["contaminated"] == 0 {
					t.Fatalf("%s: no row was found contaminated", cname)
				}
			}
		})
	}
}

// pickBothWays runs opt as a pick over its set and as a sharded pick of shards steps, in dir under
// names made from name, and compares their run folders; it returns the pick's result and the sharded
// pick's work folder.
func pickBothWays(t *testing.T, dir, name string, opt Options, shards int) (*Result, string) {
	t.Helper()
	one := opt
	one.Out = filepath.Join(dir, "one-"+name)
	res, err := Pick(context.Background(), one)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("%s: kept %d of %d rows; %s; dropped %v", name, len(res.Kept), res.Rows, res.Ledger.Stop, res.Dropped)
	opt.Out = filepath.Join(dir, "sharded-"+name)
	work := filepath.Join(dir, "work-"+name)
	if err := shardedPick(t, opt, work, shards); err != nil {
		t.Fatalf("%s: %v", name, err)
	}
	sameRun(t, name, one.Out, opt.Out)
	return res, work
}

// TestShardedPickTakesBuiltEval builds the segments with --exclude: the pick over the set then
// takes their lists of evaluation rows and reads no text, and so must the sharded pick's steps,
// byte for byte; the ledger says the build checked the rows.
func TestShardedPickTakesBuiltEval(t *testing.T) {
	files, target := t0Files(t, 14)
	evals := []string{t0Eval(t, files[3], 50), t0Eval(t, files[11], 200)}
	dir := t.TempDir()
	set := t0SetWith(t, dir, files, []int{5, 9}, index.Options{Text: "prompt,completion", NoDups: true, Exclude: evals})
	opt := shardConfigs(set, target, evals...)["bm25-exclude"]
	one := opt
	one.Out = filepath.Join(dir, "one")
	res, err := Pick(context.Background(), one)
	if err != nil {
		t.Fatal(err)
	}
	if res.Dropped["contaminated"] == 0 || !strings.Contains(strings.Join(res.Ledger.Notes, "\n"), "evaluation rows were checked when the index was built") {
		t.Fatalf("the pick over the set did not take its segments' lists: dropped %v, notes %q", res.Dropped, res.Ledger.Notes)
	}
	opt.Out = filepath.Join(dir, "sharded")
	if err := shardedPick(t, opt, filepath.Join(dir, "work"), 3); err != nil {
		t.Fatal(err)
	}
	sameRun(t, "segments built with --exclude", one.Out, opt.Out)
}

// TestShardedPickDropsDuplicates checks a sharded pick that drops duplicates, the default, against
// `pick` over the same set byte for byte, the set's segments built finding duplicates: the last
// segment's copy of the first file repeats rows of the first segment, and T0's templates make near
// duplicates within and across files. The pool is cut 1, 3 and 7 ways and at a random place.
func TestShardedPickDropsDuplicates(t *testing.T) {
	files, target := t0Files(t, 14)
	evals := []string{t0Eval(t, files[3], 50), t0Eval(t, files[11], 200)}
	splits := map[string][]int{"1 way": nil, "3 ways": {5, 9}, "7 ways": {2, 4, 6, 8, 10, 12}}
	rng := rand.New(rand.NewPCG(7, 11))
	var cuts []int
	for c := 1; c < len(files); c++ {
		if rng.IntN(4) == 0 {
			cuts = append(cuts, c)
		}
	}
	splits[fmt.Sprintf("random: %v", cuts)] = cuts
	for name, cuts := range splits {
		t.Run(name, func(t *testing.T) {
			dir := t.TempDir()
			set := t0SetWith(t, dir, files, cuts, index.Options{Text: "prompt,completion"})
			configs := shardConfigs(set, target, evals...)
			if testing.Short() || len(cuts) != 2 {
				configs = map[string]Options{"bm25-sum-caps": configs["bm25-sum-caps"], "bm25-knee-caps": configs["bm25-knee-caps"],
					"bm25-exclude": configs["bm25-exclude"]}
			}
			for cname, opt := range configs {
				opt.Guards.KeepDuplicates = false
				res, work := pickBothWays(t, dir, cname, opt, len(cuts)+1)
				if res.Dropped["duplicate"] == 0 || !strings.Contains(strings.Join(res.Ledger.Notes, "\n"), "duplicates were found when the index was built") {
					t.Fatalf("%s: the pick over the set did not take its segments' duplicates: dropped %v, notes %q", cname, res.Dropped, res.Ledger.Notes)
				}
				var repeats, cands int
				for part := range len(cuts) + 1 {
					var df dupsFile
					if _, err := readJSON(filepath.Join(dupsFolder(work, part), dupsMark), "part", &df); err != nil {
						t.Fatal(err)
					}
					repeats, cands = repeats+df.Repeats, cands+df.Candidates
				}
				if repeats == 0 || cands == 0 {
					t.Fatalf("%s: the parts found %d repeats and %d candidate pairs: the test needs both", cname, repeats, cands)
				}
				// The ledger gives the work to four digits: the cut's count is checked whole, against
				// the set's own search, which TestSetDupsMatchBuild holds to one build's.
				var cf cutFile
				if _, err := readJSON(filepath.Join(work, cutName, cutMark), "cut", &cf); err != nil {
					t.Fatal(err)
				}
				ix, err := index.Open(set)
				if err != nil {
					t.Fatal(err)
				}
				want, err := ix.Duplicates(context.Background())
				ix.Close()
				if err != nil || cf.Dups == nil || !reflect.DeepEqual(*cf.Dups, *want) {
					t.Fatalf("%s: the cut found\n%+v\nthe set\n%+v (%v)", cname, cf.Dups, want, err)
				}
			}
		})
	}
}

// sameRun compares two run folders: every file byte for byte, the manifest without its command.
func sameRun(t *testing.T, name, a, b string) {
	t.Helper()
	ea, _ := os.ReadDir(a)
	eb, _ := os.ReadDir(b)
	if len(ea) != len(eb) {
		t.Fatalf("%s: %d files against %d", name, len(ea), len(eb))
	}
	for _, e := range ea {
		x, err := os.ReadFile(filepath.Join(a, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		y, err := os.ReadFile(filepath.Join(b, e.Name()))
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if e.Name() == ManifestFile {
			x, y = withoutCommand(t, x), withoutCommand(t, y)
		}
		if !bytes.Equal(x, y) {
			t.Errorf("%s: %s differs between pick over the set and the sharded pick", name, e.Name())
		}
	}
}

// withoutCommand is a manifest with its command line taken out: a sharded pick is run by other commands.
func withoutCommand(t *testing.T, b []byte) []byte {
	t.Helper()
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	delete(m, "command")
	out, _ := json.Marshal(m)
	return out
}

// TestShardedPickRefuses checks the bad inputs: flags a sharded pick cannot honour, named; a
// missing shard, a damaged ranking, a shard scored with other flags, and a shard whose set changed.
func TestShardedPickRefuses(t *testing.T) {
	files, target := t0Files(t, 4)
	dir := t.TempDir()
	set := t0Set(t, dir, files, []int{2})
	opt := shardConfigs(set, target)["bm25-sum-caps"]
	opt.Out = filepath.Join(dir, "out")
	ctx := context.Background()
	for _, c := range []struct {
		name string
		edit func(o *Options)
		want string
	}{
		{"duplicates", func(o *Options) { o.Guards.KeepDuplicates = false }, "--keep-duplicates"},
		{"ngram", func(o *Options) { o.Method = MethodNgram }, "--method ngram"},
		{"several sets", func(o *Options) { o.ExtraTargets = []string{target} }, "--target given 2 times"},
		{"stdin", func(o *Options) { o.Target = "-" }, "--target -"},
	} {
		o := opt
		c.edit(&o)
		_, err := ScoreShard(ctx, o, filepath.Join(dir, "work"), 0)
		if !errors.Is(err, ErrShard) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want a refusal naming %s", c.name, err, c.want)
		}
	}
	work := filepath.Join(dir, "work")
	if _, err := ScoreShard(ctx, opt, work, 0); err != nil {
		t.Fatal(err)
	}
	if _, err := CutShards(ctx, opt, work); !errors.Is(err, ErrShardWork) || !strings.Contains(err.Error(), "shard 1 of 2") {
		t.Errorf("a missing shard: %v", err)
	}
	other := opt
	other.Select.Fill = true
	if _, err := ScoreShard(ctx, other, work, 1); err != nil {
		t.Fatal(err)
	}
	if _, err := CutShards(ctx, opt, work); !errors.Is(err, ErrShardWork) || !strings.Contains(err.Error(), "shard 1 of 2 was scored with other flags") {
		t.Errorf("a shard of another pick: %v", err)
	}
	// A shard checked against other evaluation rows: the files are the pick's by content.
	eval, evalOther := t0Eval(t, files[1], 40), t0Eval(t, files[1], 41)
	ex, exOther := opt, opt
	ex.Guards.Exclude, exOther.Guards.Exclude = []string{eval}, []string{evalOther}
	if _, err := ScoreShard(ctx, ex, work, 0); err != nil {
		t.Fatal(err)
	}
	if _, err := ScoreShard(ctx, exOther, work, 1); err != nil {
		t.Fatal(err)
	}
	if _, err := CutShards(ctx, ex, work); !errors.Is(err, ErrShardWork) || !strings.Contains(err.Error(), "shard 1 of 2 was scored with other flags, another target or other evaluation files") {
		t.Errorf("a shard checked against other evaluation files: %v", err)
	}
	if _, err := ScoreShard(ctx, ex, work, 1); err != nil {
		t.Fatal(err)
	}
	contam := filepath.Join(shardFolder(work, 1), contamFile)
	if b, _ := os.ReadFile(contam); len(b) == 0 {
		t.Fatalf("shard 1 has no contaminated rows of %s", eval)
	} else {
		b[len(b)/2] ^= 1
		os.WriteFile(contam, b, 0o644)
	}
	if _, err := CutShards(ctx, ex, work); !errors.Is(err, ErrShardWork) || !strings.Contains(err.Error(), "shard 1: "+contam+" is damaged") {
		t.Errorf("a damaged list of contaminated rows: %v", err)
	}
	if _, err := ScoreShard(ctx, opt, work, 0); err != nil {
		t.Fatal(err)
	}
	if _, err := ScoreShard(ctx, opt, work, 1); err != nil {
		t.Fatal(err)
	}
	ranking := filepath.Join(shardFolder(work, 1), rankingFile)
	b, _ := os.ReadFile(ranking)
	b[len(b)-1] ^= 1
	os.WriteFile(ranking, b, 0o644)
	if _, err := CutShards(ctx, opt, work); !errors.Is(err, ErrShardWork) || !strings.Contains(err.Error(), "shard 1: "+ranking+" is damaged") {
		t.Errorf("a damaged ranking: %v", err)
	}
	if _, err := os.Stat(filepath.Join(work, cutName)); !os.IsNotExist(err) {
		t.Errorf("a cut was published from a damaged ranking")
	}
	// A segment rebuilt after shard 0 was scored: the set is another.
	if _, err := index.Build(ctx, filepath.Join(dir, "seg1"), files[2:4], index.Options{Text: "prompt,completion", NoDups: true}); err != nil {
		t.Fatal(err)
	}
	if _, err := ScoreShard(ctx, opt, work, 1); err != nil {
		t.Fatal(err)
	}
	if _, err := CutShards(ctx, opt, work); !errors.Is(err, ErrShardWork) || !strings.Contains(err.Error(), "shard 0 was scored over another index set") {
		t.Errorf("shards of two versions of the set: %v", err)
	}
}
