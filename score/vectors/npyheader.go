package vectors

import (
	"fmt"
	"strconv"
)

// npyHeader is what an .npy header says about its array.
type npyHeader struct {
	descr   string
	fortran bool
	shape   []int64
}

// parseNPYHeader parses the Python dict literal of an .npy header, such as
//
//	{'descr': '<f4', 'fortran_order': False, 'shape': (3, 4), }
//
// followed by spaces and a newline. It takes the subset of Python literal
// syntax NumPy writes: strings in single or double quotes without escapes,
// True and False, and tuples of non-negative integers (an L suffix, as
// Python 2 wrote long integers, allowed). A structured dtype (a list as
// 'descr') is refused without being parsed.
func parseNPYHeader(h []byte) (npyHeader, error) {
	p := literal{b: h}
	var hd npyHeader
	seen := map[string]bool{}
	p.space()
	if !p.eat('{') {
		return hd, p.fail("want '{'")
	}
	for {
		p.space()
		if p.eat('}') {
			break
		}
		key, err := p.str()
		if err != nil {
			return hd, err
		}
		if seen[key] {
			return hd, p.fail(fmt.Sprintf("key %q twice", key))
		}
		seen[key] = true
		p.space()
		if !p.eat(':') {
			return hd, p.fail("want ':'")
		}
		p.space()
		switch key {
		case "descr":
			if p.peek() == '[' {
				return hd, fmt.Errorf("structured dtype (a record of fields), want '<f4' or '<f2': %w", ErrUnsupported)
			}
			if hd.descr, err = p.str(); err != nil {
				return hd, err
			}
		case "fortran_order":
			if hd.fortran, err = p.boolean(); err != nil {
				return hd, err
			}
		case "shape":
			if hd.shape, err = p.tuple(); err != nil {
				return hd, err
			}
		default:
			return hd, p.fail(fmt.Sprintf("unknown key %q", key))
		}
		p.space()
		if p.eat('}') {
			break
		}
		if !p.eat(',') {
			return hd, p.fail("want ',' or '}'")
		}
	}
	p.space()
	if p.i != len(p.b) {
		return hd, p.fail("text after the dict")
	}
	for _, k := range []string{"descr", "fortran_order", "shape"} {
		if !seen[k] {
			return hd, fmt.Errorf("no %q key: %w", k, ErrFormat)
		}
	}
	return hd, nil
}

// literal is a cursor over a Python literal.
type literal struct {
	b []byte
	i int
}

func (p *literal) fail(what string) error {
	return fmt.Errorf("byte %d of the header: %s: %w", p.i, what, ErrFormat)
}

func (p *literal) peek() byte {
	if p.i < len(p.b) {
		return p.b[p.i]
	}
	return 0
}

func (p *literal) eat(c byte) bool {
	if p.peek() == c && p.i < len(p.b) {
		p.i++
		return true
	}
	return false
}

func (p *literal) space() {
	for p.i < len(p.b) && (p.b[p.i] == ' ' || p.b[p.i] == '\n' || p.b[p.i] == '\t' || p.b[p.i] == '\r') {
		p.i++
	}
}

func (p *literal) str() (string, error) {
	q := p.peek()
	if q != '\'' && q != '"' {
		return "", p.fail("want a quoted string")
	}
	start := p.i + 1
	for j := start; j < len(p.b); j++ {
		switch p.b[j] {
		case q:
			p.i = j + 1
			return string(p.b[start:j]), nil
		case '\\', '\n':
			p.i = j
			return "", p.fail("escape or newline in a string")
		}
	}
	return "", p.fail("unterminated string")
}

func (p *literal) boolean() (bool, error) {
	for _, w := range []struct {
		text string
		v    bool
	}{{"True", true}, {"False", false}} {
		if len(p.b)-p.i >= len(w.text) && string(p.b[p.i:p.i+len(w.text)]) == w.text {
			p.i += len(w.text)
			return w.v, nil
		}
	}
	return false, p.fail("want True or False")
}

// tuple parses "()", "(n,)" or "(n, m, ...)" with an optional trailing comma.
func (p *literal) tuple() ([]int64, error) {
	if !p.eat('(') {
		return nil, p.fail("want '('")
	}
	var out []int64
	for {
		p.space()
		if p.eat(')') {
			if len(out) == 1 && !commaBefore(p.b[:p.i-1]) {
				return nil, p.fail("(n) is not a tuple")
			}
			return out, nil
		}
		if len(out) == 32 {
			return nil, p.fail("more than 32 dimensions")
		}
		start := p.i
		for p.i < len(p.b) && p.b[p.i] >= '0' && p.b[p.i] <= '9' {
			p.i++
		}
		v, err := strconv.ParseInt(string(p.b[start:p.i]), 10, 64)
		if err != nil {
			p.i = start
			return nil, p.fail("want a non-negative integer")
		}
		p.eat('L')
		out = append(out, v)
		p.space()
		if !p.eat(',') {
			p.space()
			if p.peek() != ')' {
				return nil, p.fail("want ',' or ')'")
			}
		}
	}
}

// commaBefore reports whether the last byte of b other than white space is
// a comma.
func commaBefore(b []byte) bool {
	for i := len(b) - 1; i >= 0; i-- {
		switch b[i] {
		case ' ', '\n', '\t', '\r':
			continue
		case ',':
			return true
		}
		return false
	}
	return false
}
