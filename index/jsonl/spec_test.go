package jsonl

import (
	"errors"
	"slices"
	"strings"
	"testing"
)

func TestParseSpec(t *testing.T) {
	tests := []struct {
		in    string
		canon string
		paths []path // of a spec of one alternative
		alts  []alt  // of a spec of several
	}{
		{"prompt,completion", "prompt,completion", []path{{{key: "prompt"}}, {{key: "completion"}}}, nil},
		{"instruction,input,output", "instruction,input,output", []path{{{key: "instruction"}}, {{key: "input"}}, {{key: "output"}}}, nil},
		{"messages[].content", "messages[].content", []path{{{key: "messages", arrays: 1}, {key: "content"}}}, nil},
		{"conversations[].value", "conversations[].value", []path{{{key: "conversations", arrays: 1}, {key: "value"}}}, nil},
		{"a.b.c", "a.b.c", []path{{{key: "a"}, {key: "b"}, {key: "c"}}}, nil},
		{"turns[]", "turns[]", []path{{{key: "turns", arrays: 1}}}, nil},
		{"grid[][].cell", "grid[][].cell", []path{{{key: "grid", arrays: 2}, {key: "cell"}}}, nil},
		{" prompt , completion ", "prompt,completion", []path{{{key: "prompt"}}, {{key: "completion"}}}, nil},
		{"turns[] ,x", "turns[],x", []path{{{key: "turns", arrays: 1}}, {{key: "x"}}}, nil},
		{"input text", "input text", []path{{{key: "input text"}}}, nil},
		{"a .b", "a .b", []path{{{key: "a "}, {key: "b"}}}, nil},
		{`a\.b`, `a\.b`, []path{{{key: "a.b"}}}, nil},
		{`x\,y,\[z\]`, `x\,y,\[z\]`, []path{{{key: "x,y"}}, {{key: "[z]"}}}, nil},
		{`back\\slash`, `back\\slash`, []path{{{key: `back\slash`}}}, nil},
		{`\ lead`, `\ lead`, []path{{{key: " lead"}}}, nil},
		{`trail\ `, `trail\ `, []path{{{key: "trail "}}}, nil},
		{`\q`, `q`, []path{{{key: "q"}}}, nil},
		{"é.ключ", "é.ключ", []path{{{key: "é"}, {key: "ключ"}}}, nil},
		// Alternatives: the first a row has in full gives its text.
		{"prompt,completion|instruction,input,response", "prompt,completion|instruction,input,response", nil,
			[]alt{{{{key: "prompt"}}, {{key: "completion"}}}, {{{key: "instruction"}}, {{key: "input"}}, {{key: "response"}}}}},
		{" a , b | c ", "a,b|c", nil, []alt{{{{key: "a"}}, {{key: "b"}}}, {{{key: "c"}}}}},
		{"turns[] |x", "turns[]|x", nil, []alt{{{{key: "turns", arrays: 1}}}, {{{key: "x"}}}}},
		{"a,b|b", "a,b|b", nil, []alt{{{{key: "a"}}, {{key: "b"}}}, {{{key: "b"}}}}},
		{`pipe\|key`, `pipe\|key`, []path{{{key: "pipe|key"}}}, nil},
	}
	for _, tt := range tests {
		if tt.paths == nil && tt.alts == nil {
			continue
		}
		sp, err := ParseSpec(tt.in)
		if err != nil {
			t.Errorf("ParseSpec(%q): %v", tt.in, err)
			continue
		}
		if got := sp.String(); got != tt.canon {
			t.Errorf("ParseSpec(%q).String() = %q, want %q", tt.in, got, tt.canon)
		}
		want := tt.alts
		if want == nil {
			want = []alt{tt.paths}
		}
		if !equalAlts(sp.alts, want) {
			t.Errorf("ParseSpec(%q) = %#v, want %#v", tt.in, sp.alts, want)
		}
	}
}

func equalAlts(a, b []alt) bool {
	return slices.EqualFunc(a, b, func(x, y alt) bool { return slices.EqualFunc(x, y, path.equal) })
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
		{"|a", "at byte 0: empty path"},
		{"a|", "at byte 2: empty path"},
		{"a||b", "at byte 2: empty path"},
		{"a,|b", "at byte 2: empty path"},
		{"a| ,b", "at byte 3: empty path"},
		{"a,b|b,a", "at byte 4: alternative 2 repeats alternative 1"},
		{"a|b|a", "at byte 4: alternative 3 repeats alternative 1"},
		{"a|b,a", "at byte 2: alternative 2 can never be taken"},
		{"x.y|z|x.y,w", "at byte 6: alternative 3 can never be taken: a row with all its fields has those of alternative 1"},
		{"a|b[", "at byte 3: want"},
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
	shapes[0].alts[0][0][0].key = "changed"
	if Shapes()[0].String() != shapeSpecs[0] {
		t.Error("Shapes shares memory between calls")
	}
}

func FuzzParseSpec(f *testing.F) {
	for _, s := range []string{"prompt,completion", "messages[].content", `a\.b. c ,\ d\ `, "a[][].b", "a..b", `\`, "x[0]",
		"prompt,completion|instruction,input,response", "a|a", "a,b|b", "a|b,a", `x\||y`, "|", " a | b[] "} {
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
		if !equalAlts(sp.alts, sp2.alts) {
			t.Fatalf("round trip of %q through %q: %#v != %#v", s, canon, sp.alts, sp2.alts)
		}
		if sp2.String() != canon {
			t.Fatalf("String not canonical: %q -> %q", canon, sp2.String())
		}
		// The alternatives, each a spec of its own, join back to the spec.
		var joined Spec
		for i, a := range sp.Alternatives() {
			if len(a.alts) != 1 {
				t.Fatalf("alternative %d of %q is %q", i+1, canon, a)
			}
			if joined, err = joined.Or(a); err != nil {
				t.Fatalf("joining the alternatives of %q: %v", canon, err)
			}
		}
		if joined.String() != canon {
			t.Fatalf("alternatives of %q join to %q", canon, joined)
		}
	})
}

func TestSpecPaths(t *testing.T) {
	sp, err := ParseSpec(`prompt,a\,b,messages[].content|text`)
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, a := range sp.Alternatives() {
		for _, p := range a.Paths() {
			got = append(got, p.String())
		}
	}
	want := []string{"prompt", `a\,b`, "messages[].content", "text"}
	if strings.Join(got, "|") != strings.Join(want, "|") {
		t.Errorf("paths %q, want %q", got, want)
	}
}
