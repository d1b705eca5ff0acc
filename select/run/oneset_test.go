package run

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"sluice/cmd/sluice/demodata"
	"sluice/score"
)

var updateOneSet = flag.Bool("update-one-set", false, "rewrite testdata/one-set.sha256 from this sluice's picks")

// oneSetPicks are picks of one target set in several configurations, whose files must not change
// when a pick learns to serve several target sets.
func oneSetPicks(dir, idx, target string) map[string]Options {
	eval := filepath.Join(dir, "eval.jsonl")
	picks := map[string]Options{"bm25-sum": demoOptions(idx, target, "")}
	o := demoOptions(idx, target, "")
	o.Params.Method, o.Params.Aggregate = score.TFIDF, score.Max
	o.Select.Fill, o.MinScore, o.MinScoreSet = true, MinScore{Kind: "share", Value: 0.5}, true
	o.Guards = Guards{Exclude: []string{eval}, MaxShare: map[string]float64{"": 0.6}}
	o.Compress = "gzip"
	picks["tfidf-max-guards"] = o
	o = demoOptions(idx, target, "")
	o.Params.SkipBest, o.Guards.KeepDuplicates = true, true
	o.MinScore, o.MinScoreSet = MinScore{Kind: "percentile", Value: 90}, true
	o.Budget, o.KeptFormat = 2e12, KeptText
	picks["bm25-p90-no-attribution"] = o
	return picks
}

// TestOneSetUnchanged checks that a pick of one target set writes, byte for byte, what sluice
// wrote before picks for several sets existed: testdata/one-set.sha256 was made by
// -update-one-set with this file run on the commit before them (893f1a4). The manifest is
// compared without the index's meta.json hash and identity and its files' hashes, and every file with the
// folder's name taken out, since these name the test's temporary folder.
func TestOneSetUnchanged(t *testing.T) {
	dir, idx, target := demo(t)
	if err := os.WriteFile(filepath.Join(dir, "eval.jsonl"), demodata.Eval(), 0o644); err != nil {
		t.Fatal(err)
	}
	var got strings.Builder
	picks := oneSetPicks(dir, idx, target)
	for _, name := range []string{"bm25-p90-no-attribution", "bm25-sum", "tfidf-max-guards"} {
		o := picks[name]
		o.Out = filepath.Join(dir, name)
		if _, err := Pick(context.Background(), o); err != nil {
			t.Fatal(err)
		}
		entries, err := os.ReadDir(o.Out)
		if err != nil {
			t.Fatal(err)
		}
		for _, e := range entries {
			b, err := os.ReadFile(filepath.Join(o.Out, e.Name()))
			if err != nil {
				t.Fatal(err)
			}
			if e.Name() == ManifestFile {
				var m map[string]any
				if err := json.Unmarshal(b, &m); err != nil {
					t.Fatal(err)
				}
				delete(m["index"].(map[string]any), "sha256")
				delete(m["index"].(map[string]any), "identity")
				delete(m, "files") // the files are compared themselves
				b, _ = json.Marshal(m)
			}
			b = bytes.ReplaceAll(b, []byte(dir), []byte("DIR"))
			sum := sha256.Sum256(b)
			fmt.Fprintf(&got, "%s %s %s\n", name, e.Name(), hex.EncodeToString(sum[:]))
		}
	}
	path := filepath.Join("testdata", "one-set.sha256")
	if *updateOneSet {
		if err := os.WriteFile(path, []byte(got.String()), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if got.String() != string(want) {
		t.Errorf("a pick of one target set wrote other bytes than before:\n got %s\nwant %s", got.String(), want)
	}
}
