package run

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"sluice/index"
)

// TestEachScoreLineAnyLength reads scores.jsonl files whose lines are longer than any buffer (a
// scores line holds up to three ids, each as long as the row the index took), ending with or
// without a newline, with CRLF and empty lines, and checks every line comes back whole.
func TestEachScoreLineAnyLength(t *testing.T) {
	long := strings.Repeat("a", 17<<20)
	for _, tc := range []struct {
		name, file string
		want       []string
	}{
		{"short", "{}\n{}\n", []string{"{}", "{}"}},
		{"no final newline", "{}\n{}", []string{"{}", "{}"}},
		{"crlf and empty", "{}\r\n\n{}\n", []string{"{}", "", "{}"}},
		{"longer than 16 MiB", "x\n" + long + "\ny\n", []string{"x", long, "y"}},
		{"long last line", long, []string{long}},
		{"empty", "", nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			if err := os.WriteFile(filepath.Join(dir, ScoresFile), []byte(tc.file), 0o644); err != nil {
				t.Fatal(err)
			}
			var got []string
			err := EachScoreLine(dir, func(row int, line []byte) error {
				if row != len(got) {
					t.Errorf("line %d read as row %d", len(got)+1, row)
				}
				got = append(got, string(line))
				return nil
			})
			if err != nil {
				t.Fatal(err)
			}
			if len(got) != len(tc.want) {
				t.Fatalf("%d lines, want %d", len(got), len(tc.want))
			}
			for i := range got {
				if got[i] != tc.want[i] {
					t.Errorf("line %d: %d bytes, want %d", i+1, len(got[i]), len(tc.want[i]))
				}
			}
		})
	}
}

// TestLongIDsReadBack picks from a pool whose ids are 9 MiB long, two rows being copies of each
// other, so the dropped copy's line in scores.jsonl carries two such ids (18 MiB), and reads the
// run back as why, diff and report do.
func TestLongIDsReadBack(t *testing.T) {
	dir := t.TempDir()
	idA, idB := strings.Repeat("a", 9<<20), strings.Repeat("b", 9<<20)
	var pool strings.Builder
	for _, r := range []struct{ id, text string }{
		{idA, "how do i reset my password"}, {idB, "how do i reset my password"}, {"c", "the weather is fine"},
	} {
		b, _ := json.Marshal(map[string]string{"id": r.id, "text": r.text})
		pool.Write(append(b, '\n'))
	}
	poolPath, target := filepath.Join(dir, "pool.jsonl"), filepath.Join(dir, "target.jsonl")
	os.WriteFile(poolPath, []byte(pool.String()), 0o644)
	os.WriteFile(target, []byte(`{"id":"t","text":"reset my password"}`+"\n"), 0o644)
	idx, out := filepath.Join(dir, "idx"), filepath.Join(dir, "run")
	if _, err := index.Build(context.Background(), idx, []string{poolPath}, index.Options{ID: "id"}); err != nil {
		t.Fatal(err)
	}
	if _, err := Pick(context.Background(), demoOptions(idx, target, out)); err != nil {
		t.Fatal(err)
	}
	found, err := FindScores(out, []string{idA, idB})
	if err != nil {
		t.Fatal(err)
	}
	a, b := found[idA], found[idB]
	if len(a) != 1 || len(b) != 1 || !a[0].Kept || b[0].Reason != "duplicate" || b[0].DuplicateOf != idA {
		t.Errorf("read back: %d and %d lines for the two long ids, the second a duplicate of the first: %v", len(a), len(b), len(b) == 1 && b[0].DuplicateOf == idA)
	}
}

// TestMaxMem checks the pick's memory bound: a pick whose estimate passes it fails before scoring
// with ErrMemory, saying what it needs, and writes nothing; one within it runs; and the estimate
// counts the duplicate guard per pool row.
func TestMaxMem(t *testing.T) {
	dir, idx, target := demo(t)
	for i, tc := range []struct {
		maxMem int64
		keep   bool
		fails  bool
	}{
		{64 << 20, true, true}, // the posting span and the buffers alone take more
		{1 << 40, true, false},
		{1 << 40, false, false},
		{0, false, false}, // no bound
	} {
		out := filepath.Join(dir, fmt.Sprintf("run%d", i))
		opt := demoOptions(idx, target, out)
		opt.MaxMem, opt.Guards.KeepDuplicates = tc.maxMem, tc.keep
		_, err := Pick(context.Background(), opt)
		if tc.fails != errors.Is(err, ErrMemory) || !tc.fails && err != nil {
			t.Errorf("--max-mem %d: %v", tc.maxMem, err)
		}
		if tc.fails {
			if !strings.Contains(fmt.Sprint(err), "needs about") {
				t.Errorf("the error does not say what the pick needs: %v", err)
			}
			if _, serr := os.Stat(out); !os.IsNotExist(serr) {
				t.Errorf("a pick refused for memory left %s: %v", out, serr)
			}
		}
	}
	ix, err := index.Open(idx)
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	need := func(keep bool, nearDup float64) int64 {
		opt := demoOptions(idx, target, "")
		opt.Guards.KeepDuplicates, opt.Guards.NearDup = keep, nearDup
		p := &picked{opt: &opt, ix: ix, target: target}
		if err := p.readTargets(p.opt.Target); err != nil {
			t.Fatal(err)
		}
		n, _ := p.memoryNeed()
		return n
	}
	n := int64(ix.NumRows())
	// The index holds clusters at the default threshold, which the pick takes; at another it finds
	// its own.
	if got, want := need(false, 0)-need(true, 0), n*indexDupRowBytes; got != want {
		t.Errorf("the index's clusters add %d to the estimate, want %d for %d rows", got, want, n)
	}
	if got, want := need(false, 0.9)-need(true, 0), n*dupRowBytes(chooseBands(0.9)); got != want {
		t.Errorf("the duplicate guard adds %d to the estimate, want %d for %d rows", got, want, n)
	}
}

// TestPlainID holds FindScores' quick look at a line's id to what encoding/json decodes from the
// same line (the standard library as the reference): where plainID answers, the two agree, and it
// declines every line it cannot read as written.
func TestPlainID(t *testing.T) {
	for _, tc := range []struct {
		line string
		ok   bool
	}{
		{`{"id":"pool.jsonl:12","score":1.5}`, true},
		{`{"id":"","score":null}`, true},
		{`{"id":"caf\u00e9","score":1}`, false}, // an escape: decoded instead
		{`{"id":"café","score":1}`, true},
		{`{"id":"a\"b","score":1}`, false},
		{"{\"id\":\"a\xffb\",\"score\":1}", false}, // not UTF-8: the decoder would replace the byte
		{"{\"id\":\"a\tb\",\"score\":1}", false},   // a control byte, which JSON refuses unescaped
		{`{"id":"x"}`, false},                      // not a pick's line: decoded
		{`{ "id":"x","score":1}`, false},
		{`{"id":"x`, false},
	} {
		id, ok := plainID([]byte(tc.line))
		if ok != tc.ok {
			t.Errorf("%q: ok %v, want %v", tc.line, ok, tc.ok)
			continue
		}
		var probe struct {
			ID string `json:"id"`
		}
		if ok && (json.Unmarshal([]byte(tc.line), &probe) != nil || probe.ID != string(id)) {
			t.Errorf("%q: plainID %q, encoding/json %q", tc.line, id, probe.ID)
		}
	}
}

// FuzzPlainID checks plainID against encoding/json on any line both read.
func FuzzPlainID(f *testing.F) {
	f.Add([]byte(`{"id":"pool.jsonl:12","score":1.5,"rank":3}`))
	f.Add([]byte(`{"id":"a\\u0041","score":1}`))
	f.Fuzz(func(t *testing.T, line []byte) {
		id, ok := plainID(line)
		var probe struct {
			ID string `json:"id"`
		}
		if ok && json.Unmarshal(line, &probe) == nil && probe.ID != string(id) {
			t.Fatalf("%q: plainID %q, encoding/json %q", line, id, probe.ID)
		}
	})
}
