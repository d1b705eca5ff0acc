package vectors

import (
	"bytes"
	"errors"
	"fmt"
	"hash/maphash"
	"io"
	"math"
	"strconv"
	"unicode/utf8"

	"github.com/valyala/fastjson"

	"sluice/index/jsonl"
)

// JSONL reads vectors from JSONL, one object per line:
//
//	{"id": "row-7", "vector": [0.12, -0.5, ...]}
//
// The id is a non-empty string or a number; it is compared as text, string
// ids unescaped and numbers in their JSON source form (so 7 and "7" are the
// same id, 7.0 another), as the index reads pool ids. Other keys are
// ignored. Every line must have both keys; a blank line is an error. The
// input may be gzip or zstd compressed. JSONL implements Source.
//
// Memory: one line at a time, plus a 128-bit hash and a line number per row
// (about 40 bytes a row) to refuse repeated ids.
type JSONL struct {
	name    string
	sc      *jsonl.Scanner
	closer  io.Closer
	check   func(row int, id string) error
	p       fastjson.Parser
	dim     int
	row     int // rows returned so far
	first   []float32
	raw     []byte
	seen    map[[2]uint64]int64
	s1, s2  maphash.Seed
	hashBuf []byte
}

// OpenJSONL opens the JSONL vectors file at path ("-" is standard input) and
// reads its first row to learn the vector length. check, if not nil, is
// called with each row's 0-based number and id, so that a caller can
// match the rows to its own (a pool's ids, say); an error from it stops the
// read. Close the JSONL when done.
func OpenJSONL(path string, check func(row int, id string) error) (*JSONL, error) {
	r, _, err := jsonl.Open(path)
	if err != nil {
		return nil, fmt.Errorf("read vectors: %w", err)
	}
	j, err := NewJSONL(r, path, check)
	if err != nil {
		r.Close()
		return nil, err
	}
	j.closer = r
	return j, nil
}

// NewJSONL is OpenJSONL for a stream of uncompressed JSONL named name in
// errors.
func NewJSONL(r io.Reader, name string, check func(row int, id string) error) (*JSONL, error) {
	j := &JSONL{
		name:  name,
		sc:    jsonl.NewScanner(r, 0),
		check: check,
		seen:  map[[2]uint64]int64{},
		s1:    maphash.MakeSeed(),
		s2:    maphash.MakeSeed(),
	}
	// The first row fixes the length; it is kept for the first Read.
	first, err := j.line(nil)
	if err != nil && err != io.EOF {
		return nil, err
	}
	j.first = first
	return j, nil
}

// Dim returns the vector length, 0 if the file has no rows.
func (j *JSONL) Dim() int { return j.dim }

// Close closes the file OpenJSONL opened.
func (j *JSONL) Close() error {
	if j.closer == nil {
		return nil
	}
	return j.closer.Close()
}

// Read copies the next rows into dst, at most len(dst)/Dim() of them.
func (j *JSONL) Read(dst []float32) (int, error) {
	if j.dim == 0 {
		return 0, io.EOF
	}
	want := len(dst) / j.dim
	if want == 0 {
		return 0, fmt.Errorf("read %s: room for %d values, a row has %d", j.name, len(dst), j.dim)
	}
	n := 0
	if j.first != nil {
		copy(dst, j.first)
		j.first = nil
		n = 1
	}
	for ; n < want; n++ {
		if _, err := j.line(dst[n*j.dim : (n+1)*j.dim]); err != nil {
			if err == io.EOF && n > 0 {
				return n, nil
			}
			return 0, err
		}
	}
	return n, nil
}

// line parses the next line's vector into dst, or, when dst is nil (the
// first line), into a new slice that also fixes the length.
func (j *JSONL) line(dst []float32) ([]float32, error) {
	if !j.sc.Scan() {
		if err := j.sc.Err(); err != nil {
			return nil, fmt.Errorf("read %s: %w", j.name, err)
		}
		return nil, io.EOF
	}
	fail := func(format string, a ...any) error {
		return fmt.Errorf("read %s:%d: %w", j.name, j.sc.Line(), fmt.Errorf(format, a...))
	}
	if j.sc.TooLong() {
		return nil, fail("line longer than %d bytes: %w", jsonl.DefaultMaxLine, ErrFormat)
	}
	v, err := j.p.ParseBytes(j.sc.Bytes())
	if err != nil {
		if len(bytes.TrimSpace(j.sc.Bytes())) == 0 {
			return nil, fail("blank line: %w", ErrFormat)
		}
		if hasNonFinite(j.sc.Bytes()) {
			return nil, fail("NaN or Infinity: %w", ErrNotFinite)
		}
		return nil, fail("%v: %w", err, ErrFormat)
	}
	if v.Type() != fastjson.TypeObject {
		return nil, fail("%s, want an object: %w", v.Type(), ErrFormat)
	}
	id, err := idText(v.Get("id"), &j.raw)
	if err != nil {
		return nil, fail("id: %v: %w", err, ErrFormat)
	}
	vec := v.Get("vector")
	if vec == nil || vec.Type() != fastjson.TypeArray {
		return nil, fail(`no "vector" array: %w`, ErrFormat)
	}
	vals, _ := vec.Array()
	if dst == nil {
		if len(vals) == 0 || len(vals) > MaxDim {
			return nil, fail("vector of %d values, want 1 to %d: %w", len(vals), MaxDim, ErrLength)
		}
		j.dim = len(vals)
		dst = make([]float32, j.dim)
	} else if len(vals) != j.dim {
		return nil, fail("vector of %d values, earlier rows have %d: %w", len(vals), j.dim, ErrLength)
	}
	for k, x := range vals {
		f, err := number32(x, &j.raw)
		if err != nil {
			return nil, fail("vector[%d]: %w", k, err)
		}
		dst[k] = f
	}
	if err := j.remember(id); err != nil {
		return nil, fail("%w", err)
	}
	if j.check != nil {
		if err := j.check(j.row, id); err != nil {
			return nil, fail("id %q: %w", id, err)
		}
	}
	j.row++
	return dst, nil
}

// remember refuses an id seen on an earlier line. Ids are kept as 128-bit
// hashes, so that memory stays at about 40 bytes a row whatever their
// length; two different ids collide with odds near n²/2¹²⁹.
func (j *JSONL) remember(id string) error {
	key := [2]uint64{maphash.String(j.s1, id), maphash.String(j.s2, id)}
	if at, ok := j.seen[key]; ok {
		return fmt.Errorf("id %q repeats line %d: %w", id, at, ErrDuplicate)
	}
	j.seen[key] = j.sc.Line()
	return nil
}

// idText returns an id as text: a string unescaped, a number as written.
func idText(v *fastjson.Value, buf *[]byte) (string, error) {
	if v == nil {
		return "", errors.New("missing")
	}
	switch v.Type() {
	case fastjson.TypeString:
		s, _ := v.StringBytes()
		if len(s) == 0 {
			return "", errors.New("empty string")
		}
		if !utf8.Valid(s) {
			return "", errors.New("not valid UTF-8")
		}
		return string(s), nil
	case fastjson.TypeNumber:
		*buf = v.MarshalTo((*buf)[:0])
		if !jsonl.IsNumber(*buf) {
			return "", fmt.Errorf("%q is not a JSON number", *buf)
		}
		return string(*buf), nil
	}
	return "", fmt.Errorf("%s, want a string or a number", v.Type())
}

// number32 returns a JSON number as the nearest float32, refusing NaN and
// values beyond float32's range.
func number32(v *fastjson.Value, buf *[]byte) (float32, error) {
	if v.Type() != fastjson.TypeNumber {
		return 0, fmt.Errorf("%s, want a number: %w", v.Type(), ErrFormat)
	}
	*buf = v.MarshalTo((*buf)[:0])
	if !jsonl.IsNumber(*buf) {
		// The parser lets NaN and Inf through as numbers.
		if bytes.ContainsAny(*buf, "nNiI") {
			return 0, fmt.Errorf("%s: %w", *buf, ErrNotFinite)
		}
		return 0, fmt.Errorf("%q is not a JSON number: %w", *buf, ErrFormat)
	}
	f, err := strconv.ParseFloat(string(*buf), 32)
	if err != nil || math.IsInf(f, 0) {
		return 0, fmt.Errorf("%s is beyond float32's range: %w", *buf, ErrNotFinite)
	}
	return float32(f), nil
}

// hasNonFinite reports whether a line the parser refused holds the NaN or
// Infinity that Python's json module writes for non-finite floats, so the
// error can say so.
func hasNonFinite(b []byte) bool {
	for i := range b {
		if b[i] == 'N' && i+3 <= len(b) && string(b[i:i+3]) == "NaN" {
			return true
		}
		if b[i] == 'I' && i+8 <= len(b) && string(b[i:i+8]) == "Infinity" {
			return true
		}
	}
	return false
}
