package jsonl

import (
	"bytes"
	"errors"
	"fmt"
	"slices"
	"strconv"
	"strings"

	"github.com/valyala/fastjson"
)

// ErrNoShape is wrapped by the error Detect returns when no known shape fits.
var ErrNoShape = errors.New("no known row shape fits")

// maxKeysShown bounds the keys listed in a Detect error.
const maxKeysShown = 30

// Detect returns the first of Shapes that fits more than half of the sample
// lines holding a JSON object: each of its paths gives the row a string, so
// that Extract would take the row's text from it. Real pools carry a few damaged rows,
// which must not hide the shape of the rest; Extract quarantines them later.
// Blank lines and lines that are not JSON objects are left out, as Extract
// would reject them anyway. When nothing fits, the error wraps ErrNoShape and
// names the shapes tried and the top-level keys seen.
func Detect(lines [][]byte) (Spec, error) {
	shapes := Shapes()
	fits := make([]int, len(shapes))
	var (
		p    fastjson.Parser
		w    Extractor
		keys = make(map[string]bool)
		rows int
	)
	for _, line := range lines {
		line = bytes.TrimPrefix(line, bom)
		if blank(line) {
			continue
		}
		v, err := p.ParseBytes(line)
		if err != nil {
			continue
		}
		o, err := v.Object()
		if err != nil {
			continue
		}
		rows++
		o.Visit(func(k []byte, _ *fastjson.Value) {
			if len(keys) <= maxKeysShown {
				keys[string(k)] = true
			}
		})
		for i, sh := range shapes {
			if w.fits(v, sh) {
				fits[i]++
			}
		}
	}
	if rows == 0 {
		for _, line := range lines {
			if line = bytes.TrimSpace(bytes.TrimPrefix(line, bom)); len(line) > 0 {
				if line[0] == '[' {
					return Spec{}, fmt.Errorf("%w: the file looks like one JSON array, not JSONL (one object per line); convert it first, e.g. with jq -c '.[]'", ErrNoShape)
				}
				break
			}
		}
		return Spec{}, fmt.Errorf("%w: none of the %d sample lines is a JSON object", ErrNoShape, len(lines))
	}
	for i, n := range fits {
		if 2*n > rows {
			return shapes[i], nil
		}
	}
	var b strings.Builder
	b.WriteString("tried")
	for i, sh := range shapes {
		if i > 0 {
			b.WriteByte(',')
		}
		b.WriteByte(' ')
		b.WriteString(strconv.Quote(sh.String()))
	}
	b.WriteString("; top-level keys seen:")
	names := make([]string, 0, len(keys))
	for k := range keys {
		names = append(names, k)
	}
	slices.Sort(names)
	for i, k := range names {
		if i == maxKeysShown {
			b.WriteString(" ...")
			break
		}
		if i > 0 {
			b.WriteByte(',')
		}
		b.WriteByte(' ')
		b.WriteString(strconv.Quote(k))
	}
	if len(names) == 0 {
		b.WriteString(" none")
	}
	return Spec{}, fmt.Errorf("%w in %d sample rows: %s", ErrNoShape, rows, b.String())
}

// fits reports whether the row v has every path of the shape sh as a string: whether Extract
// would take its text from sh.
func (w *Extractor) fits(v *fastjson.Value, sh Spec) bool {
	w.parts = w.parts[:0]
	for _, pa := range sh.alts[0] {
		n := len(w.parts)
		w.idx = w.idx[:0]
		if w.collect(v, pa, 0) != nil || len(w.parts) == n {
			return false
		}
	}
	return true
}

// Suggest returns a spec that reads the text of line, a JSON object: the first known shape it
// fits, else its top-level fields that hold strings, in row order. ok is false when line is not
// an object or has no such field. It words advice, such as a --text for rows a spec missed.
func Suggest(line []byte) (sp Spec, ok bool) {
	var (
		p fastjson.Parser
		w Extractor
	)
	v, err := p.ParseBytes(bytes.TrimPrefix(line, bom))
	if err != nil || v.Type() != fastjson.TypeObject {
		return Spec{}, false
	}
	for _, sh := range Shapes() {
		if w.fits(v, sh) {
			return sh, true
		}
	}
	var a alt
	v.GetObject().Visit(func(k []byte, e *fastjson.Value) {
		pa := path{{key: string(k)}}
		if len(k) > 0 && e.Type() == fastjson.TypeString && !slices.ContainsFunc(a, pa.equal) {
			a = append(a, pa)
		}
	})
	if len(a) == 0 {
		return Spec{}, false
	}
	return Spec{alts: []alt{a}}, true
}
