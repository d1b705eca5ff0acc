package external

import (
	"bufio"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// readCSV reads a header row naming the "id" or "row" column and the
// "score" column (names compared after trimming spaces), then a record a
// row; encoding/csv's rules apply (RFC 4180 quoting, blank lines skipped,
// every record as many fields as the header).
func (j *joiner) readCSV(br *bufio.Reader) error {
	r := csv.NewReader(br)
	r.ReuseRecord = true
	header, err := r.Read()
	if err == io.EOF {
		return nil // an empty file scores nothing
	}
	if err != nil {
		return j.csvError(err)
	}
	col := map[string]int{}
	for i, name := range header {
		name = strings.TrimSpace(name)
		if _, dup := col[name]; dup && (name == "id" || name == "row" || name == "score") {
			return fmt.Errorf("read %s:1: column %q twice: %w", j.name, name, ErrFormat)
		}
		col[name] = i
	}
	idCol, hasID := col["id"]
	rowCol, hasRow := col["row"]
	scoreCol, hasScore := col["score"]
	if !hasScore {
		return fmt.Errorf(`read %s:1: header %q has no "score" column: %w`, j.name, clip(strings.Join(header, ",")), ErrFormat)
	}
	if err := j.start(hasID, hasRow); err != nil {
		return fmt.Errorf("read %s:1: header: %w", j.name, err)
	}
	for {
		rec, err := r.Read()
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return j.csvError(err)
		}
		line, _ := r.FieldPos(0)
		fail := func(format string, a ...any) error {
			return fmt.Errorf("read %s:%d: %w", j.name, line, fmt.Errorf(format, a...))
		}
		score, err := csvScore(rec[scoreCol])
		if err != nil {
			return fail("score: %w", err)
		}
		var key string
		row := -1
		if j.s.JoinedBy == ByID {
			if key = rec[idCol]; key == "" {
				return fail("empty id: %w", ErrFormat)
			}
		} else if row, err = rowNumber(strings.TrimSpace(rec[rowCol])); err != nil {
			return fail("row: %w", err)
		}
		if err := j.add(int64(line), key, row, score); err != nil {
			return err
		}
	}
}

func (j *joiner) csvError(err error) error {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return fmt.Errorf("read %s:%d: %v: %w", j.name, pe.Line, pe.Err, ErrFormat)
	}
	return fmt.Errorf("read %s: %w", j.name, err)
}

// csvScore parses a score cell: a decimal or hexadecimal float (as Python's
// float.hex writes), finite.
func csvScore(cell string) (float64, error) {
	s := strings.TrimSpace(cell)
	if s == "" {
		return 0, fmt.Errorf("empty: %w", ErrFormat)
	}
	f, err := strconv.ParseFloat(s, 64)
	if err != nil && !errors.Is(err, strconv.ErrRange) {
		return 0, fmt.Errorf("%q is not a number: %w", clip(s), ErrFormat)
	}
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return 0, fmt.Errorf("%q: %w", clip(s), ErrNotFinite)
	}
	return f, nil
}
