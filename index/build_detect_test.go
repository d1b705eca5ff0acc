package index

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"syscall"
	"testing"

	"github.com/klauspost/compress/gzip"
)

// writeRows writes n rows made by row(i) as a pool file named name in dir.
func writeRows(t *testing.T, dir, name string, n int, row func(i int) string) string {
	t.Helper()
	var b strings.Builder
	for i := range n {
		b.WriteString(row(i))
		b.WriteByte('\n')
	}
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func pcRow(i int) string { return fmt.Sprintf(`{"prompt":"ferry timetable %d","completion":"yes"}`, i) }
func iirRow(i int) string {
	return fmt.Sprintf(`{"instruction":"write code %d","input":"","response":"print(1)"}`, i)
}
func msgRow(i int) string { return fmt.Sprintf(`{"messages":[{"content":"tide %d"}]}`, i) }

// TestDetectPerFile: without --text each file's shape is detected from its own first rows, and the
// index's spec holds them all as alternatives, in the order of the known shapes. Before, the first
// rows of the pool decided for every file, and files whose fields were named otherwise were
// quarantined whole.
func TestDetectPerFile(t *testing.T) {
	for _, tc := range []struct {
		name     string
		files    []func(int) string
		spec     string
		version  int
		detected []string
	}{
		{"one shape", []func(int) string{pcRow, pcRow}, "prompt,completion", 1, []string{"prompt,completion", "prompt,completion"}},
		{"two shapes", []func(int) string{pcRow, iirRow}, "prompt,completion|instruction,input,response", 2, []string{"prompt,completion", "instruction,input,response"}},
		{"shape order, not file order", []func(int) string{msgRow, iirRow, pcRow}, "prompt,completion|instruction,input,response|messages[].content", 2,
			[]string{"messages[].content", "instruction,input,response", "prompt,completion"}},
		{"a file of blank lines", []func(int) string{pcRow, func(int) string { return "" }}, "prompt,completion", 1, []string{"prompt,completion", ""}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			var paths []string
			for i, f := range tc.files {
				paths = append(paths, writeRows(t, dir, fmt.Sprintf("f%d.jsonl", i), 30, f))
			}
			st, err := Build(context.Background(), filepath.Join(dir, "idx"), paths, Options{})
			if err != nil {
				t.Fatal(err)
			}
			var detected []string
			for _, s := range st.Sources {
				detected = append(detected, s.Detected)
			}
			blank := int64(0)
			if tc.name == "a file of blank lines" {
				blank = 30
			}
			if st.Text != tc.spec || st.Version != tc.version || !slices.Equal(detected, tc.detected) || st.RowsRejected != 0 || st.Rows != int64(30*len(paths))-blank {
				t.Errorf("spec %q version %d detected %q, %d rows indexed, %d quarantined; want %q %d %q, all indexed",
					st.Text, st.Version, detected, st.Rows, st.RowsRejected, tc.spec, tc.version, tc.detected)
			}
			ix, err := Open(filepath.Join(dir, "idx"))
			if err != nil {
				t.Fatal(err)
			}
			ix.Close()
		})
	}
}

// TestDetectStreamAfterFile: a stream whose shape differs from the file before it is detected from
// its first rows, which are held and read again, so every row is indexed and copied byte for byte.
func TestDetectStreamAfterFile(t *testing.T) {
	dir := t.TempDir()
	a := writeRows(t, dir, "a.jsonl", 50, pcRow)
	var plain bytes.Buffer
	for i := range 500 {
		plain.WriteString(iirRow(i) + "\n")
	}
	var gz bytes.Buffer
	zw := gzip.NewWriter(&gz)
	zw.Write(plain.Bytes())
	zw.Close()
	fifo := filepath.Join(dir, "b.fifo")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skipf("cannot make a FIFO here: %v", err)
	}
	t.Cleanup(func() {
		if f, err := os.OpenFile(fifo, os.O_RDONLY|syscall.O_NONBLOCK, 0); err == nil {
			f.Close()
		}
	})
	go func() {
		f, err := os.OpenFile(fifo, os.O_WRONLY, 0)
		if err != nil {
			return
		}
		f.Write(gz.Bytes())
		f.Close()
	}()
	idx := filepath.Join(dir, "idx")
	st, err := Build(context.Background(), idx, []string{a, fifo}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if st.Rows != 550 || st.Text != "prompt,completion|instruction,input,response" {
		t.Fatalf("indexed %d rows with %q, want 550 with both shapes", st.Rows, st.Text)
	}
	ix, err := Open(idx)
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	var got bytes.Buffer
	if err := ix.CopyRows(&got, []int{49, 50, 549}); err != nil {
		t.Fatal(err)
	}
	want := pcRow(49) + "\n" + iirRow(0) + "\n" + iirRow(499) + "\n"
	if got.String() != want {
		t.Errorf("copied %q, want %q", got.String(), want)
	}
}

// TestDetectErrors: a file no known shape fits stops the build, naming it, as does a file that is
// not JSONL; a pool of blank lines is empty.
func TestDetectErrors(t *testing.T) {
	for _, tc := range []struct {
		name  string
		files []func(int) string
		want  []string
		is    error
	}{
		{"unknown shape", []func(int) string{pcRow, func(i int) string { return fmt.Sprintf(`{"body":"b%d"}`, i) }},
			[]string{"f1.jsonl: no --text given and no known row shape fits", `keys seen: "body"`}, nil},
		{"not JSONL", []func(int) string{pcRow, func(i int) string { return fmt.Sprintf("a,b,%d", i) }}, []string{"read ", "f1.jsonl: not JSONL"}, nil},
		{"blank", []func(int) string{func(int) string { return " " }}, []string{"only blank lines or nothing"}, ErrEmptyPool},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			var paths []string
			for i, f := range tc.files {
				paths = append(paths, writeRows(t, dir, fmt.Sprintf("f%d.jsonl", i), 30, f))
			}
			_, err := Build(context.Background(), filepath.Join(dir, "idx"), paths, Options{})
			if err == nil {
				t.Fatal("built")
			}
			for _, w := range tc.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q lacks %q", err, w)
				}
			}
			if tc.is != nil && !errors.Is(err, tc.is) {
				t.Errorf("error %v is not %v", err, tc.is)
			}
			if _, err := os.Stat(filepath.Join(dir, "idx")); !os.IsNotExist(err) {
				t.Errorf("an index was left: %v", err)
			}
		})
	}
}

// TestWarnings: a file that loses more than a few per cent of its rows is named with its first bad
// row, cut short, and a --text that would read it; a text field most rows of a file lack is named,
// with the share and the fields those rows have. Before, a misspelt field indexed the other fields
// without a word, and a quarantined file got no example and no spec that would read the pool whole.
func TestWarnings(t *testing.T) {
	long := strings.Repeat("word ", 100)
	for _, tc := range []struct {
		name  string
		text  string
		files []func(int) string
		want  []string // lines, or pieces of them, in order
		not   []string
	}{
		{"a file of other fields", "prompt,completion", []func(int) string{pcRow, iirRow}, []string{
			`warning: ` + "f1.jsonl: 30 of its 30 rows (100%) were quarantined; the first, line 1: no text: prompt, completion: missing; the row has \"instruction\", \"input\", \"response\"",
			`  the row: {"instruction":"write code 0","input":"","response":"print(1)"}`,
			`  to index rows like it too: --text 'prompt,completion|instruction,input,response'`,
		}, []string{"f0.jsonl", "is missing from"}},
		{"example cut short", "prompt,completion", []func(int) string{pcRow, func(i int) string { return `{"text":"` + long + `"}` }}, []string{
			`  the row: {"text":"word word`, ` … (511 bytes in all)`,
			`  to index rows like it too: --text 'prompt,completion|text'`,
		}, nil},
		{"a few bad rows", "prompt,completion", []func(int) string{func(i int) string {
			if i == 7 {
				return `{"prompt":"p"}`
			}
			return pcRow(i)
		}}, nil, []string{"warning"}},
		{"misspelt field, the rest indexed", "promt,completion|completion", []func(int) string{pcRow}, []string{
			`warning: ` + "f0.jsonl: the text field promt is missing from 30 of its 30 rows (100%), the first at line 1; those rows have \"completion\", \"prompt\"",
		}, []string{"quarantined"}},
		{"misspelt field, rows quarantined", "promt,completion|text", []func(int) string{pcRow, func(i int) string { return fmt.Sprintf(`{"text":"t%d"}`, i) }}, []string{
			"f0.jsonl: 30 of its 30 rows (100%) were quarantined; the first, line 1: no text: promt: missing (of promt,completion); the row has \"prompt\", \"completion\"",
		}, []string{"is missing from"}},
		{"an optional field read by alternatives", "instruction,input,response|instruction,response", []func(int) string{func(i int) string {
			if i%4 == 0 {
				return iirRow(i)
			}
			return fmt.Sprintf(`{"instruction":"write code %d","response":"print(1)"}`, i)
		}}, []string{"f0.jsonl: the text field input is missing from 22 of its 30 rows (73%), the first at line 2; those rows have \"instruction\", \"response\""}, []string{"quarantined"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			var paths []string
			for i, f := range tc.files {
				paths = append(paths, writeRows(t, dir, fmt.Sprintf("f%d.jsonl", i), 30, f))
			}
			st, err := Build(context.Background(), filepath.Join(dir, "idx"), paths, Options{Text: tc.text})
			if err != nil {
				t.Fatal(err)
			}
			var b strings.Builder
			st.WriteWarnings(&b)
			got := strings.ReplaceAll(b.String(), dir+string(filepath.Separator), "")
			rest := got
			for _, w := range tc.want {
				i := strings.Index(rest, w)
				if i < 0 {
					t.Errorf("warnings lack %q (in order):\n%s", w, got)
					break
				}
				rest = rest[i+len(w):]
			}
			for _, n := range tc.not {
				if strings.Contains(got, n) {
					t.Errorf("warnings hold %q:\n%s", n, got)
				}
			}
		})
	}
}

func TestV1Spec(t *testing.T) {
	for in, want := range map[string]string{
		"prompt,completion": "prompt,completion",
		"a|b,c":             `a\|b,c`,
		`x\,y|z`:            `x\,y\|z`,
		`a\\|b`:             `a\\\|b`,
	} {
		if got := v1Spec(in); got != want {
			t.Errorf("v1Spec(%q) = %q, want %q", in, got, want)
		}
	}
}

// TestReasonsBounded: a bad row's reason stays short, whatever the row: before, a row nested a few
// thousand deep was reasoned in 14 KB, one "cannot parse" per level. The row's file and line stand
// beside the reason, in the quarantine and in a --strict error.
func TestReasonsBounded(t *testing.T) {
	for _, tc := range []struct {
		name, row string
		want      string
	}{
		{"deep arrays", `{"text":` + strings.Repeat("[", 5000) + strings.Repeat("]", 5000) + "}", "nested 5001 levels deep, past the parser's limit of 300"},
		{"deep objects", `{"text":` + strings.Repeat(`{"a":`, 3000) + "1" + strings.Repeat("}", 3000) + "}", "nested 3001 levels deep"},
		{"deep, cut off", "[" + strings.Repeat("[", 100000), "nested 100001 levels deep"},
		{"long bad id", `{"id":0` + strings.Repeat("1", 20000) + `,"text":"t"}`, "bad id: id: \"01111"},
		{"long key", `{"` + strings.Repeat("k", 5000) + `":"v"}`, `no text: text: missing; the row has "kkkk`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			pool := writeRows(t, dir, "pool.jsonl", 3, func(i int) string {
				if i == 1 {
					return tc.row
				}
				return fmt.Sprintf(`{"id":%d,"text":"ferry %d"}`, i, i)
			})
			st, err := Build(context.Background(), filepath.Join(dir, "idx"), []string{pool}, Options{Text: "text", ID: "id"})
			if err != nil {
				t.Fatal(err)
			}
			r := st.Quarantined[0].First
			if r == nil || r.File != pool || r.Line != 2 || len(r.Reason) > MaxReasonBytes || !strings.Contains(r.Reason, tc.want) {
				t.Fatalf("quarantined %+v; want line 2, a reason of at most %d bytes holding %q", r, MaxReasonBytes, tc.want)
			}
			_, err = Build(context.Background(), filepath.Join(dir, "idx2"), []string{pool}, Options{Text: "text", ID: "id", Strict: true})
			var re *RowError
			if !errors.As(err, &re) || !strings.HasPrefix(err.Error(), pool+":2: ") || len(re.Reason) > MaxReasonBytes {
				t.Errorf("--strict: %.400v", err)
			}
		})
	}
	if got := cutReason("a€€", 6); got != "a …" {
		t.Errorf("cutReason = %q", got)
	}
}

// TestBOMNotPartOfRow: a byte-order mark at the start of a line is left out of the row's span, so
// a copied row is the line without it and the rest byte for byte; before, the first row of a file
// that began with one carried it into the middle of kept.jsonl.
func TestBOMNotPartOfRow(t *testing.T) {
	const bom = "\xef\xbb\xbf"
	for _, tc := range []struct {
		name, data string
		want       string // the rows copied
		blank      int64
		reject     int64 // offset of the one row quarantined, or -1
	}{
		{"first line", bom + `{"text":"ferry"}` + "\n" + `{"text":"tide"}` + "\n", `{"text":"ferry"}` + "\n" + `{"text":"tide"}` + "\n", 0, -1},
		{"CRLF kept", bom + "{\"text\":\"ferry\"}\r\n", "{\"text\":\"ferry\"}\r\n", 0, -1},
		{"a later file's, concatenated", `{"text":"ferry"}` + "\n" + bom + `{"text":"tide"}`, `{"text":"ferry"}` + "\n" + `{"text":"tide"}` + "\n", 0, -1},
		{"only a BOM", bom + "\n" + `{"text":"ferry"}` + "\n", `{"text":"ferry"}` + "\n", 1, -1},
		{"bad row", bom + `{"text":` + "\n" + `{"text":"ferry"}` + "\n", `{"text":"ferry"}` + "\n", 0, 3},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			pool := filepath.Join(dir, "pool.jsonl")
			os.WriteFile(pool, []byte(tc.data), 0o644)
			idx := filepath.Join(dir, "idx")
			st, err := Build(context.Background(), idx, []string{pool}, Options{Text: "text"})
			if err != nil {
				t.Fatal(err)
			}
			if st.BlankLines != tc.blank {
				t.Errorf("%d blank lines, want %d", st.BlankLines, tc.blank)
			}
			if r := st.Quarantined; tc.reject >= 0 && (len(r) == 0 || r[0].First.Offset != tc.reject || strings.HasPrefix(r[0].First.Raw, bom)) {
				t.Errorf("quarantine %+v, want the row at offset %d without its BOM", r, tc.reject)
			}
			ix, err := Open(idx)
			if err != nil {
				t.Fatal(err)
			}
			defer ix.Close()
			var got bytes.Buffer
			rows := make([]int, ix.NumRows())
			for i := range rows {
				rows[i] = i
			}
			if err := ix.CopyRows(&got, rows); err != nil {
				t.Fatal(err)
			}
			if got.String() != tc.want {
				t.Errorf("copied %q, want %q", got.String(), tc.want)
			}
		})
	}
}
