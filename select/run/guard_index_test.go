package run

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"sluice/cmd/sluice/demodata"
	"sluice/index"
	"sluice/index/dedup"
)

// TestIndexDupsMatchPickTime picks from an index that holds the duplicates found at build time and
// from one built without them, whose pick finds them itself: every row's score, rank, reason and
// duplicate_of, and the kept rows, are the same bytes. Only each row's running ledger differs, by
// the hashing that the second pick charges and the first does not (the index paid it), and the
// ledger says which.
func TestIndexDupsMatchPickTime(t *testing.T) {
	dir := t.TempDir()
	pool, target := filepath.Join(dir, "pool.jsonl"), filepath.Join(dir, "target.jsonl")
	eval := filepath.Join(dir, "eval.jsonl")
	for f, b := range map[string][]byte{pool: demodata.Pool(), target: demodata.Target(), eval: demodata.Eval()} {
		if err := os.WriteFile(f, b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	for _, exclude := range []bool{false, true} {
		var runs [2]string
		var ledgers [2]Ledger
		for i, noDups := range []bool{false, true} {
			idx := filepath.Join(dir, fmt.Sprintf("idx%d", i))
			if _, err := index.Build(context.Background(), idx, []string{pool}, index.Options{ID: "id", NoDups: noDups}); err != nil {
				t.Fatal(err)
			}
			runs[i] = filepath.Join(dir, fmt.Sprintf("run%d-%v", i, exclude))
			opt := demoOptions(idx, target, runs[i])
			opt.Budget = 1e15 // no cut between the two ledgers' totals
			if exclude {
				opt.Guards.Exclude = []string{eval}
			}
			if _, err := Pick(context.Background(), opt); err != nil {
				t.Fatal(err)
			}
			l, err := ReadLedger(runs[i])
			if err != nil {
				t.Fatal(err)
			}
			ledgers[i] = *l
		}
		var hashing float64
		for _, ln := range ledgers[1].Lines {
			if strings.HasPrefix(ln.What, "find duplicates") {
				hashing = ln.FLOPs
			}
		}
		for _, ln := range ledgers[0].Lines {
			if strings.HasPrefix(ln.What, "find duplicates") {
				t.Errorf("the pick on the index's clusters charges %q", ln.What)
			}
		}
		if hashing == 0 || !strings.Contains(strings.Join(ledgers[0].Notes, "\n"), "found when the index was built") {
			t.Errorf("charge %v; notes %q", hashing, ledgers[0].Notes)
		}
		if sameButLedger(t, runs, hashing)["duplicate"] == 0 {
			t.Errorf("exclude %v: the demo pool holds copies, but no row was dropped as a duplicate", exclude)
		}
	}
}

// TestIndexDupsFallBack: a pick finds duplicates itself, and charges the hashing, when the index's
// were made at another threshold or by another version of dedup.
func TestIndexDupsFallBack(t *testing.T) {
	dir, idx, target := demo(t)
	charged := func(out string, opt Options) bool {
		t.Helper()
		if _, err := Pick(context.Background(), opt); err != nil {
			t.Fatal(err)
		}
		l, err := ReadLedger(out)
		if err != nil {
			t.Fatal(err)
		}
		for _, ln := range l.Lines {
			if strings.HasPrefix(ln.What, "find duplicates") {
				return true
			}
		}
		return false
	}
	out := filepath.Join(dir, "run-same")
	if charged(out, demoOptions(idx, target, out)) {
		t.Error("a pick at the index's threshold charges hashing")
	}
	out = filepath.Join(dir, "run-other")
	opt := demoOptions(idx, target, out)
	opt.Guards.NearDup = 0.9
	if !charged(out, opt) {
		t.Error("a pick at another threshold took the index's clusters")
	}
	meta := filepath.Join(idx, "meta.json")
	b, err := os.ReadFile(meta)
	if err != nil {
		t.Fatal(err)
	}
	old := bytes.Replace(b, []byte(fmt.Sprintf(`"dedup_version": %d`, dedup.Version)), []byte(`"dedup_version": 1`), 1)
	if bytes.Equal(old, b) {
		t.Fatal("meta.json names no dedup_version")
	}
	if err := os.WriteFile(meta, old, 0o644); err != nil {
		t.Fatal(err)
	}
	out = filepath.Join(dir, "run-old")
	if !charged(out, demoOptions(idx, target, out)) {
		t.Error("a pick took clusters made by another version of dedup")
	}
}

// TestIndexExcludeMatchesPickTime picks, excluding the demo's evaluation file, from an index that
// checked every row against it at build time and from one that did not, whose pick checks the rows
// itself: every line of scores.jsonl (its contaminated rows, evaluation lines and n-grams included)
// and the kept rows are the same bytes but for each row's running ledger, apart by the check the
// second pick charges and the first does not. Given other evaluation bytes or another n-gram length,
// the first index is checked again, not trusted.
func TestIndexExcludeMatchesPickTime(t *testing.T) {
	dir := t.TempDir()
	pool, target := filepath.Join(dir, "pool.jsonl"), filepath.Join(dir, "target.jsonl")
	eval, other := filepath.Join(dir, "eval.jsonl"), filepath.Join(dir, "other.jsonl")
	for f, b := range map[string][]byte{pool: demodata.Pool(), target: demodata.Target(), eval: demodata.Eval(), other: append(demodata.Eval(), "one more row\n"...)} {
		if err := os.WriteFile(f, b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	pick := func(name string, idxOpt index.Options, exclude string, n int) (string, *Ledger) {
		t.Helper()
		idx := filepath.Join(dir, name+".idx")
		if _, err := os.Stat(idx); err != nil {
			idxOpt.ID = "id"
			if _, err := index.Build(context.Background(), idx, []string{pool}, idxOpt); err != nil {
				t.Fatal(err)
			}
		}
		out := filepath.Join(dir, fmt.Sprintf("%s-%s-%d", name, filepath.Base(exclude), n))
		opt := demoOptions(idx, target, out)
		opt.Budget = 1e15
		opt.Guards.Exclude, opt.Guards.ExcludeN = []string{exclude}, n
		if _, err := Pick(context.Background(), opt); err != nil {
			t.Fatal(err)
		}
		l, err := ReadLedger(out)
		if err != nil {
			t.Fatal(err)
		}
		return out, l
	}
	checkCharge := func(l *Ledger) float64 {
		for _, ln := range l.Lines {
			if strings.HasPrefix(ln.What, "check pool rows against the evaluation") {
				return ln.FLOPs
			}
		}
		return 0
	}
	built := index.Options{Exclude: []string{eval}, ExcludeN: DefaultExcludeN}
	runs := [2]string{}
	var ledgers [2]*Ledger
	runs[0], ledgers[0] = pick("checked", built, eval, 0)
	runs[1], ledgers[1] = pick("plain", index.Options{}, eval, 0)
	charge := checkCharge(ledgers[1])
	if checkCharge(ledgers[0]) != 0 || charge == 0 || !strings.Contains(strings.Join(ledgers[0].Notes, "\n"), "checked when the index was built") {
		t.Fatalf("charges %v and %v; notes %q", checkCharge(ledgers[0]), charge, ledgers[0].Notes)
	}
	if sameButLedger(t, runs, charge)["contaminated"] == 0 {
		t.Error("the demo's evaluation file leaks into its pool, but no row was refused")
	}
	// Other evaluation bytes, or another n-gram length: the pick checks the rows itself.
	if _, l := pick("checked", built, other, 0); checkCharge(l) == 0 {
		t.Error("a pick excluding another evaluation file took the index's check")
	}
	if _, l := pick("checked", built, eval, 8); checkCharge(l) == 0 {
		t.Error("a pick at another n-gram length took the index's check")
	}
	// An n-gram longer than every row is noted, as the summary warns of it.
	if _, l := pick("plain", index.Options{}, eval, 900); !strings.Contains(strings.Join(l.Notes, "\n"), "longer than every pool row") {
		t.Errorf("an n-gram of 900 words: notes %q", l.Notes)
	}
}

// sameButLedger checks that two runs kept the same rows, and that every line of their scores.jsonl
// is the same but for the running ledger, the second's ahead by apart; it counts the first run's
// rows by reason.
func sameButLedger(t *testing.T, runs [2]string, apart float64) map[string]int {
	t.Helper()
	kept := [2][]byte{}
	lines := [2][][]byte{}
	for i, r := range runs {
		kept[i], _ = os.ReadFile(filepath.Join(r, "kept.jsonl"))
		s, _ := os.ReadFile(filepath.Join(r, "scores.jsonl"))
		lines[i] = bytes.Split(s, []byte("\n"))
	}
	if !bytes.Equal(kept[0], kept[1]) || len(kept[0]) == 0 || len(lines[0]) != len(lines[1]) {
		t.Fatalf("kept.jsonl %d and %d bytes, scores.jsonl %d and %d lines", len(kept[0]), len(kept[1]), len(lines[0]), len(lines[1]))
	}
	reasons := map[string]int{}
	for j := range lines[0] {
		if len(lines[0][j]) == 0 {
			continue
		}
		var a, b map[string]any
		json.Unmarshal(lines[0][j], &a)
		json.Unmarshal(lines[1][j], &b)
		if la, lb := a["ledger"].(float64), b["ledger"].(float64); math.Abs(lb-la-apart) > 1e-9*lb {
			t.Errorf("line %d: ledger %v and %v, want apart by %v", j, la, lb, apart)
		}
		delete(a, "ledger")
		delete(b, "ledger")
		ja, _ := json.Marshal(a)
		jb, _ := json.Marshal(b)
		if !bytes.Equal(ja, jb) {
			t.Fatalf("line %d differs:\n%s\n%s", j, ja, jb)
		}
		if r, ok := a["reason"].(string); ok {
			reasons[r]++
		}
	}
	return reasons
}

// TestSetKeysMatchHashing picks, duplicates dropped, over the demo pool cut into three segments, in
// three ways: built with duplicates and picked at their threshold (the set finds the clusters from
// the segments' keys and sketches and charges nothing, as one index would); built with them and
// picked at another threshold (the pick reads the stored keys and signs only each key's first
// row); built without (it hashes and signs every row). The last two keep the same rows, with the
// same lines of scores.jsonl but for the running ledger, apart by the hashing the third does and
// the second does not.
func TestSetKeysMatchHashing(t *testing.T) {
	dir := t.TempDir()
	lines := bytes.SplitAfter(demodata.Pool(), []byte("\n"))
	var parts []string
	for i, cut := range [][2]int{{0, 250}, {250, 500}, {500, len(lines)}} {
		p := filepath.Join(dir, fmt.Sprintf("part%d.jsonl", i))
		if err := os.WriteFile(p, bytes.Join(lines[cut[0]:cut[1]], nil), 0o644); err != nil {
			t.Fatal(err)
		}
		parts = append(parts, p)
	}
	target := filepath.Join(dir, "target.jsonl")
	os.WriteFile(target, demodata.Target(), 0o644)
	var runs [3]string
	var charges [3]float64
	for i, c := range []struct {
		noDups  bool
		nearDup float64
		note    string
	}{{false, 0, "found when the index was built"}, {false, 0.7, "read from the segments' dups files"}, {true, 0.7, ""}} {
		var segs []string
		for j, p := range parts {
			seg := filepath.Join(dir, fmt.Sprintf("seg%d-%v", j, c.noDups))
			if _, err := os.Stat(seg); err != nil {
				if _, err := index.Build(context.Background(), seg, []string{p}, index.Options{ID: "id", NoDups: c.noDups}); err != nil {
					t.Fatal(err)
				}
			}
			segs = append(segs, seg)
		}
		set := filepath.Join(dir, fmt.Sprintf("pool-%d.set", i))
		if _, err := index.WriteSet(set, segs, false); err != nil {
			t.Fatal(err)
		}
		runs[i] = filepath.Join(dir, fmt.Sprintf("run-%d", i))
		opt := demoOptions(set, target, runs[i])
		opt.Budget, opt.Guards.NearDup = 1e15, c.nearDup
		if _, err := Pick(context.Background(), opt); err != nil {
			t.Fatal(err)
		}
		l, err := ReadLedger(runs[i])
		if err != nil {
			t.Fatal(err)
		}
		for _, ln := range l.Lines {
			if strings.HasPrefix(ln.What, "find duplicates") {
				charges[i] = ln.FLOPs
			}
		}
		notes := strings.Join(l.Notes, "\n")
		for _, n := range []string{"found when the index was built", "read from the segments' dups files"} {
			if strings.Contains(notes, n) != (n == c.note) {
				t.Errorf("pick %d: the note %q there: %v", i, n, !(n == c.note))
			}
		}
	}
	if !(charges[0] == 0 && 0 < charges[1] && charges[1] < charges[2]) {
		t.Fatalf("hashing charged %v from sketches, %v with stored keys, %v without", charges[0], charges[1], charges[2])
	}
	if sameButLedger(t, [2]string(runs[1:]), charges[2]-charges[1])["duplicate"] == 0 {
		t.Error("the demo pool holds copies, but no row was dropped as a duplicate")
	}
}
