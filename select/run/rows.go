package run

import (
	"bytes"
	"context"
	"fmt"

	"sluice/index"
	"sluice/index/analysis"
	"sluice/index/jsonl"
)

// rowChunk is how many rows of a plain source are copied at a time: enough that a call's set-up is
// nothing beside its reads, few enough that the row list stays small whatever the pool.
const rowChunk = 1 << 16

// eachRowTerms reads the given rows (ascending; nil for every row) from the pool's files again,
// checked against the index's checksums, and calls fn with each row's analysed terms, extracted
// with the index's text spec and analyzer, so that a model-based method sees the tokens the
// lexical methods see. The terms are only valid during the call.
func eachRowTerms(ctx context.Context, ix *index.Index, rows []int, fn func(row int, terms []string) error) error {
	an, err := analysis.New(ix.Meta().Analyzer)
	if err != nil {
		return err
	}
	var terms []string
	return eachRowText(ctx, ix, rows, func(row int, text []byte) error {
		terms = terms[:0]
		an.Each(text, func(t []byte) { terms = append(terms, string(t)) })
		return fn(row, terms)
	})
}

// eachRowText reads the given rows (ascending; nil for every row) from the pool's files again,
// checked against the index's checksums, and calls fn with each row's text fields, extracted with
// the index's text spec and joined by newlines. The text is only valid during the call.
func eachRowText(ctx context.Context, ix *index.Index, rows []int, fn func(row int, text []byte) error) error {
	m := ix.Meta()
	sp, err := jsonl.ParseSpec(m.Text)
	if err != nil {
		return fmt.Errorf("read pool rows: %w", err)
	}
	ex, err := jsonl.NewExtractor(sp, "", "")
	if err != nil {
		return fmt.Errorf("read pool rows: %w", err)
	}
	var text []byte
	lw := &lineWriter{fn: func(row int, line []byte) error {
		text = text[:0]
		if _, err := ex.Extract(line, func(part []byte) {
			if len(text) > 0 {
				text = append(text, '\n')
			}
			text = append(text, part...)
		}); err != nil {
			loc := ix.RowLocation(row)
			return fmt.Errorf("read %s:%d again: %w", loc.File, loc.Line, err)
		}
		return fn(row, text)
	}}
	n := ix.NumRows()
	next := func(i int) int { return i }
	total := n
	if rows != nil {
		next = func(i int) int { return rows[i] }
		total = len(rows)
	}
	for i := 0; i < total; {
		if err := ctx.Err(); err != nil {
			return err
		}
		// One call per source when it is compressed (each call decompresses it from its start),
		// chunks of a plain one (rows are read where they stand).
		src := ix.RowLocation(next(i)).Source
		compressed := m.Sources[src].Compression != jsonl.None.String()
		chunk := lw.rows[:0]
		for ; i < total && ix.RowLocation(next(i)).Source == src && (compressed || len(chunk) < rowChunk); i++ {
			chunk = append(chunk, next(i))
		}
		lw.rows, lw.at = chunk, 0
		if err := ix.CopyRows(lw, chunk); err != nil {
			return err
		}
		if lw.err != nil {
			return lw.err
		}
	}
	return nil
}

// lineWriter turns the rows CopyRows writes, one line each, back into calls of fn with their row
// numbers.
type lineWriter struct {
	rows    []int
	at      int
	partial []byte
	fn      func(row int, line []byte) error
	err     error
}

func (w *lineWriter) Write(b []byte) (int, error) {
	if w.err != nil {
		return 0, w.err
	}
	n := len(b)
	for len(b) > 0 {
		i := bytes.IndexByte(b, '\n')
		if i < 0 {
			w.partial = append(w.partial, b...)
			break
		}
		line := b[:i+1]
		if len(w.partial) > 0 {
			line = append(w.partial, line...)
			w.partial = w.partial[:0]
		}
		b = b[i+1:]
		if w.at >= len(w.rows) {
			w.err = fmt.Errorf("read pool rows: more lines than rows asked for")
			return 0, w.err
		}
		if w.err = w.fn(w.rows[w.at], line); w.err != nil {
			return 0, w.err
		}
		w.at++
	}
	return n, nil
}
