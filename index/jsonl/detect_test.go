package jsonl

import (
	"encoding/hex"
	"encoding/json"
	"errors"
	"os"
	"strings"
	"testing"
)

func lines(s ...string) [][]byte {
	out := make([][]byte, len(s))
	for i, l := range s {
		out[i] = []byte(l)
	}
	return out
}

func TestDetect(t *testing.T) {
	tests := []struct {
		name  string
		lines [][]byte
		want  string
	}{
		{"prompt completion", lines(`{"prompt":"a","completion":"b"}`), "prompt,completion"},
		{"alpaca output", lines(`{"instruction":"a","input":"","output":"b"}`), "instruction,input,output"},
		{"alpaca response", lines(`{"instruction":"a","input":"","response":"b"}`), "instruction,input,response"},
		{"messages", lines(`{"messages":[{"role":"user","content":"hi"}]}`), "messages[].content"},
		{"conversations", lines(`{"conversations":[{"from":"human","value":"hi"}]}`), "conversations[].value"},
		{"question answer", lines(`{"question":"q","answer":"a"}`), "question,answer"},
		{"text", lines(`{"text":"t","meta":{}}`), "text"},
		{"content", lines(`{"content":"c"}`), "content"},
		{"order decides", lines(`{"prompt":"a","completion":"b","text":"t"}`), "prompt,completion"},
		{"second path must be present", lines(`{"prompt":"a","text":"t"}`), "text"},
		{"first path must be a string", lines(`{"prompt":3,"completion":"b","content":"c"}`), "content"},
		{"every row must fit", lines(`{"text":"a","question":"q","answer":"x"}`, `{"text":"b"}`), "text"},
		{"null completion is missing", lines(`{"prompt":"a","completion":null,"text":"t"}`), "text"},
		{"blank and bad rows left out", lines("", "  \r", "not json", `[1]`, "\xef\xbb\xbf{\"text\":\"a\"}\r"), "text"},
	}
	for _, tt := range tests {
		sp, err := Detect(tt.lines)
		if err != nil {
			t.Errorf("%s: %v", tt.name, err)
			continue
		}
		if sp.String() != tt.want {
			t.Errorf("%s: Detect = %q, want %q", tt.name, sp, tt.want)
		}
	}
}

func TestDetectErrors(t *testing.T) {
	tests := []struct {
		name  string
		lines [][]byte
		want  []string
	}{
		{"nothing", nil, []string{"none of the 0 sample lines"}},
		{"no objects", lines("", "x", "[1]"), []string{"none of the 3 sample lines"}},
		{"unknown keys", lines(`{"body":"a","title":"b"}`, `{"body":"c","z":1}`),
			[]string{`in 2 sample rows`, `tried "prompt,completion", "instruction,input,output",`, `"content"; top-level keys seen: "body", "title", "z"`}},
		{"mixed shapes", lines(`{"text":"a"}`, `{"content":"b"}`), []string{`keys seen: "content", "text"`}},
	}
	for _, tt := range tests {
		_, err := Detect(tt.lines)
		if !errors.Is(err, ErrNoShape) {
			t.Errorf("%s: err = %v, want ErrNoShape", tt.name, err)
			continue
		}
		for _, w := range tt.want {
			if !strings.Contains(err.Error(), w) {
				t.Errorf("%s: err %q lacks %q", tt.name, err, w)
			}
		}
	}
}

// TestDetectRealRows detects the shape of real rows from the shared data
// when it is present.
func TestDetectRealRows(t *testing.T) {
	data, err := os.ReadFile("testdata/rows.jsonl")
	if err != nil {
		t.Fatal(err)
	}
	var ls [][]byte
	s := NewScanner(strings.NewReader(string(data)), 0)
	for s.Scan() {
		ls = append(ls, append([]byte(nil), s.Bytes()...))
	}
	sp, err := Detect(ls)
	if err != nil || sp.String() != "prompt,completion" {
		t.Errorf("Detect = %q, %v; want prompt,completion", sp, err)
	}
}

// TestExtractMatchesPythonJSON compares unescaped text parts with those that
// CPython's json module decoded (testdata/gen_escapes.py).
func TestExtractMatchesPythonJSON(t *testing.T) {
	in, err := os.ReadFile("testdata/escapes.jsonl")
	if err != nil {
		t.Fatal(err)
	}
	want, err := os.ReadFile("testdata/escapes.want")
	if err != nil {
		t.Fatal(err)
	}
	wantLines := strings.Split(strings.TrimSuffix(string(want), "\n"), "\n")
	e, err := NewExtractor(mustSpec(t, "text,turns[]|text"), "", "")
	if err != nil {
		t.Fatal(err)
	}
	s := NewScanner(strings.NewReader(string(in)), 0)
	n := 0
	for s.Scan() {
		if n >= len(wantLines) {
			t.Fatalf("more rows than in escapes.want")
		}
		var hexParts []string
		if err := json.Unmarshal([]byte(wantLines[n]), &hexParts); err != nil {
			t.Fatal(err)
		}
		n++
		var got []string
		_, err := e.Extract(s.Bytes(), func(p []byte) { got = append(got, hex.EncodeToString(p)) })
		if err != nil && !errors.Is(err, ErrEmptyText) {
			t.Errorf("line %d: %v", s.Line(), err)
			continue
		}
		if err != nil { // fn is not called; Python's parts must all be blank
			got = make([]string, len(hexParts))
		}
		if strings.Join(got, ",") != strings.Join(hexParts, ",") {
			t.Errorf("line %d %q:\n got  %v\n want %v", s.Line(), s.Bytes(), got, hexParts)
		}
	}
	if n != len(wantLines) {
		t.Errorf("read %d rows, escapes.want has %d", n, len(wantLines))
	}
}

// TestDetectToleratesBadRows: a few damaged rows in the sample must not hide the shape of the rest.
func TestDetectToleratesBadRows(t *testing.T) {
	lines := [][]byte{
		[]byte(`{"prompt":"a","completion":"b"}`),
		[]byte(`{"prompt":null,"completion":""}`),
		[]byte(`{bad json`),
		[]byte(`{"prompt":"c","completion":"d"}`),
	}
	sp, err := Detect(lines)
	if err != nil || sp.String() != "prompt,completion" {
		t.Errorf("Detect = %v, %v; want prompt,completion", sp, err)
	}
	// Half or fewer is not a shape.
	if sp, err := Detect(lines[:2]); err == nil {
		t.Errorf("Detect of one good row in two = %v, want an error", sp)
	}
}

func TestDetectJSONArray(t *testing.T) {
	_, err := Detect([][]byte{[]byte("["), []byte(`  {"instruction": "x",`), []byte("  }"), []byte("]")})
	if !errors.Is(err, ErrNoShape) || !strings.Contains(err.Error(), "JSON array") {
		t.Errorf("Detect of a JSON array: %v", err)
	}
}

func TestSuggest(t *testing.T) {
	for _, tt := range []struct {
		line, want string
	}{
		{`{"instruction":"a","input":"","response":"b","n":1}`, "instruction,input,response"},
		{`{"title":"a","n":1,"body":"b","title":"c"}`, "title,body"},
		{`{"a.b":"x","":"y"}`, `a\.b`},
		{"\xef\xbb\xbf{\"text\":\"t\"}", "text"},
		{`{"n":1}`, ""},
		{`[1]`, ""},
		{`{bad`, ""},
	} {
		sp, ok := Suggest([]byte(tt.line))
		if ok != (tt.want != "") || ok && sp.String() != tt.want {
			t.Errorf("Suggest(%s) = %q, %v; want %q", tt.line, sp, ok, tt.want)
		}
		if ok {
			if _, err := ParseSpec(sp.String()); err != nil {
				t.Errorf("Suggest(%s) = %q, which does not parse: %v", tt.line, sp, err)
			}
		}
	}
}
