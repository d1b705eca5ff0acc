package index

import (
	"bytes"
	"encoding/json"
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"testing"

	"sluice/index/decontam"
)

// TestExcludeMatchesCheck checks the rows a build records as sharing an n-gram with evaluation
// files against decontam run directly over the pool's rows, as a pick's guard checks them, with
// one to three workers and many batches: the same rows, evaluation rows and n-grams, the same words
// counted, and the same bytes whatever the number of workers.
func TestExcludeMatchesCheck(t *testing.T) {
	pool := testPool(t, 2000)
	data, _ := os.ReadFile(pool)
	lines := bytes.Split(data, []byte("\n"))
	// Evaluation rows: two pool prompts as JSON, a run of words as a plain line.
	prompt := func(line []byte) string {
		var r struct{ Prompt string }
		json.Unmarshal(line, &r)
		return r.Prompt
	}
	var ev bytes.Buffer
	for _, i := range []int{100, 700} {
		b, _ := json.Marshal(map[string]string{"question": prompt(lines[i])})
		ev.Write(append(b, '\n'))
	}
	ev.WriteString("a plain line: tide engine bread oven\n")
	eval := filepath.Join(t.TempDir(), "eval.jsonl")
	if err := os.WriteFile(eval, ev.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	const n = 4
	set, err := decontam.ReadFiles([]string{eval}, n, DefaultMaxRowBytes)
	if err != nil {
		t.Fatal(err)
	}
	want := map[int]decontam.Hit{}
	var words int64
	row, longest := 0, 0
	for _, line := range lines {
		var r struct{ Prompt, Completion string }
		if len(line) == 0 || json.Unmarshal(line, &r) != nil {
			continue
		}
		w := decontam.Words(nil, r.Prompt+"\n"+r.Completion)
		words += int64(len(w))
		longest = max(longest, len(w))
		if hit, ok := set.Check(w); ok {
			hit.Words = append([]string(nil), hit.Words...)
			want[row] = hit
		}
		row++
	}
	if len(want) < 3 || len(want) > row/2 {
		t.Fatalf("%d of %d rows contaminated: the fixture should hold a few", len(want), row)
	}
	var ref []byte
	for _, tc := range []struct {
		workers int
		mem     int64
	}{{1, 0}, {2, 4 << 10}, {3, 1 << 10}} {
		dir, _ := build(t, pool, Options{Text: "prompt,completion", Workers: tc.workers, Mem: tc.mem, Exclude: []string{eval}, ExcludeN: n, batchRows: 64})
		ix, err := Open(dir)
		if err != nil {
			t.Fatal(err)
		}
		ex, got, err := ix.Contamination()
		ix.Close()
		if err != nil {
			t.Fatal(err)
		}
		sum, _ := FileSHA256(eval)
		if ex.N != n || len(ex.Files) != 1 || ex.Files[0] != (ExcludedFile{eval, sum}) || ex.Words != words || ex.Rows != int64(len(want)) || ex.Longest != longest {
			t.Errorf("workers %d: meta %+v, want n %d, %s %s, %d words, %d rows", tc.workers, ex, n, eval, sum, words, len(want))
		}
		if !reflect.DeepEqual(got, want) {
			t.Errorf("workers %d: contaminated rows differ from a direct check", tc.workers)
		}
		b, _ := os.ReadFile(filepath.Join(dir, contamFile))
		m, _ := os.ReadFile(filepath.Join(dir, metaFile))
		if b = append(b, m...); ref == nil {
			ref = b
		} else if !bytes.Equal(ref, b) {
			t.Errorf("workers %d: contaminated.jsonl or meta.json differs from the first build", tc.workers)
		}
	}
}

// TestExcludeWarnsLongNGram: an n-gram longer than every row finds only rows equal to an
// evaluation row, whole, and the build says so.
func TestExcludeWarnsLongNGram(t *testing.T) {
	pool := testPool(t, 30)
	eval := filepath.Join(t.TempDir(), "eval.jsonl")
	os.WriteFile(eval, []byte("tide engine bread oven\n"), 0o644)
	for _, tc := range []struct {
		n    int
		warn bool
	}{{3, false}, {40, true}} {
		_, st := build(t, pool, Options{Text: "prompt,completion", Exclude: []string{eval}, ExcludeN: tc.n})
		var b bytes.Buffer
		st.WriteWarnings(&b)
		if got := bytes.Contains(b.Bytes(), []byte("longer than every pool row")); got != tc.warn {
			t.Errorf("n-gram %d: warned %v, want %v: %q", tc.n, got, tc.warn, b.String())
		}
	}
}

// TestExcludeRefuses checks that a build refuses an evaluation file it cannot use, before writing
// anything, and an index whose record of contaminated rows does not add up.
func TestExcludeRefuses(t *testing.T) {
	pool := testPool(t, 30)
	empty := filepath.Join(t.TempDir(), "empty.jsonl")
	os.WriteFile(empty, []byte("\n\n"), 0o644)
	for _, tc := range []struct {
		name string
		opt  Options
		says string
	}{
		{"missing", Options{Exclude: []string{filepath.Join(t.TempDir(), "none.jsonl")}}, "none.jsonl"},
		{"empty", Options{Exclude: []string{empty}}, "holds no rows"},
		{"n-gram under 1", Options{Exclude: []string{empty}, ExcludeN: -1}, "--exclude-ngram"},
		{"dry run", Options{Exclude: []string{empty}, DryRun: true}, "--exclude has no use with --dry-run"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := filepath.Join(t.TempDir(), "idx")
			err := tc.opt.Check()
			if err == nil {
				_, err = Build(t.Context(), dir, []string{pool}, tc.opt)
			}
			if err == nil || !bytes.Contains([]byte(err.Error()), []byte(tc.says)) {
				t.Fatalf("got %v, want an error saying %q", err, tc.says)
			}
			if _, err := os.Stat(dir); !errors.Is(err, os.ErrNotExist) {
				t.Errorf("a refused build left %s", dir)
			}
		})
	}
}

// FuzzContamination feeds contaminated.jsonl bytes to Contamination: it never panics, and a list
// it accepts has rows in range and in order, files in range and as many rows as meta.json says.
func FuzzContamination(f *testing.F) {
	f.Add([]byte(`{"row":1,"file":0,"line":3,"at":2,"ngram":"a b c"}`+"\n"), int64(1))
	f.Add([]byte(`{"row":4,"file":1,"line":1,"at":0,"ngram":"x"}`+"\n"+`{"row":2,"file":0,"line":1,"ngram":""}`+"\n"), int64(2))
	f.Fuzz(func(t *testing.T, data []byte, rows int64) {
		ix := &Index{meta: Meta{Rows: 10, Excluded: &Excluded{N: 3, Files: make([]ExcludedFile, 2), Rows: rows}}, contam: data}
		_, hits, err := ix.Contamination()
		if err != nil {
			return
		}
		if int64(len(hits)) != rows {
			t.Fatalf("%d rows accepted, meta.json says %d", len(hits), rows)
		}
		for r, h := range hits {
			if r < 0 || r >= 10 || h.File < 0 || h.File > 1 || h.Line < 1 {
				t.Fatalf("accepted row %d, file %d, line %d", r, h.File, h.Line)
			}
		}
	})
}
