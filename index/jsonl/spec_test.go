package jsonl

import (
	"errors"
	"strings"
	"testing"
)

func TestParseSpec(t *testing.T) {
	tests := []struct {
		in    string
		canon string
		paths []path
	}{
		{"prompt,completion", "prompt,completion", []path{{{key: "prompt"}}, {{key: "completion"}}}},
		{"instruction,input,output", "instruction,input,output", []path{{{key: "instruction"}}, {{key: "input"}}, {{key: "output"}}}},
		{"messages[].content", "messages[].content", []path{{{key: "messages", arrays: 1}, {key: "content"}}}},
		{"conversations[].value", "conversations[].value", []path{{{key: "conversations", arrays: 1}, {key: "value"}}}},
		{"a.b.c", "a.b.c", []path{{{key: "a"}, {key: "b"}, {key: "c"}}}},
		{"turns[]", "turns[]", []path{{{key: "turns", arrays: 1}}}},
		{"grid[][].cell", "grid[][].cell", []path{{{key: "grid", arrays: 2}, {key: "cell"}}}},
		{" prompt , completion ", "prompt,completion", []path{{{key: "prompt"}}, {{key: "completion"}}}},
		{"turns[] ,x", "turns[],x", []path{{{key: "turns", arrays: 1}}, {{key: "x"}}}},
		{"input text", "input text", []path{{{key: "input text"}}}},
		{"a .b", "a .b", []path{{{key: "a "}, {key: "b"}}}},
		{`a\.b`, `a\.b`, []path{{{key: "a.b"}}}},
		{`x\,y,\[z\]`, `x\,y,\[z\]`, []path{{{key: "x,y"}}, {{key: "[z]"}}}},
		{`back\\slash`, `back\\slash`, []path{{{key: `back\slash`}}}},
		{`\ lead`, `\ lead`, []path{{{key: " lead"}}}},
		{`trail\ `, `trail\ `, []path{{{key: "trail "}}}},
		{`\q`, `q`, []path{{{key: "q"}}}},
		{"é.ключ", "é.ключ", []path{{{key: "é"}, {key: "ключ"}}}},
	}
	for _, tt := range tests {
		sp, err := ParseSpec(tt.in)
		if err != nil {
			t.Errorf("ParseSpec(%q): %v", tt.in, err)
			continue
		}
		if got := sp.String(); got != tt.canon {
			t.Errorf("ParseSpec(%q).String() = %q, want %q", tt.in, got, tt.canon)
		}
		if !equalPaths(sp.paths, tt.paths) {
			t.Errorf("ParseSpec(%q) = %#v, want %#v", tt.in, sp.paths, tt.paths)
		}
	}
}

func equalPaths(a, b []path) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if len(a[i]) != len(b[i]) {
			return false
		}
		for j := range a[i] {
			if a[i][j] != b[i][j] {
				return false
			}
		}
	}
	return true
}

func TestParseSpecErrors(t *testing.T) {
	tests := []struct {
		in   string
		want string // a piece of the message, including the position
	}{
		{"", "at byte 0: empty path"},
		{"   ", "at byte 3: empty path"},
		{"a,", "at byte 2: empty path"},
		{"a,,b", "at byte 2: empty path"},
		{",a", "at byte 0: empty path"},
		{"a..b", "at byte 2: empty key"},
		{".a", "at byte 0: empty key"},
		{"a.", "at byte 2: empty key"},
		{"[]", "at byte 0: empty key"},
		{"a.[]", "at byte 2: empty key"},
		{"a[", "at byte 1: want"},
		{"a[0]", "at byte 1: want"},
		{"a]", "at byte 1: unexpected ']'"},
		{"a[]b", "at byte 3: unexpected 'b'"},
		{"a[] b", "at byte 4: unexpected 'b'"},
		{`a\`, "at byte 1: backslash at end"},
		{"a,b,a", "at byte 4: path \"a\" repeats path 1"},
		{"a, a ", "at byte 3: path \"a\" repeats path 1"},
	}
	for _, tt := range tests {
		_, err := ParseSpec(tt.in)
		if err == nil {
			t.Errorf("ParseSpec(%q) succeeded, want error", tt.in)
			continue
		}
		if !errors.Is(err, ErrBadSpec) {
			t.Errorf("ParseSpec(%q) = %v, does not wrap ErrBadSpec", tt.in, err)
		}
		msg := err.Error()
		if !strings.Contains(msg, tt.want) || !strings.Contains(msg, `"`+strings.ReplaceAll(tt.in, `\`, `\\`)+`"`) {
			t.Errorf("ParseSpec(%q) error %q, want it to quote the spec and contain %q", tt.in, msg, tt.want)
		}
	}
}

func TestShapes(t *testing.T) {
	shapes := Shapes()
	if len(shapes) != len(shapeSpecs) {
		t.Fatalf("Shapes() has %d specs, want %d: a shape constant does not parse", len(shapes), len(shapeSpecs))
	}
	for i, sh := range shapes {
		if sh.String() != shapeSpecs[i] {
			t.Errorf("shape %d = %q, want %q", i, sh, shapeSpecs[i])
		}
	}
	// Callers may keep and change the result; the next call must not see it.
	shapes[0].paths[0][0].key = "changed"
	if Shapes()[0].String() != shapeSpecs[0] {
		t.Error("Shapes shares memory between calls")
	}
}

func FuzzParseSpec(f *testing.F) {
	for _, s := range []string{"prompt,completion", "messages[].content", `a\.b. c ,\ d\ `, "a[][].b", "a..b", `\`, "x[0]"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		sp, err := ParseSpec(s)
		if err != nil {
			if !errors.Is(err, ErrBadSpec) {
				t.Fatalf("ParseSpec(%q) = %v, not ErrBadSpec", s, err)
			}
			return
		}
		canon := sp.String()
		sp2, err := ParseSpec(canon)
		if err != nil {
			t.Fatalf("ParseSpec(%q) ok, but its String %q fails: %v", s, canon, err)
		}
		if !equalPaths(sp.paths, sp2.paths) {
			t.Fatalf("round trip of %q through %q: %#v != %#v", s, canon, sp.paths, sp2.paths)
		}
		if sp2.String() != canon {
			t.Fatalf("String not canonical: %q -> %q", canon, sp2.String())
		}
	})
}
