package jsonl

import (
	"errors"
	"slices"
	"strings"
	"testing"
	"unicode/utf8"
)

func mustSpec(t testing.TB, s string) Spec {
	t.Helper()
	sp, err := ParseSpec(s)
	if err != nil {
		t.Fatal(err)
	}
	return sp
}

func TestExtract(t *testing.T) {
	const pc = "prompt,completion"
	tests := []struct {
		name   string
		spec   string
		id     string
		tokens string
		line   string
		parts  []string
		row    Row
		err    error  // nil, or the sentinel wrapped
		msg    string // a piece of the error text
	}{
		{name: "plain", spec: pc, line: `{"prompt":"a","completion":"b"}`, parts: []string{"a", "b"}, row: Row{TextBytes: 2}},
		{name: "spec order not key order", spec: pc, line: `{"completion":"b","prompt":"a"}`, parts: []string{"a", "b"}, row: Row{TextBytes: 2}},
		{name: "empty part kept", spec: "instruction,input,output", line: `{"instruction":"do","input":"","output":"ok"}`, parts: []string{"do", "", "ok"}, row: Row{TextBytes: 4}},
		{name: "escapes", spec: "prompt", line: `{"prompt":"a\nb\t\"q\"\\\/\u00e9\ud83d\ude00"}`, parts: []string{"a\nb\t\"q\"\\/é😀"}, row: Row{TextBytes: 15}},
		{name: "raw utf8", spec: "prompt", line: `{"prompt":"日本"}`, parts: []string{"日本"}, row: Row{TextBytes: 6}},
		{name: "BOM", spec: "prompt", line: "\xef\xbb\xbf{\"prompt\":\"a\"}", parts: []string{"a"}, row: Row{TextBytes: 1}},
		{name: "CRLF", spec: "prompt", line: "{\"prompt\":\"a\"}\r", parts: []string{"a"}, row: Row{TextBytes: 1}},
		{name: "trailing newline", spec: "prompt", line: "{\"prompt\":\"a\"}\r\n", parts: []string{"a"}, row: Row{TextBytes: 1}},
		{name: "white space around", spec: "prompt", line: " \t{\"prompt\" : \"a\" } ", parts: []string{"a"}, row: Row{TextBytes: 1}},
		{name: "messages", spec: "messages[].content", line: `{"messages":[{"role":"user","content":"hi"},{"role":"assistant","content":"yo"}]}`, parts: []string{"hi", "yo"}, row: Row{TextBytes: 4}},
		{name: "messages null content skipped", spec: "messages[].content", line: `{"messages":[{"content":null},{"role":"x"},null,{"content":"yo"}]}`, parts: []string{"yo"}, row: Row{TextBytes: 2}},
		{name: "conversations", spec: "conversations[].value", line: `{"conversations":[{"from":"human","value":"q"},{"from":"gpt","value":"a"}]}`, parts: []string{"q", "a"}, row: Row{TextBytes: 2}},
		{name: "array of strings", spec: "turns[]", line: `{"turns":["x","y",null,"z"]}`, parts: []string{"x", "y", "z"}, row: Row{TextBytes: 3}},
		{name: "nested arrays", spec: "grid[][]", line: `{"grid":[["a","b"],[],["c"]]}`, parts: []string{"a", "b", "c"}, row: Row{TextBytes: 3}},
		{name: "dotted", spec: "a.b.c", line: `{"a":{"b":{"c":"deep"}}}`, parts: []string{"deep"}, row: Row{TextBytes: 4}},
		{name: "first duplicate key wins", spec: "text", line: `{"text":"one","text":"two"}`, parts: []string{"one"}, row: Row{TextBytes: 3}},
		{name: "escaped key", spec: "text", line: `{"t\u0065xt":"k"}`, parts: []string{"k"}, row: Row{TextBytes: 1}},
		{name: "key with dot", spec: `a\.b`, line: `{"a.b":"k","a":{"b":"no"}}`, parts: []string{"k"}, row: Row{TextBytes: 1}},
		{name: "raw control character passed through", spec: "text", line: "{\"text\":\"a\x01b\"}", parts: []string{"a\x01b"}, row: Row{TextBytes: 3}},
		{name: "first alternative", spec: "prompt,completion|instruction,input,response", line: `{"prompt":"a","completion":"b","instruction":"c"}`, parts: []string{"a", "b"}, row: Row{TextBytes: 2}},
		{name: "second alternative", spec: "prompt,completion|instruction,input,response", line: `{"instruction":"c","input":"","response":"d"}`, parts: []string{"c", "", "d"}, row: Row{TextBytes: 2}},
		{name: "alternative after a partial one", spec: "promt,completion|completion", line: `{"prompt":"a","completion":"b"}`, parts: []string{"b"}, row: Row{TextBytes: 1, Missing: []string{"promt"}}},
		{name: "alternative after a wrong type", spec: "text|content", line: `{"text":{"x":1},"content":"c"}`, parts: []string{"c"}, row: Row{TextBytes: 1}},
		{name: "optional field by alternatives", spec: "instruction,input,output|instruction,output", line: `{"instruction":"a","input":null,"output":"b"}`, parts: []string{"a", "b"}, row: Row{TextBytes: 2, Missing: []string{"input"}}},
		{name: "lone surrogate kept as written", spec: "text", line: `{"text":"\ud800x"}`, parts: []string{`\ud800x`}, row: Row{TextBytes: 7}},

		// ids and token counts
		{name: "string id and tokens", spec: "prompt", id: "id", tokens: "n", line: `{"id":"r-1","n":42,"prompt":"a"}`, parts: []string{"a"}, row: Row{ID: []byte("r-1"), HasID: true, Tokens: 42, HasTokens: true, TextBytes: 1}},
		{name: "escaped string id", spec: "prompt", id: "id", line: `{"id":"r\u002f1","prompt":"a"}`, parts: []string{"a"}, row: Row{ID: []byte("r/1"), HasID: true, TextBytes: 1}},
		{name: "number id in source form", spec: "prompt", id: "id", line: `{"id":12.50e1,"prompt":"a"}`, parts: []string{"a"}, row: Row{ID: []byte("12.50e1"), HasID: true, TextBytes: 1}},
		{name: "negative number id", spec: "prompt", id: "id", line: `{"id":-3,"prompt":"a"}`, parts: []string{"a"}, row: Row{ID: []byte("-3"), HasID: true, TextBytes: 1}},
		{name: "big number id", spec: "prompt", id: "id", line: `{"id":123456789012345678901234567890,"prompt":"a"}`, parts: []string{"a"}, row: Row{ID: []byte("123456789012345678901234567890"), HasID: true, TextBytes: 1}},
		{name: "dotted id", spec: "prompt", id: "meta.id", tokens: "meta.stats.tokens", line: `{"meta":{"id":7,"stats":{"tokens":9}},"prompt":"a"}`, parts: []string{"a"}, row: Row{ID: []byte("7"), HasID: true, Tokens: 9, HasTokens: true, TextBytes: 1}},
		{name: "missing id", spec: "prompt", id: "id", tokens: "n", line: `{"prompt":"a"}`, parts: []string{"a"}, row: Row{TextBytes: 1}},
		{name: "null id", spec: "prompt", id: "id", line: `{"id":null,"prompt":"a"}`, parts: []string{"a"}, row: Row{TextBytes: 1}},
		{name: "float tokens", spec: "prompt", tokens: "n", line: `{"n":512.0,"prompt":"a"}`, parts: []string{"a"}, row: Row{Tokens: 512, HasTokens: true, TextBytes: 1}},
		{name: "exponent tokens", spec: "prompt", tokens: "n", line: `{"n":1e3,"prompt":"a"}`, parts: []string{"a"}, row: Row{Tokens: 1000, HasTokens: true, TextBytes: 1}},
		{name: "zero tokens", spec: "prompt", tokens: "n", line: `{"n":0,"prompt":"a"}`, parts: []string{"a"}, row: Row{Tokens: 0, HasTokens: true, TextBytes: 1}},
		{name: "bool id", spec: "prompt", id: "id", line: `{"id":true,"prompt":"a"}`, err: ErrBadID, msg: "bad id: id: a boolean"},
		{name: "object id", spec: "prompt", id: "id", line: `{"id":{},"prompt":"a"}`, err: ErrBadID, msg: "an object"},
		{name: "empty id", spec: "prompt", id: "id", line: `{"id":"","prompt":"a"}`, err: ErrBadID, msg: "empty string"},
		{name: "NaN id", spec: "prompt", id: "id", line: `{"id":NaN,"prompt":"a"}`, err: ErrBadID, msg: "not a JSON number"},
		{name: "sloppy number id", spec: "prompt", id: "id", line: `{"id":01,"prompt":"a"}`, err: ErrBadID, msg: "not a JSON number"},
		{name: "id below a string", spec: "prompt", id: "meta.id", line: `{"meta":"x","prompt":"a"}`, err: ErrBadID, msg: "meta is a string"},
		{name: "string tokens", spec: "prompt", tokens: "n", line: `{"n":"5","prompt":"a"}`, err: ErrBadTokens, msg: "a string"},
		{name: "negative tokens", spec: "prompt", tokens: "n", line: `{"n":-1,"prompt":"a"}`, err: ErrBadTokens, msg: "-1"},
		{name: "fractional tokens", spec: "prompt", tokens: "n", line: `{"n":1.5,"prompt":"a"}`, err: ErrBadTokens, msg: "1.5"},
		{name: "huge tokens", spec: "prompt", tokens: "n", line: `{"n":1e400,"prompt":"a"}`, err: ErrBadTokens},
		{name: "int64 overflow tokens", spec: "prompt", tokens: "n", line: `{"n":9223372036854775808,"prompt":"a"}`, err: ErrBadTokens},

		// rows to quarantine
		{name: "blank", spec: "prompt", line: "", err: ErrEmpty},
		{name: "spaces", spec: "prompt", line: " \t ", err: ErrEmpty},
		{name: "CR only", spec: "prompt", line: "\r", err: ErrEmpty},
		{name: "BOM only", spec: "prompt", line: "\xef\xbb\xbf\r", err: ErrEmpty},
		{name: "truncated", spec: "prompt", line: `{"prompt":"a"`, err: ErrNotJSON, msg: "malformed JSON: cannot parse JSON"},
		{name: "bare key", spec: "prompt", line: `{prompt:"a"}`, err: ErrNotJSON},
		{name: "trailing garbage", spec: "prompt", line: `{"prompt":"a"} x`, err: ErrNotJSON, msg: "unexpected tail"},
		{name: "two objects", spec: "prompt", line: `{"prompt":"a"}{"prompt":"b"}`, err: ErrNotJSON},
		{name: "NUL after", spec: "prompt", line: "{\"prompt\":\"a\"}\x00", err: ErrNotJSON},
		{name: "NUL before", spec: "prompt", line: "\x00{\"prompt\":\"a\"}", err: ErrNotJSON},
		{name: "NUL between", spec: "prompt", line: "{\"prompt\":\x00\"a\"}", err: ErrNotJSON},
		{name: "BOM twice", spec: "prompt", line: "\xef\xbb\xbf\xef\xbb\xbf{\"prompt\":\"a\"}", err: ErrNotJSON},
		{name: "too deep", spec: "prompt", line: `{"prompt":` + strings.Repeat("[", 400) + strings.Repeat("]", 400) + "}", err: ErrNotJSON, msg: "malformed JSON: nested 401 levels deep, past the parser's limit of 300"},
		{name: "too deep, brackets in strings left out", spec: pc, line: `{"prompt":"[[[{{{","x":` + strings.Repeat(`{"a":`, 5000) + "1" + strings.Repeat("}", 5000) + "}", err: ErrNotJSON, msg: "nested 5001 levels deep"},
		{name: "deep error told briefly", spec: pc, line: `{"a":[[[[{"b":[1,2,}]]]]]}`, err: ErrNotJSON, msg: `malformed JSON: cannot parse JSON: cannot parse number: unexpected char: "}"; unparsed tail: "}]]]]]}"`},
		{name: "array row", spec: "prompt", line: `["a"]`, err: ErrNotObject, msg: "found an array"},
		{name: "string row", spec: "prompt", line: `"a"`, err: ErrNotObject, msg: "found a string"},
		{name: "number row", spec: "prompt", line: `12`, err: ErrNotObject, msg: "found a number"},
		{name: "null row", spec: "prompt", line: `null`, err: ErrNotObject, msg: "found null"},
		{name: "no text", spec: pc, line: `{"x":"a"}`, err: ErrNoText, msg: `no text: prompt, completion: missing; the row has "x"`},
		// A row lacking one of the fields of its spec is bad, not indexed by halves.
		{name: "missing second path", spec: pc, line: `{"prompt":"a"}`, err: ErrNoText, msg: `no text: completion: missing (of prompt,completion); the row has "prompt"`},
		{name: "null second path", spec: pc, line: `{"prompt":"a","completion":null}`, err: ErrNoText, msg: `completion: null (of prompt,completion)`},
		{name: "dotted missing middle", spec: "a.b.c,t", line: `{"a":{},"t":"x"}`, err: ErrNoText, msg: `a.b.c: no string there (of a.b.c,t); the row has "a", "t"`},
		{name: "misspelt path", spec: "promt,completion", line: `{"prompt":"a","completion":"b"}`, err: ErrNoText, msg: `promt: missing (of promt,completion); the row has "prompt", "completion"`},
		{name: "many fields listed briefly", spec: "text", line: `{"a":1,"b":2,"c":3,"d":4,"e":5,"f":6,"g":7,"h":8,"i":9,"` + strings.Repeat("k", 100) + `":0}`, err: ErrNoText,
			msg: `"g", "h" and 2 more`},
		{name: "no alternative", spec: "prompt,completion|instruction,output", line: `{"body":"a"}`, err: ErrNoText, msg: `no text: none of prompt,completion|instruction,output; the row has "body"`},
		{name: "nearest alternative named", spec: "prompt,completion|instruction,input,output", line: `{"instruction":"a","output":"b"}`, err: ErrNoText, msg: `no text: input: missing (of instruction,input,output)`},
		{name: "type error before a missing field", spec: "text|prompt,completion", line: `{"text":3,"prompt":"a"}`, err: ErrBadText, msg: "text: a number"},
		{name: "empty object", spec: pc, line: `{}`, err: ErrNoText},
		{name: "all null", spec: pc, line: `{"prompt":null,"completion":null}`, err: ErrNoText},
		{name: "empty array", spec: "turns[]", line: `{"turns":[]}`, err: ErrNoText},
		{name: "number text", spec: "prompt", line: `{"prompt":5}`, err: ErrBadText, msg: "text is not a string: prompt: a number, want a string"},
		{name: "bool text", spec: pc, line: `{"prompt":"a","completion":false}`, err: ErrBadText, msg: "completion: a boolean"},
		{name: "object text", spec: "prompt", line: `{"prompt":{"x":"a"}}`, err: ErrBadText, msg: "an object, want a string"},
		{name: "array text", spec: "prompt", line: `{"prompt":["a"]}`, err: ErrBadText, msg: "an array, want a string"},
		{name: "number in messages", spec: "messages[].content", line: `{"messages":[{"content":"a"},{"content":3}]}`, err: ErrBadText, msg: "messages[1].content: a number"},
		{name: "messages not array", spec: "messages[].content", line: `{"messages":"a"}`, err: ErrBadText, msg: "messages: a string, want an array"},
		{name: "message not object", spec: "messages[].content", line: `{"messages":["a"]}`, err: ErrBadText, msg: "messages[0]: a string, want an object"},
		{name: "inner not array", spec: "grid[][]", line: `{"grid":[["a"],"b"]}`, err: ErrBadText, msg: "grid[1]: a string, want an array"},
		{name: "middle not object", spec: "a.b.c", line: `{"a":{"b":1}}`, err: ErrBadText, msg: "a.b: a number, want an object"},
		{name: "bad UTF-8", spec: "prompt", line: "{\"prompt\":\"ok\xffno\"}", err: ErrBadUTF8, msg: "text part 1, byte 2"},
		{name: "bad UTF-8 in second part", spec: pc, line: "{\"prompt\":\"ok\",\"completion\":\"\xc3\"}", err: ErrBadUTF8, msg: "text part 2, byte 0"},
		{name: "empty text", spec: pc, line: `{"prompt":"","completion":""}`, err: ErrEmptyText},
		{name: "white-space text", spec: pc, line: `{"prompt":" \n","completion":"\t"}`, err: ErrEmptyText},
		{name: "unicode space text", spec: "prompt", line: `{"prompt":"\u00a0\u3000"}`, err: ErrEmptyText},
		{name: "empty text and null", spec: "messages[].content", line: `{"messages":[{"content":""},{"content":null}]}`, err: ErrEmptyText},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			e, err := NewExtractor(mustSpec(t, tt.spec), tt.id, tt.tokens)
			if err != nil {
				t.Fatal(err)
			}
			var parts []string
			row, err := e.Extract([]byte(tt.line), func(p []byte) { parts = append(parts, string(p)) })
			if tt.err != nil {
				if !errors.Is(err, tt.err) {
					t.Fatalf("Extract(%q) error = %v, want %v", tt.line, err, tt.err)
				}
				var re *RowError
				if !errors.As(err, &re) {
					t.Fatalf("error %v is not a *RowError", err)
				}
				if !strings.Contains(err.Error(), tt.msg) {
					t.Errorf("error %q, want it to contain %q", err, tt.msg)
				}
				if parts != nil {
					t.Errorf("fn called with %q on an error", parts)
				}
				return
			}
			if err != nil {
				t.Fatalf("Extract(%q): %v", tt.line, err)
			}
			if strings.Join(parts, "|") != strings.Join(tt.parts, "|") || len(parts) != len(tt.parts) {
				t.Errorf("parts = %q, want %q", parts, tt.parts)
			}
			if string(row.ID) != string(tt.row.ID) || row.HasID != tt.row.HasID || row.Tokens != tt.row.Tokens ||
				row.HasTokens != tt.row.HasTokens || row.TextBytes != tt.row.TextBytes || !slices.Equal(row.Missing, tt.row.Missing) {
				t.Errorf("row = %+v (ID %q), want %+v (ID %q)", row, row.ID, tt.row, tt.row.ID)
			}
		})
	}
}

func TestExtractKeepsIDOnTextError(t *testing.T) {
	e, err := NewExtractor(mustSpec(t, "text"), "id", "n")
	if err != nil {
		t.Fatal(err)
	}
	row, err := e.Extract([]byte(`{"id":"k","n":3,"text":5}`), nil)
	if !errors.Is(err, ErrBadText) {
		t.Fatalf("err = %v, want ErrBadText", err)
	}
	if string(row.ID) != "k" || !row.HasID || row.Tokens != 3 || !row.HasTokens {
		t.Errorf("row = %+v, want id k and 3 tokens", row)
	}
}

func TestExtractDoesNotChangeLine(t *testing.T) {
	e, err := NewExtractor(mustSpec(t, "text"), "", "")
	if err != nil {
		t.Fatal(err)
	}
	line := []byte(`{"text":"a\nb\u00e9"}`)
	orig := string(line)
	if _, err := e.Extract(line, nil); err != nil {
		t.Fatal(err)
	}
	if string(line) != orig {
		t.Errorf("line changed to %q; rows must stay byte-identical", line)
	}
}

func TestNewExtractorErrors(t *testing.T) {
	sp := mustSpec(t, "text")
	for _, tt := range []struct {
		spec       Spec
		id, tokens string
	}{
		{Spec{}, "", ""},
		{sp, "a..b", ""},
		{sp, "", "a,b"},
		{sp, "ids[]", ""},
	} {
		if _, err := NewExtractor(tt.spec, tt.id, tt.tokens); !errors.Is(err, ErrBadSpec) {
			t.Errorf("NewExtractor(%q, %q, %q) = %v, want ErrBadSpec", tt.spec, tt.id, tt.tokens, err)
		}
	}
}

func TestIsJSONNumber(t *testing.T) {
	// The grammar of RFC 8259 section 6.
	for _, s := range []string{"0", "-0", "7", "-12", "1.5", "0.25", "1e3", "1E+3", "2.5e-07", "123456789012345678901234567890"} {
		if !IsNumber([]byte(s)) {
			t.Errorf("IsNumber(%q) = false", s)
		}
	}
	for _, s := range []string{"", "-", "+1", "01", "1.", ".5", "1e", "1e+", "NaN", "inf", "1.2.3", "0x10", "--1"} {
		if IsNumber([]byte(s)) {
			t.Errorf("IsNumber(%q) = true", s)
		}
	}
}

func FuzzExtract(f *testing.F) {
	for _, s := range []string{
		`{"prompt":"a","completion":"b","id":1,"n":2}`,
		`{"messages":[{"content":"x"},{"content":null}]}`,
		`{"turns":["a","\ud83d\ude00"]}`,
		"\xef\xbb\xbf{\"text\":\"a\"}\r",
		`{"text":"\u0000\ud800"}`,
		`{"a":{"b":{"c":"d"}}}`,
		`[1,2]`,
		"{\"text\":\"\xff\"}",
	} {
		f.Add([]byte(s))
	}
	for _, line := range badInputLines(f) {
		f.Add(line)
	}
	specs := []string{"prompt,completion", "messages[].content", "turns[]", "text,a.b.c", "grid[][]", "prompt,completion|instruction,input,response|text"}
	var es []*Extractor
	for _, s := range specs {
		e, err := NewExtractor(mustSpec(f, s), "id", "n")
		if err != nil {
			f.Fatal(err)
		}
		es = append(es, e)
	}
	f.Fuzz(func(t *testing.T, line []byte) {
		orig := string(line)
		for _, e := range es {
			total := 0
			row, err := e.Extract(line, func(p []byte) {
				if !utf8.Valid(p) {
					t.Fatalf("%s: part %q is not valid UTF-8", e.spec, p)
				}
				total += len(p)
			})
			if err != nil {
				var re *RowError
				if !errors.As(err, &re) {
					t.Fatalf("%s: error %v is not a *RowError", e.spec, err)
				}
				continue
			}
			if total != row.TextBytes {
				t.Fatalf("%s: TextBytes %d, parts hold %d", e.spec, row.TextBytes, total)
			}
			if row.HasTokens && row.Tokens < 0 {
				t.Fatalf("negative tokens %d", row.Tokens)
			}
		}
		if string(line) != orig {
			t.Fatalf("Extract changed its input")
		}
	})
}
