package external

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"math"
	"strconv"
	"unicode/utf8"

	"github.com/valyala/fastjson"

	"sluice/index/jsonl"
)

// readJSONL reads one {"id"|"row": …, "score": …} object a line; blank
// lines are skipped.
func (j *joiner) readJSONL(br *bufio.Reader) error {
	sc := jsonl.NewScanner(br, 0)
	var p fastjson.Parser
	var buf []byte
	started := false
	for sc.Scan() {
		line := sc.Line()
		fail := func(format string, a ...any) error {
			return fmt.Errorf("read %s:%d: %w", j.name, line, fmt.Errorf(format, a...))
		}
		if sc.TooLong() {
			return fail("line longer than %d bytes: %w", jsonl.DefaultMaxLine, ErrFormat)
		}
		text := sc.Bytes()
		if len(bytes.TrimSpace(text)) == 0 {
			continue
		}
		v, err := p.ParseBytes(text)
		if err != nil {
			if bytes.Contains(text, []byte("Infinity")) || bytes.Contains(text, []byte("NaN")) {
				return fail("NaN or Infinity: %w", ErrNotFinite)
			}
			return fail("%v: %w", err, ErrFormat)
		}
		if v.Type() != fastjson.TypeObject {
			return fail("%s, want an object: %w", v.Type(), ErrFormat)
		}
		idv, rowv := v.Get("id"), v.Get("row")
		if !started {
			if err := j.start(idv != nil, rowv != nil); err != nil {
				return fail("%w", err)
			}
			started = true
		}
		score, err := jsonScore(v.Get("score"), &buf)
		if err != nil {
			return fail("score: %w", err)
		}
		var key string
		row := -1
		if j.s.JoinedBy == ByID {
			if key, err = jsonID(idv, &buf); err != nil {
				return fail("id: %w", err)
			}
		} else if row, err = jsonRow(rowv, &buf); err != nil {
			return fail("row: %w", err)
		}
		if err := j.add(line, key, row, score); err != nil {
			return err
		}
	}
	if err := sc.Err(); err != nil {
		return fmt.Errorf("read %s: %w", j.name, err)
	}
	return nil
}

// jsonID returns an id as text: a string unescaped, a number as written.
func jsonID(v *fastjson.Value, buf *[]byte) (string, error) {
	if v == nil {
		return "", fmt.Errorf("missing: %w", ErrFormat)
	}
	switch v.Type() {
	case fastjson.TypeString:
		s, _ := v.StringBytes()
		if len(s) == 0 || !utf8.Valid(s) {
			return "", fmt.Errorf("empty or not valid UTF-8: %w", ErrFormat)
		}
		return string(s), nil
	case fastjson.TypeNumber:
		*buf = v.MarshalTo((*buf)[:0])
		if !jsonl.IsNumber(*buf) {
			return "", fmt.Errorf("%q is not a JSON number: %w", *buf, ErrFormat)
		}
		return string(*buf), nil
	}
	return "", fmt.Errorf("%s, want a string or a number: %w", v.Type(), ErrFormat)
}

// jsonRow returns a row number, a non-negative JSON integer.
func jsonRow(v *fastjson.Value, buf *[]byte) (int, error) {
	if v == nil || v.Type() != fastjson.TypeNumber {
		return 0, fmt.Errorf("want a non-negative integer: %w", ErrFormat)
	}
	*buf = v.MarshalTo((*buf)[:0])
	return rowNumber(string(*buf))
}

// rowNumber parses a 0-based row number written as decimal digits.
func rowNumber(s string) (int, error) {
	n, err := strconv.ParseUint(s, 10, 63)
	if err != nil || n > math.MaxInt32*(1<<31) || (len(s) > 1 && s[0] == '0') {
		return 0, fmt.Errorf("%q, want a non-negative integer: %w", clip(s), ErrFormat)
	}
	return int(n), nil
}

// jsonScore returns a score, a finite JSON number.
func jsonScore(v *fastjson.Value, buf *[]byte) (float64, error) {
	if v == nil {
		return 0, fmt.Errorf("missing: %w", ErrFormat)
	}
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
	f, err := strconv.ParseFloat(string(*buf), 64)
	if err != nil && !errors.Is(err, strconv.ErrRange) {
		return 0, fmt.Errorf("%q: %w", *buf, ErrFormat)
	}
	if math.IsInf(f, 0) {
		return 0, fmt.Errorf("%s is beyond float64's range: %w", *buf, ErrNotFinite)
	}
	return f, nil
}

// clip shortens s for an error message.
func clip(s string) string {
	if len(s) > 40 {
		return s[:40] + "…"
	}
	return s
}
