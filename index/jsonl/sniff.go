package jsonl

import (
	"bytes"
	"errors"
	"fmt"
	"unicode/utf8"

	"github.com/valyala/fastjson"
)

// ErrNotJSONL is wrapped by the error a Sniffer reports for a file that is not JSONL at all.
var ErrNotJSONL = errors.New("not JSONL")

// SniffLines is how many non-blank lines a Sniffer looks at before it judges a file that has shown
// no JSON object yet.
const SniffLines = 100

// Sniffer tells from the first lines of a file whether it is JSONL at all. A file that is binary
// data, CSV or one JSON array would otherwise pass as millions of bad rows, each quarantined; it is
// one bad file, and saying so early is more use to whoever has to fix it. Feed it lines until Line
// reports done, then call Err; at the end of a file call End first.
type Sniffer struct {
	seen      int // non-blank lines looked at
	binary    int // of them, lines holding NUL or invalid UTF-8
	comma     int // of them, lines holding a comma or tab outside JSON
	first     []byte
	arrayLine bool // the first non-blank line is a whole JSON array
	done      bool
	err       error
}

// Line looks at the next line of the file (without its newline; a too-long line may be passed as
// nil and is not counted) and reports whether the Sniffer has decided.
func (s *Sniffer) Line(line []byte) bool {
	if s.done {
		return true
	}
	line = bytes.TrimSpace(bytes.TrimPrefix(line, bom))
	if len(line) == 0 {
		return false
	}
	s.seen++
	valid := fastjson.ValidateBytes(line) == nil
	if valid && line[0] == '{' {
		s.done = true
		return true
	}
	if s.seen == 1 {
		s.first = append([]byte(nil), line[:min(len(line), 40)]...)
		if line[0] == '[' {
			if !valid {
				s.fail("the first line opens a JSON array that goes on over the next lines; convert the array to one object per line first, e.g. with jq -c '.[]'")
				return true
			}
			s.arrayLine = true
		}
	}
	if bytes.IndexByte(line, 0) >= 0 || !utf8.Valid(line) {
		s.binary++
	} else if !valid && bytes.ContainsAny(line, ",\t;") {
		s.comma++
	}
	if s.seen >= SniffLines {
		s.judge()
		return true
	}
	return false
}

// End tells the Sniffer the file has ended.
func (s *Sniffer) End() {
	if !s.done && s.seen > 0 {
		s.judge()
	}
	s.done = true
}

// Err returns nil for a file that may be JSONL, or an error wrapping ErrNotJSONL that says what the
// file looks like instead.
func (s *Sniffer) Err() error { return s.err }

func (s *Sniffer) judge() {
	var like string
	switch {
	case s.arrayLine && s.seen == 1:
		like = "the file is one JSON array; convert it to one object per line first, e.g. with jq -c '.[]'"
	case 2*s.binary > s.seen:
		like = "it looks like binary data"
	case 2*s.comma > s.seen:
		like = "it looks like CSV or other delimited text"
	default:
		like = fmt.Sprintf("the first line starts %q", s.first)
	}
	s.fail(fmt.Sprintf("none of its first %d non-blank lines is a JSON object; %s", s.seen, like))
}

func (s *Sniffer) fail(msg string) {
	s.done = true
	s.err = fmt.Errorf("%w: %s", ErrNotJSONL, msg)
}
