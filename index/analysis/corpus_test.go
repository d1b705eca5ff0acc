package analysis

import (
	"bufio"
	"bytes"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"testing"
)

// dataDir returns ../shared/data beside the repository root, where the
// project keeps its real corpora, or "" if it is absent.
func dataDir(tb testing.TB) string {
	tb.Helper()
	dir, err := os.Getwd()
	if err != nil {
		tb.Fatal(err)
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			break
		}
		parent := filepath.Dir(dir)
		if parent == dir {
			return ""
		}
		dir = parent
	}
	data := filepath.Join(dir, "..", "shared", "data")
	if fi, err := os.Stat(data); err != nil || !fi.IsDir() {
		return ""
	}
	return data
}

// corpusFields calls fn with every text field of every row of the corpora
// under dir. every > 1 keeps only every n-th row of each file.
func corpusFields(dir string, every int, fn func(where string, text []byte)) error {
	type instance struct {
		Input  string `json:"input"`
		Output string `json:"output"`
	}
	type row struct {
		Prompt      string     `json:"prompt"`
		Completion  string     `json:"completion"`
		Instruction string     `json:"instruction"`
		Input       string     `json:"input"`
		Response    string     `json:"response"`
		Instances   []instance `json:"instances"`
	}
	emit := func(where string, r *row) {
		for _, s := range []string{r.Prompt, r.Completion, r.Instruction, r.Input, r.Response} {
			fn(where, []byte(s))
		}
		for _, in := range r.Instances {
			fn(where, []byte(in.Input))
			fn(where, []byte(in.Output))
		}
	}
	lines := func(pattern string) error {
		files, err := filepath.Glob(filepath.Join(dir, pattern))
		if err != nil {
			return err
		}
		sort.Strings(files)
		for _, name := range files {
			f, err := os.Open(name)
			if err != nil {
				return err
			}
			sc := bufio.NewScanner(f)
			sc.Buffer(nil, 64<<20)
			for n := 1; sc.Scan(); n++ {
				if (n-1)%every != 0 || len(bytes.TrimSpace(sc.Bytes())) == 0 {
					continue
				}
				var r row
				if err := json.Unmarshal(sc.Bytes(), &r); err != nil {
					f.Close()
					return fmt.Errorf("%s:%d: %w", name, n, err)
				}
				emit(fmt.Sprintf("%s:%d", name, n), &r)
			}
			err = sc.Err()
			f.Close()
			if err != nil {
				return fmt.Errorf("%s: %w", name, err)
			}
		}
		return nil
	}
	if err := lines("t0-train-50k-per-template/data_per_template/*.jsonl"); err != nil {
		return err
	}
	if err := lines("self-instruct-human-eval/*.jsonl"); err != nil {
		return err
	}
	files, err := filepath.Glob(filepath.Join(dir, "gpteacher", "*.json"))
	if err != nil {
		return err
	}
	sort.Strings(files)
	for _, name := range files {
		b, err := os.ReadFile(name)
		if err != nil {
			return err
		}
		var rows []row
		if err := json.Unmarshal(b, &rows); err != nil {
			return fmt.Errorf("%s: %w", name, err)
		}
		for i := range rows {
			if i%every == 0 {
				emit(fmt.Sprintf("%s[%d]", name, i), &rows[i])
			}
		}
	}
	return nil
}

// flatTerms collects terms without a string per term, to keep the corpus
// comparison quick.
type flatTerms struct {
	buf  []byte
	ends []int
}

func (f *flatTerms) reset() { f.buf, f.ends = f.buf[:0], f.ends[:0] }

func (f *flatTerms) add(term []byte) {
	f.buf = append(f.buf, term...)
	f.ends = append(f.ends, len(f.buf))
}

func (f *flatTerms) equal(g *flatTerms) bool {
	return bytes.Equal(f.buf, g.buf) && slices.Equal(f.ends, g.ends)
}

// TestCorporaMatchBleve checks the fast path against the reference path
// (bleve's analyzer, or sklearnRef for sklearn) on every text field of
// the real corpora.
func TestCorporaMatchBleve(t *testing.T) {
	dir := dataDir(t)
	if dir == "" {
		t.Skip("no ../shared/data beside the repository root; corpus equality not checked")
	}
	every := 1
	if testing.Short() {
		every = 20
	}
	for _, name := range Names() {
		t.Run(name, func(t *testing.T) {
			t.Parallel()
			a := mustNew(t, name)
			var fast, ref flatTerms
			fields, bytesIn, fails := 0, 0, 0
			err := corpusFields(dir, every, func(where string, text []byte) {
				fields++
				bytesIn += len(text)
				fast.reset()
				ref.reset()
				a.Each(text, fast.add)
				if a.sklearn {
					for _, term := range sklearnRef(a, text) {
						ref.add([]byte(term))
					}
				} else {
					a.bleveEach(text, func(t []byte, _ *uint64) { ref.add(t) })
				}
				if !fast.equal(&ref) {
					fails++
					if fails <= 5 {
						t.Errorf("%s: %q: fast and reference terms differ", where, text)
					}
				}
			})
			if err != nil {
				t.Fatal(err)
			}
			if fields == 0 {
				t.Fatalf("no text fields found under %s", dir)
			}
			t.Logf("%d fields, %d bytes, %d differing", fields, bytesIn, fails)
		})
	}
}
