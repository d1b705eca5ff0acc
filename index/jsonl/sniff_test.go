package jsonl

import (
	"bytes"
	"errors"
	"strings"
	"testing"
)

func sniff(data string) error {
	var s Sniffer
	for _, l := range strings.Split(data, "\n") {
		if s.Line([]byte(l)) {
			return s.Err()
		}
	}
	s.End()
	return s.Err()
}

func TestSniffer(t *testing.T) {
	for _, tc := range []struct {
		name, data string
		bad        string // words of the error; "" for none
	}{
		{"jsonl", `{"a":1}` + "\n" + `{"a":2}`, ""},
		{"bad rows first", "garbage\n[1]\n" + `{"a":1}`, ""},
		{"bom and blank lines", "\ufeff\n\n" + `{"a":1}`, ""},
		{"empty", "", ""},
		{"blank only", "\n \n\t\n", ""},
		{"json array over lines", "[\n" + `{"a":1},` + "\n]", "opens a JSON array"},
		{"json array on one line", `[{"a":1},{"a":2}]`, "one JSON array"},
		{"csv", "id,text\n1,hello\n2,world", "CSV"},
		{"binary", "\x00\x01\x02\n\xff\xfe", "binary data"},
		{"plain text", "hello\nworld", `the first line starts "hello"`},
	} {
		err := sniff(tc.data)
		if tc.bad == "" {
			if err != nil {
				t.Errorf("%s: %v", tc.name, err)
			}
			continue
		}
		if !errors.Is(err, ErrNotJSONL) || !strings.Contains(err.Error(), tc.bad) {
			t.Errorf("%s: %v, want ErrNotJSONL saying %q", tc.name, err, tc.bad)
		}
	}
}

// TestSnifferStopsEarly: a file is judged on its first SniffLines non-blank lines, not read whole.
func TestSnifferStopsEarly(t *testing.T) {
	var s Sniffer
	for i := 0; i < SniffLines-1; i++ {
		if s.Line([]byte("a,b")) {
			t.Fatalf("decided after %d lines", i+1)
		}
	}
	if !s.Line([]byte("a,b")) || !errors.Is(s.Err(), ErrNotJSONL) {
		t.Errorf("undecided or wrong after %d lines: %v", SniffLines, s.Err())
	}
}

func FuzzSniffer(f *testing.F) {
	for _, seed := range []string{`{"a":1}`, "[\n{},\n]", "a,b\nc,d", "\x00\xff", "\ufeff{}", ""} {
		f.Add([]byte(seed))
	}
	for _, b := range badInputFiles(f) {
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		var s Sniffer
		for _, l := range bytes.Split(data, []byte("\n")) {
			if s.Line(l) {
				break
			}
		}
		s.End()
		if err := s.Err(); err != nil && !errors.Is(err, ErrNotJSONL) {
			t.Errorf("error %v does not wrap ErrNotJSONL", err)
		}
	})
}
