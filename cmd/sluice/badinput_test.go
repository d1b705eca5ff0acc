package main

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"testing"

	"sluice/index"
)

// The bad-input suite: every kind of damage a scraped pool carries, each a fixture in
// testdata/badinput with its exact outcome here. A bad row is quarantined with its place and raw
// bytes, counted, and the build goes on (with --strict it stops there, exit 1); a bad file or flag
// stops the command, exit 1 or 2, before any output exists.

var badDir = filepath.Join("..", "..", "testdata", "badinput")

// wantReject is one expected line of a quarantine; every word of why must be in its reason.
type wantReject struct {
	line, offset, length int64
	why                  []string
	raw                  string
	escaped              bool
}

type poolCase struct {
	name  string
	files []string // fixtures, given to sluice index in this order
	flags []string // nil: --text text --id id
	code  int
	msg   []string // words stderr must hold
	// With exit 0: the quarantine of files[0], the counts in meta.json and the summary, and, when
	// set, the ids scores.jsonl must list in this order.
	rejects              []wantReject
	read, indexed, blank int64
	dupIDs               int64
	ids                  []string
	targetText           string // --target-text for the pick, when the pool's spec does not fit target.jsonl
}

var poolCases = []poolCase{
	{name: "malformed JSON", files: []string{"malformed.jsonl"}, read: 3, indexed: 2,
		rejects: []wantReject{{2, 61, 36, []string{"malformed JSON", "missing closing"}, `{"id":"b1","text":"unclosed string}`, false}}},
	{name: "truncated last line", files: []string{"truncated-last-line.jsonl"}, read: 3, indexed: 2,
		rejects: []wantReject{{3, 125, 34, []string{"malformed JSON", "last line and has no newline", "cut short"}, `{"id":"b1","text":"the ferry is la`, false}}},
	{name: "valid JSON, not an object", files: []string{"not-object.jsonl"}, read: 6, indexed: 2,
		rejects: []wantReject{
			{2, 61, 17, []string{"not a JSON object: found an array"}, `["ferry","dock"]`, false},
			{3, 78, 13, []string{"not a JSON object: found a string"}, `"ferry dock"`, false},
			{4, 91, 3, []string{"not a JSON object: found a number"}, `42`, false},
			{5, 94, 5, []string{"not a JSON object: found null"}, `null`, false},
		}},
	{name: "text field missing", files: []string{"text-missing.jsonl"}, read: 3, indexed: 2,
		rejects: []wantReject{{2, 61, 33, []string{`no text: text: missing; the row has "id", "title"`}, `{"id":"b1","title":"ferry dock"}`, false}}},
	{name: "text field null", files: []string{"text-null.jsonl"}, read: 3, indexed: 2,
		rejects: []wantReject{{2, 61, 24, []string{`no text: text: null; the row has "id", "text"`}, `{"id":"b1","text":null}`, false}}},
	{name: "text field a number", files: []string{"text-number.jsonl"}, read: 3, indexed: 2,
		rejects: []wantReject{{2, 61, 24, []string{"text is not a string: text: a number, want a string"}, `{"id":"b1","text":12.5}`, false}}},
	{name: "text field empty", files: []string{"text-empty.jsonl"}, read: 3, indexed: 2,
		rejects: []wantReject{{2, 61, 22, []string{"empty text: only empty or white-space strings at text"}, `{"id":"b1","text":""}`, false}}},
	{name: "text field white space only", files: []string{"text-whitespace.jsonl"}, read: 3, indexed: 2,
		rejects: []wantReject{{2, 61, 35, []string{"empty text: only empty or white-space strings at text"}, `{"id":"b1","text":" \t\n \u00a0 "}`, false}}},
	{name: "array path matching nothing", files: []string{"array-no-match.jsonl"}, flags: []string{"--text", "messages[].content", "--id", "id"}, targetText: "text", read: 4, indexed: 2,
		rejects: []wantReject{
			{2, 79, 26, []string{"no text: messages[].content: no string there"}, `{"id":"b1","messages":[]}`, false},
			{3, 105, 41, []string{"no text: messages[].content: no string there"}, `{"id":"b2","messages":[{"role":"user"}]}`, false},
		}},
	{name: "invalid UTF-8 in the text", files: []string{"invalid-utf8.jsonl"}, read: 3, indexed: 2,
		rejects: []wantReject{{2, 61, 35, []string{"text is not valid UTF-8: text part 1, byte 6"}, `{\"id\":\"b1\",\"text\":\"ferry \xff\xfe dock\"}`, true}}},
	// A byte-order mark is no part of the row: kept.jsonl holds the row without it.
	{name: "UTF-8 byte-order mark", files: []string{"bom.jsonl"}, read: 2, indexed: 2},
	{name: "CRLF line ends", files: []string{"crlf.jsonl"}, read: 2, indexed: 2},
	// NUL bytes outside a string make the row malformed; inside a string the parser lets raw control
	// bytes through, and so does sluice: the text is still the row's text.
	{name: "NUL bytes", files: []string{"nul.jsonl"}, read: 5, indexed: 3,
		rejects: []wantReject{
			{2, 61, 5, []string{"malformed JSON"}, "\x00\x00\x00\x00", false},
			{3, 66, 28, []string{"malformed JSON"}, "{\"id\":\"b2\",\x00\"text\":\"ferry\"}", false},
		}},
	{name: "blank lines", files: []string{"blank-lines.jsonl"}, read: 2, indexed: 2, blank: 5},
	{name: "two files, one with a bad row", files: []string{"malformed.jsonl", "unsafe-ids.jsonl"}, read: 9, indexed: 8,
		rejects: []wantReject{{2, 61, 36, []string{"malformed JSON"}, `{"id":"b1","text":"unclosed string}`, false}}},
	// Repeated ids are allowed and reported: the rows are good, and concatenated pools often number
	// their rows each from zero. 7 and "7" print the same, so they count as the same id.
	{name: "duplicate ids", files: []string{"duplicate-ids.jsonl"}, read: 6, indexed: 6, dupIDs: 3,
		msg: []string{`3 rows repeat an earlier row's id (kept; scores.jsonl is in input order), the first "a" at duplicate-ids.jsonl:1 and duplicate-ids.jsonl:3`},
		ids: []string{"a", "b", "a", "7", "7", "a"}},
	{name: "ids unsafe as file names", files: []string{"unsafe-ids.jsonl"}, read: 6, indexed: 6,
		ids: []string{"../../etc/passwd", "a/b", "\x00", "/abs/path", "..", "x\ny \"q\" \\ \u2028"}},

	{name: "truncated gzip stream", files: []string{"truncated.jsonl.gz"}, code: 1,
		msg: []string{"read truncated.jsonl.gz:", "gzip stream ends early, the file is cut short"}},
	{name: "truncated zstd frame", files: []string{"truncated.jsonl.zst"}, code: 1,
		msg: []string{"read truncated.jsonl.zst:", "zstd stream ends early, the file is cut short"}},
	{name: "corrupt zstd frame", files: []string{"corrupt.jsonl.zst"}, code: 1,
		msg: []string{"read corrupt.jsonl.zst:", "damaged zstd stream"}},
	{name: "a later file damaged", files: []string{"pool.jsonl", "truncated.jsonl.gz"}, code: 1,
		msg: []string{"read truncated.jsonl.gz:", "gzip stream ends early"}},
	{name: "binary file", files: []string{"binary.bin"}, code: 1,
		msg: []string{"read binary.bin: not JSONL: none of its first 5 non-blank lines is a JSON object; it looks like binary data"}},
	{name: "JSON array file", files: []string{"array.json"}, code: 1,
		msg: []string{"read array.json: not JSONL: the first line opens a JSON array", "jq -c '.[]'"}},
	{name: "CSV file", files: []string{"table.csv"}, code: 1,
		msg: []string{"read table.csv: not JSONL: none of its first 3 non-blank lines is a JSON object; it looks like CSV"}},
	{name: "CSV file, shape detected", files: []string{"table.csv"}, flags: []string{}, code: 1,
		msg: []string{"read table.csv: not JSONL"}},
	{name: "empty pool", files: []string{"empty.jsonl"}, code: 1,
		msg: []string{"no rows in empty.jsonl, only blank lines or nothing: the pool is empty"}},
	{name: "empty pool, shape detected", files: []string{"empty.jsonl"}, flags: []string{}, code: 1,
		msg: []string{"no rows in empty.jsonl", "the pool is empty"}},
	{name: "no row usable", files: []string{"pool.jsonl"}, flags: []string{"--text", "body"}, code: 1,
		msg: []string{"no row could be indexed: read 3 = indexed 0 + quarantined 3; the first, pool.jsonl:1: no text: body: missing; the row has \"id\", \"text\""}},
	{name: "bad --text", files: []string{"pool.jsonl"}, flags: []string{"--text", "messages["}, code: 2, msg: []string{"--text: bad field spec"}},
	{name: "bad --id", files: []string{"pool.jsonl"}, flags: []string{"--text", "text", "--id", "a[]"}, code: 2, msg: []string{"--id: id field: bad field spec"}},
	{name: "bad --max-row-bytes", files: []string{"pool.jsonl"}, flags: []string{"--max-row-bytes", "-1"}, code: 2, msg: []string{"--max-row-bytes"}},
	{name: "missing pool file", files: []string{"pool.jsonl", "nope.jsonl"}, code: 1, msg: []string{"read nope.jsonl: no such file or directory"}},
}

// copyFixtures copies the named fixtures into dir; names of no fixture are left missing.
func copyFixtures(t *testing.T, dir string, names ...string) {
	t.Helper()
	for _, n := range names {
		b, err := os.ReadFile(filepath.Join(badDir, n))
		if errors.Is(err, fs.ErrNotExist) {
			continue
		}
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, n), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// assertNothingWritten checks that out does not exist and that no working folder was left beside it.
func assertNothingWritten(t *testing.T, out string) {
	t.Helper()
	if _, err := os.Lstat(out); !os.IsNotExist(err) {
		t.Errorf("%s exists after a failure (%v)", out, err)
	}
	entries, _ := os.ReadDir(filepath.Dir(out))
	for _, e := range entries {
		if strings.HasPrefix(e.Name(), "."+filepath.Base(out)+".tmp-") {
			t.Errorf("working folder %s left behind", e.Name())
		}
	}
}

func hasAll(t *testing.T, what, s string, words []string) {
	t.Helper()
	for _, w := range words {
		if !strings.Contains(s, w) {
			t.Errorf("%s lacks %q:\n%s", what, w, s)
		}
	}
}

func readRejects(t *testing.T, path string) []index.Reject {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var out []index.Reject
	for _, l := range bytes.SplitAfter(b, []byte("\n")) {
		if len(l) == 0 {
			continue
		}
		var r index.Reject
		if err := json.Unmarshal(l, &r); err != nil {
			t.Fatalf("%s: %v: %s", path, err, l)
		}
		out = append(out, r)
	}
	return out
}

func readMetaFile(t *testing.T, dir string) index.Meta {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(dir, "meta.json"))
	if err != nil {
		t.Fatal(err)
	}
	var m index.Meta
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	return m
}

func TestBadPoolInput(t *testing.T) {
	for _, tc := range poolCases {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			copyFixtures(t, dir, append(slices.Clone(tc.files), "target.jsonl")...)
			t.Chdir(dir)
			flags := tc.flags
			if flags == nil {
				flags = []string{"--text", "text", "--id", "id"}
			}
			args := append(append([]string{"index", "--out", "idx"}, flags...), tc.files...)
			code, stdout, stderr := sluice(t, args...)
			if code != tc.code {
				t.Fatalf("exit %d, want %d; stderr:\n%s", code, tc.code, stderr)
			}
			hasAll(t, "output", stdout+stderr, tc.msg)
			if code != 0 {
				if stdout != "" {
					t.Errorf("stdout %q after a failure", stdout)
				}
				assertNothingWritten(t, filepath.Join(dir, "idx"))
				return
			}
			checkIndexed(t, tc, stdout)
			if len(tc.rejects) > 0 {
				checkStrict(t, tc, flags)
			}
			checkPicked(t, tc)
		})
	}
}

// checkIndexed checks the quarantine and the reconciliation of a build that went on.
func checkIndexed(t *testing.T, tc poolCase, stderr string) {
	t.Helper()
	m := readMetaFile(t, "idx")
	q := int64(len(tc.rejects))
	if m.RowsRead != tc.read || m.Rows != tc.indexed || m.RowsRejected != q || m.BlankLines != tc.blank || m.DuplicateIDs != tc.dupIDs {
		t.Errorf("meta.json: read %d indexed %d quarantined %d blank %d duplicate ids %d; want %d %d %d %d %d",
			m.RowsRead, m.Rows, m.RowsRejected, m.BlankLines, m.DuplicateIDs, tc.read, tc.indexed, q, tc.blank, tc.dupIDs)
	}
	if m.RowsRead != m.Rows+m.RowsRejected {
		t.Errorf("meta.json: read %d != indexed %d + quarantined %d", m.RowsRead, m.Rows, m.RowsRejected)
	}
	hasAll(t, "summary", stderr, []string{fmt.Sprintf("rows          read %d = indexed %d + quarantined %d (blank lines skipped: %d)", tc.read, tc.indexed, q, tc.blank)})
	got := readRejects(t, filepath.Join("idx", "rejected.jsonl"))
	if len(got) != len(tc.rejects) {
		t.Fatalf("quarantine holds %d rows, want %d: %+v", len(got), len(tc.rejects), got)
	}
	src, _ := os.ReadFile(tc.files[0])
	for i, w := range tc.rejects {
		g := got[i]
		if g.File != tc.files[0] || g.Line != w.line || g.Offset != w.offset || g.Length != w.length || g.Raw != w.raw || g.RawEscaped != w.escaped {
			t.Errorf("reject %d: got %+v\nwant file %s line %d offset %d length %d raw %q escaped %v", i, g, tc.files[0], w.line, w.offset, w.length, w.raw, w.escaped)
		}
		hasAll(t, fmt.Sprintf("reject %d reason", i), g.Reason, w.why)
		// The raw bytes read back to the row as it stands in the file, newline aside.
		raw := g.Raw
		if g.RawEscaped {
			var err error
			if raw, err = strconv.Unquote(`"` + g.Raw + `"`); err != nil {
				t.Errorf("reject %d: escaped raw does not unquote: %v", i, err)
			}
		}
		row := strings.TrimSuffix(string(src[g.Offset:g.Offset+g.Length]), "\n")
		if raw != row {
			t.Errorf("reject %d: raw reads back as %q, the row is %q", i, raw, row)
		}
	}
}

// checkStrict rebuilds with --strict: the first bad row stops the build, naming file:line and
// cause, and nothing is written.
func checkStrict(t *testing.T, tc poolCase, flags []string) {
	t.Helper()
	args := append(append([]string{"index", "--strict", "--out", "idx-strict"}, flags...), tc.files...)
	code, _, stderr := sluice(t, args...)
	first := tc.rejects[0]
	if code != 1 {
		t.Errorf("--strict: exit %d, want 1: %s", code, stderr)
	}
	hasAll(t, "--strict error", stderr, append([]string{fmt.Sprintf("sluice index: %s:%d: ", tc.files[0], first.line)}, first.why...))
	assertNothingWritten(t, "idx-strict")
}

// checkPicked picks with a target every good fixture row matches and a budget that keeps them all:
// scores.jsonl lists every indexed row once, kept.jsonl is the indexed rows byte for byte, and the
// ledger and summary carry the reconciliation.
func checkPicked(t *testing.T, tc poolCase) {
	t.Helper()
	args := []string{"pick", "--index", "idx", "--target", "target.jsonl", "--budget", "1e15", "--train-params", "1M", "--out", "run"}
	if tc.targetText != "" {
		args = append(args, "--target-text", tc.targetText, "--other-target-text")
	}
	code, stdout, stderr := sluice(t, args...)
	if code != 0 {
		t.Fatalf("pick: exit %d: %s", code, stderr)
	}
	recon := fmt.Sprintf("rows: read %d = indexed %d + quarantined %d; target rows: read 1 = used 1 + quarantined 0", tc.read, tc.indexed, len(tc.rejects))
	hasAll(t, "pick summary", stdout, []string{strings.Replace(recon, "rows: ", "rows       ", 1)})
	var led struct{ Notes []string }
	b, _ := os.ReadFile(filepath.Join("run", "ledger.json"))
	if err := json.Unmarshal(b, &led); err != nil {
		t.Fatal(err)
	}
	if !slices.Contains(led.Notes, recon) {
		t.Errorf("ledger notes %q lack %q", led.Notes, recon)
	}
	scores := readScores(t, filepath.Join("run", "scores.jsonl"))
	if int64(len(scores)) != tc.indexed {
		t.Fatalf("scores.jsonl has %d lines for %d indexed rows", len(scores), tc.indexed)
	}
	ranks := map[int]bool{}
	var ids []string
	for _, s := range scores {
		ranks[s.Rank] = true
		ids = append(ids, s.ID)
		if !s.Kept {
			t.Errorf("row %q not kept (%s)", s.ID, s.Reason)
		}
	}
	if len(ranks) != len(scores) {
		t.Errorf("ranks are not a permutation: %d distinct of %d", len(ranks), len(scores))
	}
	if tc.ids != nil && !slices.Equal(ids, tc.ids) {
		t.Errorf("ids in scores.jsonl %q, want %q", ids, tc.ids)
	}
	// Every fixture row that is neither blank nor quarantined is indexed and kept, in input order.
	var want strings.Builder
	for _, f := range tc.files {
		src, _ := os.ReadFile(f)
		bad := map[int]bool{}
		if f == tc.files[0] {
			for _, r := range tc.rejects {
				bad[int(r.line)] = true
			}
		}
		for i, l := range strings.SplitAfter(string(src), "\n") {
			if l == "" || bad[i+1] || strings.TrimSpace(l) == "" {
				continue
			}
			if !strings.HasSuffix(l, "\n") {
				l += "\n"
			}
			want.WriteString(strings.TrimPrefix(l, "\ufeff"))
		}
	}
	kept, _ := os.ReadFile(filepath.Join("run", "kept.jsonl"))
	if string(kept) != want.String() {
		t.Errorf("kept.jsonl is not the indexed rows byte for byte:\n%q\nwant\n%q", kept, want.String())
	}
	// Ids are never used as file names: the work folder holds only what the commands write.
	allowed := map[string]bool{"idx": true, "run": true, "target.jsonl": true}
	for _, f := range tc.files {
		allowed[f] = true
	}
	for _, f := range []string{"meta.json", "lexicon", "lexicon.keys", "postings", "rows", "norms", "ids", "rejected.jsonl", "dups", "sketches"} {
		allowed[filepath.Join("idx", f)] = true
	}
	for _, f := range []string{"kept.jsonl", "scores.jsonl", "ledger.json", "rejected.jsonl", "manifest.json"} {
		allowed[filepath.Join("run", f)] = true
	}
	filepath.WalkDir(".", func(p string, d fs.DirEntry, err error) error {
		if p != "." && !allowed[p] {
			t.Errorf("unexpected file %q in the work folder", p)
		}
		return nil
	})
}

// TestBadPickInput runs picks against a good index with bad targets, bad flags and bad indexes.
func TestBadPickInput(t *testing.T) {
	dir := t.TempDir()
	copyFixtures(t, dir, "pool.jsonl", "target.jsonl", "target-empty.jsonl", "target-no-match.jsonl", "binary.bin", "text-null.jsonl", "truncated.jsonl.gz")
	t.Chdir(dir)
	if code, _, stderr := sluice(t, "index", "--quiet", "--text", "text", "--id", "id", "--out", "idx", "pool.jsonl"); code != 0 {
		t.Fatal(stderr)
	}
	// Damaged copies of the index.
	damage := func(name string, edit func(dir string)) {
		if err := os.CopyFS(name, os.DirFS("idx")); err != nil {
			t.Fatal(err)
		}
		edit(name)
	}
	damage("idx-flipped", func(d string) {
		p := filepath.Join(d, "postings")
		b, _ := os.ReadFile(p)
		b[len(b)/2] ^= 0x40
		os.WriteFile(p, b, 0o644)
	})
	damage("idx-version", func(d string) {
		p := filepath.Join(d, "meta.json")
		b, _ := os.ReadFile(p)
		os.WriteFile(p, bytes.Replace(b, []byte(`"version": 1,`), []byte(`"version": 99,`), 1), 0o644)
	})
	damage("idx-cut", func(d string) { os.Truncate(filepath.Join(d, "rows"), 10) })

	base := []string{"--index", "idx", "--target", "target.jsonl", "--budget", "1e15", "--train-params", "1M"}
	with := func(flag, value string) []string {
		a := slices.Clone(base)
		for i := 0; i < len(a); i += 2 {
			if a[i] == flag {
				a[i+1] = value
				return a
			}
		}
		return append(a, flag, value)
	}
	gpu := func(hours, peak, mfu string) []string {
		return []string{"--index", "idx", "--target", "target.jsonl", "--train-params", "1M", "--gpu-hours", hours, "--gpu-flops", peak, "--mfu", mfu}
	}
	cases := []struct {
		name string
		args []string
		code int
		msg  []string
	}{
		{"empty target set", with("--target", "target-empty.jsonl"), 1, []string{"read target target-empty.jsonl: the target set is empty", "nothing was written"}},
		{"target not JSONL", with("--target", "binary.bin"), 1, []string{"read target binary.bin: not JSONL", "binary data"}},
		{"target truncated gzip", with("--target", "truncated.jsonl.gz"), 1, []string{"read target truncated.jsonl.gz:", "gzip stream ends early"}},
		{"target missing", with("--target", "nope.jsonl"), 1, []string{"read target nope.jsonl: no such file or directory"}},
		{"budget below the selection cost", with("--budget", "10"), 1, []string{"the selection cost alone", "exceeds the budget of 1.000e+01 FLOPs", "nothing was written"}},
		{"damaged postings", with("--index", "idx-flipped"), 1, []string{"index idx-flipped: postings bytes 0 to", "index is damaged"}},
		{"cut rows file", with("--index", "idx-cut"), 1, []string{"open index idx-cut: rows is 10 bytes", "index is damaged"}},
		{"other format version", with("--index", "idx-version"), 1, []string{"open index idx-version: version 99, this sluice reads versions 1 to 2 (rebuild the index)"}},
		{"not an index", with("--index", "."), 1, []string{"not a sluice index"}},
		{"other analyzer", with("--analyzer", "plain"), 1, []string{"index idx was built with the sklearn analyzer, not plain as --analyzer asks"}},
		{"unknown analyzer", with("--analyzer", "klingon"), 2, []string{`--analyzer "klingon": give english or plain`}},
		{"bad --target-text", with("--target-text", "a["), 2, []string{"--target-text: bad field spec"}},
	}
	for _, bad := range []struct{ flag, value, words string }{
		{"--budget", "NaN", "--budget: parse FLOPs \"NaN\""},
		{"--budget", "Inf", "--budget: parse FLOPs \"Inf\""},
		{"--budget", "-1", "--budget: parse FLOPs \"-1\": negative"},
		{"--budget", "0", "--budget: parse FLOPs \"0\": must be greater than zero"},
		{"--train-params", "NaN", "--train-params: parse count \"NaN\""},
		{"--train-params", "Inf", "--train-params: parse count \"Inf\""},
		{"--train-params", "-1", "--train-params: parse count \"-1\": negative"},
		{"--train-params", "0", "--train-params: parse count \"0\": must be greater than zero"},
		{"--epochs", "NaN", "--epochs NaN: must be a finite number above 0"},
		{"--epochs", "Inf", "--epochs +Inf: must be a finite number above 0"},
		{"--epochs", "-1", "--epochs -1: must be a finite number above 0"},
		{"--epochs", "0", "--epochs 0: must be a finite number above 0"},
		{"--k1", "NaN", "--k1 NaN: give 0 to 1000"},
		{"--k1", "1e308", "--k1 1e+308: give 0 to 1000"},
		{"--k1", "Inf", "--k1 +Inf: give 0 to 1000"},
		{"--k1", "-1", "--k1 -1: give 0 to 1000"},
		{"--b", "NaN", "--b NaN: must be between 0 and 1"},
		{"--b", "-1", "--b -1: must be between 0 and 1"},
		{"--b", "Inf", "--b +Inf: must be between 0 and 1"},
		{"--min-score", "NaN", "--min-score \"NaN\": give a finite score"},
		{"--max-rows", "-1", "--max-rows -1: must be 0 or more"},
	} {
		cases = append(cases, struct {
			name string
			args []string
			code int
			msg  []string
		}{bad.flag + " " + bad.value, with(bad.flag, bad.value), 2, []string{bad.words}})
	}
	for _, g := range []struct{ hours, peak, mfu, words string }{
		{"NaN", "1T", "0.5", "--gpu-hours NaN: must be a finite number above 0"},
		{"Inf", "1T", "0.5", "--gpu-hours +Inf: must be a finite number above 0"},
		{"-1", "1T", "0.5", "--gpu-hours -1: must be a finite number above 0"},
		{"0", "1T", "0.5", "--gpu-hours 0: must be a finite number above 0"},
		{"1", "NaN", "0.5", "--gpu-flops: parse FLOPs \"NaN\""},
		{"1", "-1", "0.5", "--gpu-flops: parse FLOPs \"-1\": negative"},
		{"1", "0", "0.5", "--gpu-flops: parse FLOPs \"0\": must be greater than zero"},
		{"1", "1T", "NaN", "--mfu NaN: must be a fraction above 0 and at most 1"},
		{"1", "1T", "Inf", "--mfu +Inf: must be a fraction above 0 and at most 1"},
		{"1", "1T", "-1", "--mfu -1: must be a fraction above 0 and at most 1"},
		{"1", "1T", "0", "--mfu 0: must be a fraction above 0 and at most 1"},
		{"1", "1T", "1.5", "--mfu 1.5: must be a fraction above 0 and at most 1"},
	} {
		cases = append(cases, struct {
			name string
			args []string
			code int
			msg  []string
		}{"gpu " + g.hours + " " + g.peak + " " + g.mfu, gpu(g.hours, g.peak, g.mfu), 2, []string{g.words}})
	}
	for i, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			out := fmt.Sprintf("run%d", i)
			code, stdout, stderr := sluice(t, append([]string{"pick"}, append(tc.args, "--out", out)...)...)
			if code != tc.code {
				t.Fatalf("exit %d, want %d: %s", code, tc.code, stderr)
			}
			hasAll(t, "stderr", stderr, tc.msg)
			if stdout != "" {
				t.Errorf("stdout %q", stdout)
			}
			assertNothingWritten(t, out)
		})
	}

	t.Run("target sharing no term", func(t *testing.T) {
		code, stdout, stderr := sluice(t, append(append([]string{"pick"}, with("--target", "target-no-match.jsonl")...), "--out", "run-nomatch")...)
		if code != 0 {
			t.Fatalf("exit %d: %s", code, stderr)
		}
		hasAll(t, "summary", stdout, []string{"picked 0 of 3 rows", "warning    no pool row shares a term with the target rows",
			"rows       read 3 = indexed 3 + quarantined 0; target rows: read 1 = used 1 + quarantined 0"})
		scores := readScores(t, filepath.Join("run-nomatch", "scores.jsonl"))
		if len(scores) != 3 {
			t.Fatalf("%d score lines for 3 rows", len(scores))
		}
		for _, s := range scores {
			if s.Kept || s.Reason != "no-match" || s.Score != 0 {
				t.Errorf("row %s: kept %v reason %q score %v", s.ID, s.Kept, s.Reason, s.Score)
			}
		}
		if kept, _ := os.ReadFile(filepath.Join("run-nomatch", "kept.jsonl")); len(kept) != 0 {
			t.Errorf("kept.jsonl holds %q", kept)
		}
	})
	t.Run("target with a bad row", func(t *testing.T) {
		code, stdout, stderr := sluice(t, append(append([]string{"pick"}, with("--target", "text-null.jsonl")...), "--out", "run-trej")...)
		if code != 0 {
			t.Fatalf("exit %d: %s", code, stderr)
		}
		hasAll(t, "summary", stdout, []string{"target rows: read 3 = used 2 + quarantined 1", "quarantine run-trej/rejected.jsonl (target rows)"})
		rej := readRejects(t, filepath.Join("run-trej", "rejected.jsonl"))
		want := index.Reject{File: "text-null.jsonl", Line: 2, Offset: 61, Length: 24, Reason: `no text: text: null; the row has "id", "text"`, Raw: `{"id":"b1","text":null}`}
		if len(rej) != 1 || rej[0] != want {
			t.Errorf("target quarantine %+v, want %+v", rej, want)
		}
	})
	t.Run("same analyzer asked for", func(t *testing.T) {
		if code, _, stderr := sluice(t, append(append([]string{"pick"}, with("--analyzer", "sklearn")...), "--out", "run-sklearn")...); code != 0 {
			t.Errorf("exit %d: %s", code, stderr)
		}
	})
}

// TestHugeRow builds over a pool with one 100 MB line, written here and not committed. With the
// default --max-row-bytes (64 MiB) it is quarantined; with --max-row-bytes 1MiB it is skipped in
// bounded memory, never loaded whole.
func TestHugeRow(t *testing.T) {
	dir := t.TempDir()
	pool := filepath.Join(dir, "huge.jsonl")
	f, err := os.Create(pool)
	if err != nil {
		t.Fatal(err)
	}
	w := bufio.NewWriterSize(f, 1<<20)
	w.WriteString(`{"id":"g1","text":"the ferry leaves the north dock at nine"}` + "\n")
	w.WriteString(`{"id":"huge","text":"`)
	chunk := []byte(strings.Repeat("ferry ", 1<<14))
	const lineBytes = 100 << 20
	for n := 0; n < lineBytes; n += len(chunk) {
		w.Write(chunk)
	}
	w.WriteString("\"}\n")
	w.WriteString(`{"id":"g2","text":"tide tables for the harbour ferry crossing"}` + "\n")
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	f.Close()
	hugeLen := int64(len(`{"id":"huge","text":"`) + (lineBytes+len(chunk)-1)/len(chunk)*len(chunk) + len("\"}\n"))
	t.Chdir(dir)

	for _, tc := range []struct {
		name     string
		flags    []string
		maxAlloc uint64
	}{
		// The scanner grows its buffer by doubling up to the limit before it knows the line is too
		// long, so about twice the limit is allocated, less than the line but more than 1MiB's case.
		// The rest is the build's own (write buffers, near duplicates' band files): about 33 MiB.
		{"default limit", nil, 4 * 64 << 20},
		{"1MiB limit", []string{"--max-row-bytes", "1MiB"}, 40 << 20},
	} {
		t.Run(tc.name, func(t *testing.T) {
			out := "idx-" + strings.ReplaceAll(tc.name, " ", "-")
			var before, after runtime.MemStats
			runtime.GC()
			runtime.ReadMemStats(&before)
			code, stdout, stderr := sluice(t, append(append([]string{"index", "--text", "text", "--id", "id", "--out", out}, tc.flags...), "huge.jsonl")...)
			runtime.ReadMemStats(&after)
			if code != 0 {
				t.Fatalf("exit %d: %s", code, stderr)
			}
			if alloc := after.TotalAlloc - before.TotalAlloc; alloc > tc.maxAlloc {
				t.Errorf("allocated %d MiB (%d B) for a %d MiB line, want at most %d MiB", alloc>>20, alloc, lineBytes>>20, tc.maxAlloc>>20)
			}
			hasAll(t, "summary", stdout, []string{"read 3 = indexed 2 + quarantined 1"})
			rej := readRejects(t, filepath.Join(out, "rejected.jsonl"))
			want := index.Reject{File: "huge.jsonl", Line: 2, Offset: 61, Length: hugeLen,
				Reason: fmt.Sprintf("row longer than --max-row-bytes (%d bytes)", hugeLen)}
			if len(rej) != 1 || rej[0] != want {
				t.Errorf("quarantine %+v, want %+v", rej, want)
			}
		})
	}
	t.Run("strict", func(t *testing.T) {
		code, _, stderr := sluice(t, "index", "--strict", "--max-row-bytes", "1MiB", "--text", "text", "--out", "idx-strict", "huge.jsonl")
		if code != 1 || !strings.Contains(stderr, "huge.jsonl:2: row longer than --max-row-bytes") {
			t.Errorf("exit %d: %s", code, stderr)
		}
		assertNothingWritten(t, "idx-strict")
	})
}
