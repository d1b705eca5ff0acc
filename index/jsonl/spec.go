package jsonl

import (
	"errors"
	"fmt"
	"slices"
	"strings"
)

// ErrBadSpec is wrapped by every error from ParseSpec.
var ErrBadSpec = errors.New("bad field spec")

// Spec names the JSON paths whose string values make up a row's text. Its text form is one or
// more alternatives separated by "|", each a comma-separated list of paths; a path is
// dot-separated object keys, and "[]" after a key walks every element of the array found there:
//
//	prompt,completion
//	messages[].content
//	turns[]
//	a.b.c
//	prompt,completion|instruction,input,response
//
// A row takes its text from the first alternative whose every path gives it a string (an empty
// one counts); a row that has no alternative complete has no text. One spec thus reads a pool
// whose files name their fields differently, and a row lacking one of its fields is never
// indexed by halves.
//
// A backslash makes the next character part of a key, for keys that hold one of `.,[]|\` or
// begin or end with white space. White space around each path is ignored.
type Spec struct {
	alts []alt
}

// alt is one "|"-separated alternative of a Spec: its paths, in the order read.
type alt []path

// path is one comma-separated element of an alternative.
type path []seg

// seg is one object key, followed by arrays levels of "[]".
type seg struct {
	key    string
	arrays int
}

func isSpace(c byte) bool { return c == ' ' || c == '\t' || c == '\n' || c == '\r' }

// isMeta reports whether c has a meaning in a spec outside a key.
func isMeta(c byte) bool {
	return c == '.' || c == ',' || c == '[' || c == ']' || c == '|' || c == '\\'
}

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
	for {
		at := p.i
		a, err := p.alt()
		if err != nil {
			return Spec{}, err
		}
		sp.alts = append(sp.alts, a)
		if err := sp.checkLast(); err != nil {
			return Spec{}, p.errorf(at, "%s", err)
		}
		if p.i == len(p.s) {
			return sp, nil
		}
		p.i++ // the '|'
	}
}

// checkLast refuses a last alternative that no row could ever take: one holding every path of an
// earlier alternative, which a row having it all would take first.
func (sp Spec) checkLast() error {
	last := len(sp.alts) - 1
	for i := range last {
		if sp.alts[i].within(sp.alts[last]) {
			if len(sp.alts[i]) == len(sp.alts[last]) {
				return fmt.Errorf("alternative %d repeats alternative %d", last+1, i+1)
			}
			return fmt.Errorf("alternative %d can never be taken: a row with all its fields has those of alternative %d, which comes first", last+1, i+1)
		}
	}
	return nil
}

// within reports whether every path of a is also a path of b.
func (a alt) within(b alt) bool {
	for _, pa := range a {
		if !slices.ContainsFunc(b, pa.equal) {
			return false
		}
	}
	return true
}

func (pa path) equal(pb path) bool { return slices.Equal(pa, pb) }

// alt parses one alternative and leaves p.i at the '|' that ends it or at the end.
func (p *specParser) alt() (alt, error) {
	var a alt
	for {
		p.skipSpace()
		at := p.i
		if p.i == len(p.s) || p.s[p.i] == ',' || p.s[p.i] == '|' {
			return nil, p.errorf(at, "empty path")
		}
		pa, err := p.path()
		if err != nil {
			return nil, err
		}
		if first := slices.IndexFunc(a, pa.equal); first >= 0 {
			return nil, p.errorf(at, "path %q repeats path %d", pa.String(), first+1)
		}
		a = append(a, pa)
		if p.i == len(p.s) || p.s[p.i] == '|' {
			return a, nil
		}
		p.i++ // the ','
	}
}

// endsPath reports whether the parser stands at the end of a path.
func (p *specParser) endsPath() bool {
	return p.i == len(p.s) || p.s[p.i] == ',' || p.s[p.i] == '|'
}

// path parses one path and leaves p.i at the ',' or '|' that ends it or at the end.
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
		if sg.arrays == 0 && p.endsPath() {
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
		if p.endsPath() {
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

// key reads a key up to the next unescaped '.', ',', '[', ']', '|' or the end.
// keep is the length of the key without its unescaped trailing white space.
func (p *specParser) key() (key string, keep int, err error) {
	var b strings.Builder
	for p.i < len(p.s) {
		c := p.s[p.i]
		switch c {
		case '.', ',', '[', ']', '|':
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

// Alternatives returns each alternative of s as a Spec of its own, in order.
func (s Spec) Alternatives() []Spec {
	out := make([]Spec, len(s.alts))
	for i, a := range s.alts {
		out[i] = Spec{alts: []alt{a}}
	}
	return out
}

// Paths returns each path of s's first alternative as a Spec of its own, in order: the fields a row
// read through that alternative has, one at a time.
func (s Spec) Paths() []Spec {
	if len(s.alts) == 0 {
		return nil
	}
	out := make([]Spec, len(s.alts[0]))
	for i, pa := range s.alts[0] {
		out[i] = Spec{alts: []alt{{pa}}}
	}
	return out
}

// Or returns s with the alternatives of t that s lacks added after its own, or an error wrapping
// ErrBadSpec when one of them could never be taken (it holds every path of an alternative of s).
func (s Spec) Or(t Spec) (Spec, error) {
	out := Spec{alts: slices.Clone(s.alts)}
	for _, a := range t.alts {
		if slices.ContainsFunc(out.alts, func(b alt) bool { return slices.EqualFunc(a, b, path.equal) }) {
			continue
		}
		out.alts = append(out.alts, a)
		if err := out.checkLast(); err != nil {
			return Spec{}, fmt.Errorf("%w %q or %q: %s", ErrBadSpec, s, t, err)
		}
	}
	return out, nil
}

// String returns the canonical text form of s, which ParseSpec reads back
// to an equal Spec.
func (s Spec) String() string {
	var b strings.Builder
	for i, a := range s.alts {
		if i > 0 {
			b.WriteByte('|')
		}
		a.appendTo(&b)
	}
	return b.String()
}

func (a alt) appendTo(b *strings.Builder) {
	for i, pa := range a {
		if i > 0 {
			b.WriteByte(',')
		}
		pa.appendTo(b)
	}
}

func (a alt) String() string {
	var b strings.Builder
	a.appendTo(&b)
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
			case isMeta(c):
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
