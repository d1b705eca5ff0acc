package jsonl

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"

	"github.com/valyala/fastjson"
)

// Row errors. Extract returns them inside a *RowError, so errors.Is finds
// them and the error text says which field was at fault.
var (
	ErrEmpty     = errors.New("blank line")
	ErrNotJSON   = errors.New("malformed JSON")
	ErrNotObject = errors.New("not a JSON object")
	ErrNoText    = errors.New("no text")
	ErrEmptyText = errors.New("empty text")
	ErrBadText   = errors.New("text is not a string")
	ErrBadUTF8   = errors.New("text is not valid UTF-8")
	ErrBadID     = errors.New("bad id")
	ErrBadTokens = errors.New("bad token count")
)

// RowError says why a row cannot be used.
type RowError struct {
	Kind   error  // one of the Err* row errors above
	Path   string // the field or fields at fault, such as "messages[2].content"; may be empty
	Detail string // what was found; may be empty
}

func (e *RowError) Error() string {
	var b strings.Builder
	b.WriteString(e.Kind.Error())
	if e.Path != "" {
		b.WriteString(": ")
		b.WriteString(e.Path)
	}
	if e.Detail != "" {
		b.WriteString(": ")
		b.WriteString(e.Detail)
	}
	return b.String()
}

func (e *RowError) Unwrap() error { return e.Kind }

// Row is what Extract learns about a row besides its text.
type Row struct {
	ID        []byte // string ids unescaped, number ids in their JSON source form; valid until the next Extract
	HasID     bool
	Tokens    int64
	HasTokens bool
	TextBytes int // total bytes of the text parts
	// Missing names the paths the row lacks (no string at them) of the first alternative of the
	// spec that it has some paths of, or of the first alternative when it has none of any. It is
	// nil when that alternative is complete; a row that takes its text from a later alternative
	// may still miss paths of an earlier one, as a misspelt field would make it. Valid until the
	// next Extract.
	Missing []string
}

// Extractor pulls the fields of a Spec out of JSONL rows. It reuses its
// parser's memory from row to row, so it must not be shared between
// goroutines; make one per goroutine.
type Extractor struct {
	spec    Spec
	names   [][]string // by alternative, the canonical form of each path
	canon   []string   // by alternative, its canonical form
	id      path
	tokens  path
	p       fastjson.Parser
	last    *fastjson.Value // the row last parsed, when it was an object
	parts   [][]byte
	idx     []int // array indexes on the way down, for error paths
	missing []string
	idBuf   []byte
	tokBuf  []byte
}

// NewExtractor returns an Extractor for spec. idField and tokensField are
// dotted paths (the key syntax of Spec, without "[]") of a row's id and
// token count; "" means the rows have none.
func NewExtractor(spec Spec, idField, tokensField string) (*Extractor, error) {
	if len(spec.alts) == 0 {
		return nil, fmt.Errorf("%w: no paths", ErrBadSpec)
	}
	e := &Extractor{spec: spec}
	for _, a := range spec.alts {
		names := make([]string, len(a))
		for i, pa := range a {
			names[i] = pa.String()
		}
		e.names, e.canon = append(e.names, names), append(e.canon, a.String())
	}
	var err error
	if e.id, err = parseField("id", idField); err != nil {
		return nil, err
	}
	if e.tokens, err = parseField("token", tokensField); err != nil {
		return nil, err
	}
	return e, nil
}

func parseField(what, s string) (path, error) {
	if s == "" {
		return nil, nil
	}
	sp, err := ParseSpec(s)
	if err != nil {
		return nil, fmt.Errorf("%s field: %w", what, err)
	}
	if len(sp.alts) != 1 || len(sp.alts[0]) != 1 {
		return nil, fmt.Errorf("%s field: %w %q: want one path", what, ErrBadSpec, s)
	}
	pa := sp.alts[0][0]
	for _, sg := range pa {
		if sg.arrays > 0 {
			return nil, fmt.Errorf("%s field: %w %q: \"[]\" is not allowed here", what, ErrBadSpec, s)
		}
	}
	return pa, nil
}

// Spec returns the spec e extracts.
func (e *Extractor) Spec() Spec { return e.spec }

var bom = []byte("\xef\xbb\xbf")

// blank reports whether line holds nothing but white space (and a BOM).
func blank(line []byte) bool {
	line = bytes.TrimPrefix(line, bom)
	for _, c := range line {
		if !isSpace(c) {
			return false
		}
	}
	return true
}

// Extract parses line and calls fn, which may be nil, with each text part:
// the unescaped string values of the paths of the first alternative of the
// spec that the row has in full, in spec order and, in arrays, in array
// order. Empty strings are passed too; nulls are skipped. A path counts as
// had when it gives at least one string, even an empty one. fn is called
// only when the row has no error, and a part is valid only until the next
// Extract.
//
// A row that has no alternative in full has no text (ErrNoText, naming the
// paths missing); a path that meets a value of the wrong type makes the row
// bad (ErrBadText) unless an earlier alternative was had in full.
//
// A UTF-8 byte order mark before the JSON and a trailing "\r" or "\n" are
// ignored, so Scanner lines of BOM-prefixed and CRLF files parse as they
// are. Of repeated keys the first counts. Raw control characters inside
// strings are passed through, as the parser allows them. On a text error
// the returned Row still carries the id and token count.
func (e *Extractor) Extract(line []byte, fn func(part []byte)) (Row, error) {
	e.last = nil
	line = bytes.TrimPrefix(line, bom)
	if blank(line) {
		return Row{}, &RowError{Kind: ErrEmpty}
	}
	v, err := e.p.ParseBytes(line)
	if err != nil {
		return Row{}, parseError(err, line)
	}
	if t := v.Type(); t != fastjson.TypeObject {
		return Row{}, &RowError{Kind: ErrNotObject, Detail: "found " + typeName(v)}
	}
	e.last = v
	var row Row
	if e.id != nil {
		if err := e.getID(v, &row); err != nil {
			return Row{}, err
		}
	}
	if e.tokens != nil {
		if err := e.getTokens(v, &row); err != nil {
			return Row{}, err
		}
	}
	taken, err := e.text(v, &row)
	if err != nil {
		return row, err
	}
	empty := true
	for i, part := range e.parts {
		if !utf8.Valid(part) {
			return row, &RowError{Kind: ErrBadUTF8, Detail: fmt.Sprintf("text part %d, byte %d", i+1, invalidAt(part))}
		}
		row.TextBytes += len(part)
		if empty && !allSpace(part) {
			empty = false
		}
	}
	if empty {
		return row, &RowError{Kind: ErrEmptyText, Detail: "only empty or white-space strings at " + e.canon[taken]}
	}
	if fn != nil {
		for _, part := range e.parts {
			fn(part)
		}
	}
	return row, nil
}

// text leaves in e.parts the strings of the first alternative the row v has in full and returns
// its number; it sets row.Missing. It returns an error when no alternative is had in full.
func (e *Extractor) text(v *fastjson.Value, row *Row) (int, error) {
	var typeErr error
	partial := -1 // the first alternative the row has some but not all paths of
	e.missing = e.missing[:0]
	for ai, a := range e.spec.alts {
		e.parts = e.parts[:0]
		had, err := e.collectAlt(v, ai, partial < 0)
		if err != nil {
			if typeErr == nil {
				typeErr = err
			}
			if partial < 0 {
				e.missing = e.missing[:0]
			}
			continue
		}
		if had == len(a) {
			if partial >= 0 {
				row.Missing = e.missing
			}
			return ai, nil
		}
		if had > 0 && partial < 0 {
			partial = ai
		} else if partial < 0 {
			e.missing = e.missing[:0]
		}
	}
	if partial < 0 {
		// The row has no path of any alternative: it misses them all, the first alternative's
		// standing for the rest.
		partial = 0
		e.missing = append(e.missing[:0], e.names[0]...)
	}
	row.Missing = e.missing
	if typeErr != nil {
		return 0, typeErr
	}
	if len(e.spec.alts) > 1 && len(e.missing) == len(e.names[partial]) {
		return 0, &RowError{Kind: ErrNoText, Detail: "none of " + e.spec.String() + "; " + e.fieldsOf(v)}
	}
	detail := e.lack(v, partial)
	if len(e.missing) < len(e.names[partial]) {
		detail += " (of " + e.canon[partial] + ")"
	}
	return 0, &RowError{Kind: ErrNoText, Path: strings.Join(e.missing, ", "), Detail: detail + "; " + e.fieldsOf(v)}
}

// collectAlt appends the strings of each path of alternative ai below v and returns how many
// paths gave one. With note, it records the names of the paths that gave none in e.missing.
func (e *Extractor) collectAlt(v *fastjson.Value, ai int, note bool) (int, error) {
	had := 0
	for pi, pa := range e.spec.alts[ai] {
		n := len(e.parts)
		e.idx = e.idx[:0]
		if err := e.collect(v, pa, 0); err != nil {
			return had, err
		}
		if len(e.parts) > n {
			had++
		} else if note {
			e.missing = append(e.missing, e.names[ai][pi])
		}
	}
	return had, nil
}

// lack says how the missing paths of alternative ai are missing: absent, null, or there without
// a string.
func (e *Extractor) lack(v *fastjson.Value, ai int) string {
	o, _ := v.Object()
	var null, other int
	for pi, pa := range e.spec.alts[ai] {
		if !slices.Contains(e.missing, e.names[ai][pi]) {
			continue
		}
		switch c := o.Get(pa[0].key); {
		case c == nil:
		case c.Type() == fastjson.TypeNull:
			null++
		default:
			other++
		}
	}
	switch {
	case null == len(e.missing):
		return "null"
	case other == len(e.missing):
		return "no string there"
	case null+other == 0:
		return "missing"
	}
	return "missing, null or without a string"
}

// Bounds on the fields a reason lists, so that a row of many or long keys gives a short reason.
const (
	maxFieldsShown   = 8
	maxFieldKeyBytes = 40
)

// fieldsOf names the top-level fields of v, an object, for a reason: a misspelt path shows
// beside the field it meant.
func (e *Extractor) fieldsOf(v *fastjson.Value) string {
	var b strings.Builder
	n := 0
	v.GetObject().Visit(func(k []byte, _ *fastjson.Value) {
		n++
		if n > maxFieldsShown {
			return
		}
		if n > 1 {
			b.WriteString(", ")
		}
		k = cutUTF8(k, maxFieldKeyBytes)
		b.WriteString(strconv.Quote(string(k)))
	})
	switch {
	case n == 0:
		return "the row has no fields"
	case n > maxFieldsShown:
		fmt.Fprintf(&b, " and %d more", n-maxFieldsShown)
	}
	return "the row has " + b.String()
}

// cutUTF8 cuts b to at most n bytes without splitting a UTF-8 sequence.
func cutUTF8(b []byte, n int) []byte {
	if len(b) <= n {
		return b
	}
	for n > 0 && !utf8.RuneStart(b[n]) {
		n--
	}
	return b[:n]
}

// Keys calls fn with each top-level key of the row last given to Extract, when it was a JSON
// object; the key is valid only during the call.
func (e *Extractor) Keys(fn func(key []byte)) {
	if e.last == nil {
		return
	}
	e.last.GetObject().Visit(func(k []byte, _ *fastjson.Value) { fn(k) })
}

// parseError words an error of the JSON parser for a row. The parser says "cannot parse ..." once
// for every level it was in, so a row nested a few thousand deep would be reasoned in kilobytes:
// only the outermost and the innermost levels are kept, and a row nested past the parser's limit
// is said to be so, with its depth.
func parseError(err error, line []byte) error {
	if d := depth(line); d > fastjson.MaxDepth {
		return &RowError{Kind: ErrNotJSON, Detail: fmt.Sprintf("nested %d levels deep, past the parser's limit of %d", d, fastjson.MaxDepth)}
	}
	msg := err.Error()
	head, tail, hasTail := strings.Cut(msg, "; unparsed tail: ")
	parts := strings.Split(head, ": ")
	last := 0
	for i, p := range parts {
		if strings.HasPrefix(p, "cannot parse ") {
			last = i
		}
	}
	if last > 1 {
		parts = append(parts[:1], parts[last:]...)
		msg = strings.Join(parts, ": ")
		if hasTail {
			msg += "; unparsed tail: " + tail
		}
	}
	return &RowError{Kind: ErrNotJSON, Detail: msg}
}

// depth returns how deeply the arrays and objects of a JSON text nest, strings left out. It reads
// a malformed text as far as it goes.
func depth(b []byte) int {
	d, deepest := 0, 0
	for i := 0; i < len(b); i++ {
		switch b[i] {
		case '[', '{':
			d++
			deepest = max(deepest, d)
		case ']', '}':
			d--
		case '"':
			for i++; i < len(b) && b[i] != '"'; i++ {
				if b[i] == '\\' {
					i++
				}
			}
		}
	}
	return deepest
}

func invalidAt(b []byte) int {
	for i := 0; i < len(b); {
		r, n := utf8.DecodeRune(b[i:])
		if r == utf8.RuneError && n == 1 {
			return i
		}
		i += n
	}
	return -1
}

func allSpace(b []byte) bool {
	for i := 0; i < len(b); {
		c := b[i]
		if c < utf8.RuneSelf {
			if c != ' ' && (c < '\t' || c > '\r') {
				return false
			}
			i++
			continue
		}
		r, n := utf8.DecodeRune(b[i:])
		if !unicode.IsSpace(r) {
			return false
		}
		i += n
	}
	return true
}

func typeName(v *fastjson.Value) string {
	switch v.Type() {
	case fastjson.TypeTrue, fastjson.TypeFalse:
		return "a boolean"
	case fastjson.TypeNull:
		return "null"
	case fastjson.TypeObject:
		return "an object"
	case fastjson.TypeArray:
		return "an array"
	}
	return "a " + v.Type().String()
}

// collect appends the strings found at pa[i:] below v, which is an object.
func (e *Extractor) collect(v *fastjson.Value, pa path, i int) error {
	o, _ := v.Object()
	c := o.Get(pa[i].key)
	if c == nil || c.Type() == fastjson.TypeNull {
		return nil
	}
	return e.descend(c, pa, i, pa[i].arrays)
}

// descend handles the value c found at key pa[i], with arrays levels of
// "[]" still to walk.
func (e *Extractor) descend(c *fastjson.Value, pa path, i, arrays int) error {
	switch {
	case arrays > 0:
		a, err := c.Array()
		if err != nil {
			return e.badText(pa, i, pa[i].arrays-arrays, typeName(c)+", want an array")
		}
		for j, el := range a {
			if el.Type() == fastjson.TypeNull {
				continue
			}
			e.idx = append(e.idx, j)
			err := e.descend(el, pa, i, arrays-1)
			e.idx = e.idx[:len(e.idx)-1]
			if err != nil {
				return err
			}
		}
		return nil
	case i+1 < len(pa):
		if c.Type() != fastjson.TypeObject {
			return e.badText(pa, i, pa[i].arrays, typeName(c)+", want an object")
		}
		return e.collect(c, pa, i+1)
	}
	s, err := c.StringBytes()
	if err != nil {
		return e.badText(pa, i, pa[i].arrays, typeName(c)+", want a string")
	}
	e.parts = append(e.parts, s)
	return nil
}

// badText builds the error for a wrong type at pa[:i+1] after its first
// levels of "[]", naming the array indexes taken on the way.
func (e *Extractor) badText(pa path, i, levels int, detail string) error {
	var b strings.Builder
	k := 0
	for j := 0; j <= i; j++ {
		if j > 0 {
			b.WriteByte('.')
		}
		b.WriteString(pa[j].key)
		n := pa[j].arrays
		if j == i {
			n = levels
		}
		for range n {
			if k < len(e.idx) {
				fmt.Fprintf(&b, "[%d]", e.idx[k])
			}
			k++
		}
	}
	return &RowError{Kind: ErrBadText, Path: b.String(), Detail: detail}
}

// lookup follows a dotted path through objects. It returns nil when a key
// is missing or null, and an error detail when it meets a non-object.
func lookup(v *fastjson.Value, pa path) (*fastjson.Value, string) {
	for j, sg := range pa {
		if j > 0 && v.Type() != fastjson.TypeObject {
			return nil, pa[:j].String() + " is " + typeName(v) + ", want an object"
		}
		o, _ := v.Object()
		v = o.Get(sg.key)
		if v == nil || v.Type() == fastjson.TypeNull {
			return nil, ""
		}
	}
	return v, ""
}

func (e *Extractor) getID(v *fastjson.Value, row *Row) error {
	c, bad := lookup(v, e.id)
	if bad != "" {
		return &RowError{Kind: ErrBadID, Path: e.id.String(), Detail: bad}
	}
	if c == nil {
		return nil
	}
	switch c.Type() {
	case fastjson.TypeString:
		s, _ := c.StringBytes()
		if len(s) == 0 {
			return &RowError{Kind: ErrBadID, Path: e.id.String(), Detail: "empty string"}
		}
		if !utf8.Valid(s) {
			return &RowError{Kind: ErrBadID, Path: e.id.String(), Detail: "not valid UTF-8"}
		}
		row.ID = s
	case fastjson.TypeNumber:
		e.idBuf = c.MarshalTo(e.idBuf[:0])
		if !IsNumber(e.idBuf) {
			return &RowError{Kind: ErrBadID, Path: e.id.String(), Detail: fmt.Sprintf("%q is not a JSON number", e.idBuf)}
		}
		row.ID = e.idBuf
	default:
		return &RowError{Kind: ErrBadID, Path: e.id.String(), Detail: typeName(c) + ", want a string or number"}
	}
	row.HasID = true
	return nil
}

// maxExactInt is the largest integer below which every integer is exactly
// a float64 (2^53, IEEE 754 binary64).
const maxExactInt = 1 << 53

func (e *Extractor) getTokens(v *fastjson.Value, row *Row) error {
	c, bad := lookup(v, e.tokens)
	if bad != "" {
		return &RowError{Kind: ErrBadTokens, Path: e.tokens.String(), Detail: bad}
	}
	if c == nil {
		return nil
	}
	if c.Type() != fastjson.TypeNumber {
		return &RowError{Kind: ErrBadTokens, Path: e.tokens.String(), Detail: typeName(c) + ", want a non-negative integer"}
	}
	raw := c.MarshalTo(e.tokBuf[:0])
	e.tokBuf = raw
	fail := func() error {
		return &RowError{Kind: ErrBadTokens, Path: e.tokens.String(), Detail: fmt.Sprintf("%s, want a non-negative integer", raw)}
	}
	if !IsNumber(raw) {
		return fail()
	}
	if n, err := strconv.ParseInt(string(raw), 10, 64); err == nil {
		if n < 0 {
			return fail()
		}
		row.Tokens, row.HasTokens = n, true
		return nil
	}
	// Writers that go through float64 print counts like 512.0 or 1e3.
	f, err := strconv.ParseFloat(string(raw), 64)
	if err != nil || f < 0 || f > maxExactInt || f != math.Trunc(f) {
		return fail()
	}
	row.Tokens, row.HasTokens = int64(f), true
	return nil
}

// IsNumber reports whether b follows the number grammar of RFC 8259, section 6, which the
// parser does not enforce; every reader of numbers from JSONL checks with it.
func IsNumber(b []byte) bool {
	i := 0
	if i < len(b) && b[i] == '-' {
		i++
	}
	switch {
	case i < len(b) && b[i] == '0':
		i++
	case i < len(b) && b[i] >= '1' && b[i] <= '9':
		for i < len(b) && b[i] >= '0' && b[i] <= '9' {
			i++
		}
	default:
		return false
	}
	if i < len(b) && b[i] == '.' {
		i++
		d := i
		for i < len(b) && b[i] >= '0' && b[i] <= '9' {
			i++
		}
		if i == d {
			return false
		}
	}
	if i < len(b) && (b[i] == 'e' || b[i] == 'E') {
		i++
		if i < len(b) && (b[i] == '+' || b[i] == '-') {
			i++
		}
		d := i
		for i < len(b) && b[i] >= '0' && b[i] <= '9' {
			i++
		}
		if i == d {
			return false
		}
	}
	return i == len(b)
}
