package index

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"testing"
	"time"

	"sluice/index/analysis"
)

// testPool writes a pool whose rows mix shared and rare words, with a bad row and a blank line.
func testPool(t *testing.T, rows int) string {
	t.Helper()
	words := []string{"harbour", "ferry", "tide", "engine", "bread", "oven", "ledger", "tax", "rope", "knot", "storm", "wind"}
	var b bytes.Buffer
	for i := 0; i < rows; i++ {
		fmt.Fprintf(&b, `{"id":"r%d","prompt":"`, i)
		for j := 0; j < 3+i%7; j++ {
			fmt.Fprintf(&b, "%s ", words[(i*7+j*j)%len(words)])
		}
		fmt.Fprintf(&b, `word%d","completion":"%s %s"}`+"\n", i%13, words[i%len(words)], words[(i/3)%len(words)])
		if i == 5 {
			b.WriteString("{not json\n\n")
		}
	}
	p := filepath.Join(t.TempDir(), "pool.jsonl")
	if err := os.WriteFile(p, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func build(t *testing.T, pool string, opt Options) (string, *Stats) {
	t.Helper()
	dir := filepath.Join(t.TempDir(), "idx")
	st, err := Build(context.Background(), dir, []string{pool}, opt)
	if err != nil {
		t.Fatal(err)
	}
	return dir, st
}

// TestBuildMatchesBruteForce checks every posting, df, length and norm against a direct count over
// the rows, whatever the number of workers and however often runs are spilled.
func TestBuildMatchesBruteForce(t *testing.T) {
	pool := testPool(t, 3000)
	an, _ := analysis.New("english")
	// Brute force: analyse each good row directly.
	data, _ := os.ReadFile(pool)
	type doc map[string]uint32
	var docs []doc
	var lens []int
	for _, line := range bytes.Split(data, []byte("\n")) {
		if len(line) == 0 || line[0] != '{' || !bytes.Contains(line, []byte(`"prompt"`)) {
			continue
		}
		d := doc{}
		n := 0
		// prompt then completion, the detected shape
		for _, field := range []string{`"prompt":"`, `"completion":"`} {
			i := bytes.Index(line, []byte(field)) + len(field)
			j := i + bytes.IndexByte(line[i:], '"')
			an.Each(line[i:j], func(term []byte) { d[string(term)]++; n++ })
		}
		docs = append(docs, d)
		lens = append(lens, n)
	}
	var ref []byte
	for _, tc := range []struct {
		workers int
		mem     int64
	}{{1, 0}, {2, 0}, {2, 4 << 10}, {3, 1 << 10}} {
		t.Run(fmt.Sprintf("workers=%d/mem=%d", tc.workers, tc.mem), func(t *testing.T) {
			dir, st := build(t, pool, Options{Workers: tc.workers, Mem: tc.mem, batchRows: 64, Analyzer: "english"})
			if tc.mem > 0 && st.Runs <= tc.workers {
				t.Errorf("expected spills with mem %d, got %d runs", tc.mem, st.Runs)
			}
			ix, err := Open(dir)
			if err != nil {
				t.Fatal(err)
			}
			defer ix.Close()
			if ix.NumRows() != len(docs) {
				t.Fatalf("rows %d, want %d", ix.NumRows(), len(docs))
			}
			m := ix.Meta()
			if m.RowsRejected != 1 || m.BlankLines != 1 || m.RowsRead != int64(len(docs))+1 {
				t.Errorf("counts: read %d rejected %d blank %d", m.RowsRead, m.RowsRejected, m.BlankLines)
			}
			df := map[string]int{}
			for _, d := range docs {
				for term := range d {
					df[term]++
				}
			}
			if ix.NumTerms() != len(df) {
				t.Errorf("terms %d, want %d", ix.NumTerms(), len(df))
			}
			n := float64(len(docs))
			for term, want := range df {
				rows, tfs, err := ix.Postings(term, nil, nil)
				if err != nil {
					t.Fatal(err)
				}
				if len(rows) != want || ix.DF(term) != want {
					t.Fatalf("%q: %d postings, df %d, want %d", term, len(rows), ix.DF(term), want)
				}
				if !slices.IsSorted(rows) {
					t.Fatalf("%q: rows not ascending", term)
				}
				for i, r := range rows {
					if docs[r][term] != tfs[i] {
						t.Fatalf("%q row %d: tf %d, want %d", term, r, tfs[i], docs[r][term])
					}
				}
			}
			var total int
			for r, d := range docs {
				total += lens[r]
				if ix.RowLen(r) != lens[r] {
					t.Fatalf("row %d len %d, want %d", r, ix.RowLen(r), lens[r])
				}
				terms := make([]string, 0, len(d))
				for term := range d {
					terms = append(terms, term)
				}
				sort.Strings(terms)
				var s float64
				for _, term := range terms {
					w := float64(d[term]) * (math.Log((1+n)/(1+float64(df[term]))) + 1)
					s += w * w
				}
				if got, want := ix.RowNorm(r), math.Sqrt(s); math.Abs(got-want) > 1e-12*want {
					t.Fatalf("row %d norm %v, want %v", r, got, want)
				}
				if id := ix.RowID(r); id != fmt.Sprintf("r%d", r) && m.IDField != "" {
					t.Fatalf("row %d id %q", r, id)
				}
			}
			if want := float64(total) / n; math.Abs(ix.AvgLen()-want) > 1e-9 {
				t.Errorf("avg len %v, want %v", ix.AvgLen(), want)
			}
			// The same input gives the same bytes whatever the workers and spills.
			var all []byte
			for _, f := range []string{lexiconFile, postingsFile, rowsFile, normsFile, rejectedFile, dupsFile, metaFile} {
				b, err := os.ReadFile(filepath.Join(dir, f))
				if err != nil {
					t.Fatal(err)
				}
				all = append(all, b...)
			}
			if ref == nil {
				ref = all
			} else if !bytes.Equal(ref, all) {
				t.Errorf("index bytes differ from the first build")
			}
		})
	}
}

func TestCopyRowsByteExact(t *testing.T) {
	pool := testPool(t, 200)
	dir, _ := build(t, pool, Options{ID: "id"})
	ix, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	var buf bytes.Buffer
	rows := []int{150, 3, 0, 77}
	if err := ix.CopyRows(&buf, rows); err != nil {
		t.Fatal(err)
	}
	data, _ := os.ReadFile(pool)
	var want []byte
	for _, r := range []int{0, 3, 77, 150} {
		loc := ix.RowLocation(r)
		want = append(want, data[loc.Offset:loc.Offset+loc.Length]...)
		if ix.RowID(r) != fmt.Sprintf("r%d", r) {
			t.Errorf("row %d id %q", r, ix.RowID(r))
		}
	}
	if !bytes.Equal(buf.Bytes(), want) {
		t.Errorf("copied rows differ:\n%s\nwant\n%s", buf.Bytes(), want)
	}
	// Copied a few rows at a time, their records given back between pieces: the same bytes.
	var all []int
	for r := range ix.NumRows() {
		all = append(all, r)
	}
	var whole, pieces bytes.Buffer
	if err := ix.CopyRows(&whole, all); err != nil {
		t.Fatal(err)
	}
	ix.piece, ix.resident = 3, false
	if err := ix.CopyRows(&pieces, all); err != nil || !bytes.Equal(whole.Bytes(), pieces.Bytes()) || whole.Len() < len(data)/2 {
		t.Errorf("copied 3 rows at a time: %v, or the bytes differ from one copy", err)
	}
	// A changed pool is refused, not copied.
	data[ix.RowLocation(3).Offset+10] ^= 1
	os.WriteFile(pool, data, 0o644)
	if err := ix.CopyRows(&buf, []int{3}); !errors.Is(err, ErrSourceChanged) {
		t.Errorf("changed pool: err %v, want ErrSourceChanged", err)
	}
}

func TestOpenDamaged(t *testing.T) {
	pool := testPool(t, 50)
	dir, _ := build(t, pool, Options{})
	p := filepath.Join(dir, postingsFile)
	b, _ := os.ReadFile(p)
	b[len(b)/2] ^= 0xff
	os.WriteFile(p, b, 0o644)
	// The postings are checked as they are read: Open finds nothing, a read of every list does.
	ix, err := Open(dir)
	if err != nil {
		t.Fatalf("open: %v; the damaged postings are found when read", err)
	}
	var failed error
	ix.lex.each(func(term []byte) {
		if _, _, err := ix.Postings(string(term), nil, nil); err != nil && failed == nil {
			failed = err
		}
	})
	ix.Close()
	if !errors.Is(failed, ErrDamaged) {
		t.Errorf("damaged postings, every list read: %v, want ErrDamaged", failed)
	}
	// An index without block sums (built before them) is checked whole at open.
	editMeta(t, dir, func(m map[string]any) {
		for _, f := range m["files"].(map[string]any) {
			delete(f.(map[string]any), "block")
			delete(f.(map[string]any), "block_crc32c")
		}
	})
	if _, err := Open(dir); !errors.Is(err, ErrDamaged) {
		t.Errorf("damaged postings, no block sums: %v, want ErrDamaged", err)
	}
	if _, err := Open(t.TempDir()); !errors.Is(err, ErrNotIndex) {
		t.Errorf("empty folder: %v, want ErrNotIndex", err)
	}
}

// TestCompressedAndStdin checks that gzip, zstd and stdin pools give the same index as the plain
// file, and that kept rows are copied byte for byte from each.
func TestCompressedAndStdin(t *testing.T) {
	pool := testPool(t, 300)
	plain, err := os.ReadFile(pool)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	gz := filepath.Join(dir, "pool.jsonl.gz")
	zs := filepath.Join(dir, "pool.zst.data") // compression is found by magic bytes, not names
	writeCompressed(t, gz, zs, plain)
	refDir, _ := build(t, pool, Options{ID: "id"})
	ref, _ := Open(refDir)
	defer ref.Close()
	rows := []int{0, 5, 6, 150, ref.NumRows() - 1}
	var want bytes.Buffer
	if err := ref.CopyRows(&want, rows); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name, path string
		stdin      bool
	}{{"gzip", gz, false}, {"zstd", zs, false}, {"stdin-gzip", gz, true}} {
		t.Run(tc.name, func(t *testing.T) {
			src := tc.path
			if tc.stdin {
				f, err := os.Open(tc.path)
				if err != nil {
					t.Fatal(err)
				}
				defer f.Close()
				old := os.Stdin
				os.Stdin = f
				defer func() { os.Stdin = old }()
				src = "-"
			}
			d := filepath.Join(t.TempDir(), "idx")
			if _, err := Build(context.Background(), d, []string{src}, Options{ID: "id"}); err != nil {
				t.Fatal(err)
			}
			ix, err := Open(d)
			if err != nil {
				t.Fatal(err)
			}
			defer ix.Close()
			for _, f := range []string{lexiconFile, postingsFile, normsFile, idsFile} {
				a, _ := os.ReadFile(filepath.Join(refDir, f))
				b, _ := os.ReadFile(filepath.Join(d, f))
				if !bytes.Equal(a, b) {
					t.Errorf("%s differs from the plain build", f)
				}
			}
			var got bytes.Buffer
			if err := ix.CopyRows(&got, rows); err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(got.Bytes(), want.Bytes()) {
				t.Errorf("copied rows differ from the plain pool's")
			}
		})
	}
}

// TestManySmallFiles builds from more files than there are batches to go round, which once left the
// reader waiting forever for a batch it had kept itself; the result must equal a one-file build.
func TestManySmallFiles(t *testing.T) {
	pool := testPool(t, 400)
	data, _ := os.ReadFile(pool)
	lines := bytes.SplitAfter(data, []byte("\n"))
	dir := t.TempDir()
	var files []string
	for i := 0; i < len(lines); i += 7 {
		p := filepath.Join(dir, fmt.Sprintf("part-%03d.jsonl", i))
		os.WriteFile(p, bytes.Join(lines[i:min(i+7, len(lines))], nil), 0o644)
		files = append(files, p)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	d := filepath.Join(t.TempDir(), "idx")
	if _, err := Build(ctx, d, files, Options{Workers: 2}); err != nil {
		t.Fatal(err)
	}
	ref, _ := build(t, pool, Options{Workers: 2})
	for _, f := range []string{lexiconFile, postingsFile, normsFile} {
		a, _ := os.ReadFile(filepath.Join(ref, f))
		b, _ := os.ReadFile(filepath.Join(d, f))
		if !bytes.Equal(a, b) {
			t.Errorf("%s differs from the one-file build", f)
		}
	}
}

// TestCopyFromAnotherFolder builds with a relative pool path and copies rows with the working
// folder elsewhere, as a pick run from another folder does.
func TestCopyFromAnotherFolder(t *testing.T) {
	root := t.TempDir()
	data, _ := os.ReadFile(testPool(t, 20))
	os.Mkdir(filepath.Join(root, "pools"), 0o755)
	os.WriteFile(filepath.Join(root, "pools", "p.jsonl"), data, 0o644)
	t.Chdir(root)
	if _, err := Build(context.Background(), "idx", []string{"pools/p.jsonl"}, Options{}); err != nil {
		t.Fatal(err)
	}
	t.Chdir(filepath.Join(root, "pools"))
	ix, err := Open("../idx")
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	if got := ix.Meta().Sources[0]; got.Path != "pools/p.jsonl" || got.Locate != "../pools/p.jsonl" {
		t.Errorf("source %+v", got)
	}
	var buf bytes.Buffer
	if err := ix.CopyRows(&buf, []int{0}); err != nil {
		t.Fatal(err)
	}
	if !bytes.HasPrefix(data, buf.Bytes()) || buf.Len() == 0 {
		t.Errorf("copied %q", buf.Bytes())
	}
}

// TestOpenHugeCounts: meta.json counts that the files cannot hold are refused, not used to size
// memory (found by FuzzOpen, which hung allocating for a lexicon of 10^15 terms).
func TestOpenHugeCounts(t *testing.T) {
	dir, _ := build(t, testPool(t, 10), Options{})
	p := filepath.Join(dir, metaFile)
	b, _ := os.ReadFile(p)
	var m map[string]any
	json.Unmarshal(b, &m)
	for _, field := range []string{"terms", "rows"} {
		old := m[field]
		m[field] = 1e15
		nb, _ := json.Marshal(m)
		os.WriteFile(p, nb, 0o644)
		if _, err := Open(dir); !errors.Is(err, ErrDamaged) {
			t.Errorf("%s = 1e15: %v, want ErrDamaged", field, err)
		}
		m[field] = old
	}
}
