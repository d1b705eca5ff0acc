package jsonl

import (
	"errors"
	"fmt"
	"strings"
)

// ErrBadSpec is wrapped by every error from ParseSpec.
var ErrBadSpec = errors.New("bad field spec")

// Spec lists the JSON paths whose string values make up a row's text, in
// the order they are read. Its text form is comma-separated paths; a path
// is dot-separated object keys, and "[]" after a key walks every element
// of the array found there:
//
//	prompt,completion
//	messages[].content
//	turns[]
//	a.b.c
//
// A backslash makes the next character part of a key, for keys that hold
// one of `.,[]\` or begin or end with white space. White space around each
// path is ignored.
type Spec struct {
	paths []path
}

// path is one comma-separated element of a Spec.
type path []seg

// seg is one object key, followed by arrays levels of "[]".
type seg struct {
	key    string
	arrays int
}

func isSpace(c byte) bool { return c == ' ' || c == '\t' || c == '\n' || c == '\r' }

// ParseSpec parses the text form of a Spec.
func ParseSpec(s string) (Spec, error) {
	p := specParser{s: s}
	return p.parse()
}

type specParser struct {
	s string
	i int
}

func (p *specParser) errorf(at int, format string, args ...any) error {
	return fmt.Errorf("%w %q at byte %d: %s", ErrBadSpec, p.s, at, fmt.Sprintf(format, args...))
}

func (p *specParser) skipSpace() {
	for p.i < len(p.s) && isSpace(p.s[p.i]) {
		p.i++
	}
}

func (p *specParser) parse() (Spec, error) {
	var sp Spec
	seen := make(map[string]int)
	for {
		p.skipSpace()
		at := p.i
		if p.i == len(p.s) || p.s[p.i] == ',' {
			return Spec{}, p.errorf(at, "empty path")
		}
		pa, err := p.path()
		if err != nil {
			return Spec{}, err
		}
		canon := pa.String()
		if first, dup := seen[canon]; dup {
			return Spec{}, p.errorf(at, "path %q repeats path %d", canon, first+1)
		}
		seen[canon] = len(sp.paths)
		sp.paths = append(sp.paths, pa)
		if p.i == len(p.s) {
			return sp, nil
		}
		p.i++ // the ','
	}
}

// path parses one path and leaves p.i at the ',' that ends it or at the end.
func (p *specParser) path() (path, error) {
	var pa path
	for {
		at := p.i
		key, keep, err := p.key()
		if err != nil {
			return nil, err
		}
		sg := seg{key: key}
		for p.i < len(p.s) && p.s[p.i] == '[' {
			if p.i+1 >= len(p.s) || p.s[p.i+1] != ']' {
				return nil, p.errorf(p.i, "want \"[]\" (array indexes are not supported)")
			}
			p.i += 2
			sg.arrays++
		}
		if sg.arrays == 0 && (p.i == len(p.s) || p.s[p.i] == ',') {
			// White space before the end of a path is not part of the key.
			sg.key = key[:keep]
		}
		if sg.key == "" {
			return nil, p.errorf(at, "empty key")
		}
		pa = append(pa, sg)
		if sg.arrays > 0 {
			p.skipSpace()
		}
		if p.i == len(p.s) || p.s[p.i] == ',' {
			return pa, nil
		}
		switch p.s[p.i] {
		case '.':
			p.i++
		case ']':
			return nil, p.errorf(p.i, "unexpected ']'")
		default:
			return nil, p.errorf(p.i, "unexpected %q after \"[]\"", p.s[p.i])
		}
	}
}

// key reads a key up to the next unescaped '.', ',', '[', ']' or the end.
// keep is the length of the key without its unescaped trailing white space.
func (p *specParser) key() (key string, keep int, err error) {
	var b strings.Builder
	for p.i < len(p.s) {
		c := p.s[p.i]
		switch c {
		case '.', ',', '[', ']':
			return b.String(), keep, nil
		case '\\':
			if p.i+1 == len(p.s) {
				return "", 0, p.errorf(p.i, "backslash at end")
			}
			b.WriteByte(p.s[p.i+1])
			keep = b.Len()
			p.i += 2
			continue
		}
		b.WriteByte(c)
		if !isSpace(c) {
			keep = b.Len()
		}
		p.i++
	}
	return b.String(), keep, nil
}

// String returns the canonical text form of s, which ParseSpec reads back
// to an equal Spec.
func (s Spec) String() string {
	var b strings.Builder
	for i, pa := range s.paths {
		if i > 0 {
			b.WriteByte(',')
		}
		pa.appendTo(&b)
	}
	return b.String()
}

func (pa path) String() string {
	var b strings.Builder
	pa.appendTo(&b)
	return b.String()
}

func (pa path) appendTo(b *strings.Builder) {
	for j, sg := range pa {
		if j > 0 {
			b.WriteByte('.')
		}
		last := j == len(pa)-1 && sg.arrays == 0
		for k := 0; k < len(sg.key); k++ {
			c := sg.key[k]
			switch {
			case c == '.' || c == ',' || c == '[' || c == ']' || c == '\\':
				b.WriteByte('\\')
			case isSpace(c) && (j == 0 && k == 0 || last && k == len(sg.key)-1):
				b.WriteByte('\\')
			}
			b.WriteByte(c)
		}
		for range sg.arrays {
			b.WriteString("[]")
		}
	}
}

// shapeSpecs are the row shapes Detect tries, in order.
var shapeSpecs = [...]string{
	"prompt,completion",
	"instruction,input,output",
	"instruction,input,response",
	"messages[].content",
	"conversations[].value",
	"question,answer",
	"text",
	"content",
}

// Shapes returns the known row shapes in the order Detect tries them.
func Shapes() []Spec {
	out := make([]Spec, 0, len(shapeSpecs))
	for _, s := range shapeSpecs {
		sp, err := ParseSpec(s)
		if err == nil { // always: the shapes are constants, checked by a test
			out = append(out, sp)
		}
	}
	return out
}
