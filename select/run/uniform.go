package run

import (
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"

	"sluice/index/jsonl"
)

// Kept formats: the rows byte for byte as they stand in the pool (the default), or every row in one
// schema, for trainers that read one.
const (
	KeptRows = "rows" // byte for byte
	KeptText = "text" // {"text", "source", "id", "score", "rank"}, and "set" with several target sets
	KeptChat = "chat" // {"messages": [{"role", "content"}...], "source", "id", "score", "rank"}, and "set"
)

// KeptFormats lists the kept formats, the default first.
func KeptFormats() []string { return []string{KeptRows, KeptText, KeptChat} }

// CheckFormats refuses a compression other than none, gzip or zstd, and a kept format not among
// KeptFormats, in the words of the flags that give them.
func CheckFormats(compress, kept string) error {
	for _, c := range []struct{ flag, v, ok string }{{"compress", compress, "none,gzip,zstd"}, {"kept-format", kept, strings.Join(KeptFormats(), ",")}} {
		if !slices.Contains(strings.Split(c.ok, ","), c.v) {
			return fmt.Errorf("--%s %q: give %s", c.flag, c.v, strings.ReplaceAll(c.ok, ",", ", "))
		}
	}
	return nil
}

// uniform rewrites kept rows, as CopyRows writes them, in one schema: the text of the first
// alternative of the index's text spec the row has in full, its fields joined by a blank line for
// text, and for chat every field but the last as the user's turn and the last as the assistant's
// (a row read from one field is one assistant turn; from one array path, its strings are turns in
// turn, user first). Beside the text: the pool file the row came from, its id, score and rank, and
// with several target sets the set that kept it.
type uniform struct {
	p      *picked
	format string
	alts   [][]*jsonl.Extractor // per alternative, one extractor per path
	arrays [][]bool             // whether each path walks an array
	w      io.Writer
	b      []byte
}

func (p *picked) newUniform(format string, w io.Writer) (*uniform, error) {
	sp, err := jsonl.ParseSpec(p.ix.Meta().Text)
	if err != nil {
		return nil, fmt.Errorf("kept as %s: the index's text spec: %w", format, err)
	}
	u := &uniform{p: p, format: format, w: w}
	for _, a := range sp.Alternatives() {
		var exs []*jsonl.Extractor
		var arr []bool
		for _, one := range a.Paths() {
			ex, err := jsonl.NewExtractor(one, "", "")
			if err != nil {
				return nil, fmt.Errorf("kept as %s: %w", format, err)
			}
			exs, arr = append(exs, ex), append(arr, strings.Contains(one.String(), "[]"))
		}
		u.alts, u.arrays = append(u.alts, exs), append(u.arrays, arr)
	}
	return u, nil
}

// fields reads the text of line through the first alternative it has in full: each path's strings.
func (u *uniform) fields(line []byte) ([][]string, int, error) {
	for ai, exs := range u.alts {
		var out [][]string
		for _, ex := range exs {
			var parts []string
			_, err := ex.Extract(line, func(p []byte) { parts = append(parts, string(p)) })
			if errors.Is(err, jsonl.ErrNoText) {
				out = nil
				break
			}
			if errors.Is(err, jsonl.ErrEmptyText) {
				err = nil // present, if empty: the index counted it so
			}
			if err != nil {
				return nil, 0, err
			}
			out = append(out, parts)
		}
		if out != nil {
			return out, ai, nil
		}
	}
	return nil, 0, errors.New("no alternative of the text spec reads it, though the index did")
}

// row writes kept row r, whose line is line, in the uniform schema.
func (u *uniform) row(r int, line []byte) error {
	fs, ai, err := u.fields(line)
	if err != nil {
		return fmt.Errorf("kept row %s: %w", u.p.ix.RowID(r), err)
	}
	b := u.b[:0]
	if u.format == KeptText {
		var text []byte
		for _, f := range fs {
			for _, s := range f {
				if len(text) > 0 {
					text = append(text, "\n\n"...)
				}
				text = append(text, s...)
			}
		}
		b = append(b, `{"text":`...)
		b = AppendJSONString(b, string(text))
	} else {
		b = append(b, `{"messages":`...)
		b = appendTurns(b, fs, u.arrays[ai])
	}
	b = append(b, `,"source":`...)
	b = AppendJSONString(b, u.p.ix.RowLocation(r).File)
	b = append(b, `,"id":`...)
	b = AppendJSONString(b, u.p.ix.RowID(r))
	b = append(b, `,"score":`...)
	if s := u.p.scores[r]; math.IsNaN(s) {
		b = append(b, "null"...)
	} else {
		b = strconv.AppendFloat(b, s, 'g', -1, 64)
	}
	b = append(b, `,"rank":`...)
	b = strconv.AppendInt(b, int64(u.p.dec[r].Rank), 10)
	if u.p.rowSet != nil {
		b = append(b, `,"set":`...)
		b = AppendJSONString(b, u.p.sets[u.p.rowSet[r]].ref.Name)
	}
	b = append(b, "}\n"...)
	u.b = b
	_, err = u.w.Write(b)
	return err
}

// appendTurns appends the chat turns of a row's fields.
func appendTurns(b []byte, fs [][]string, arrays []bool) []byte {
	type turn struct{ role, content string }
	var turns []turn
	join := func(parts []string) string { return strings.Join(parts, "\n\n") }
	switch {
	case len(fs) == 1 && arrays[0]:
		for i, s := range fs[0] {
			role := "user"
			if i%2 == 1 {
				role = "assistant"
			}
			turns = append(turns, turn{role, s})
		}
	case len(fs) == 1:
		turns = append(turns, turn{"assistant", join(fs[0])})
	default:
		var user []string
		for _, f := range fs[:len(fs)-1] {
			user = append(user, f...)
		}
		turns = append(turns, turn{"user", join(user)}, turn{"assistant", join(fs[len(fs)-1])})
	}
	b = append(b, '[')
	for i, t := range turns {
		if i > 0 {
			b = append(b, ',')
		}
		b = append(b, `{"role":`...)
		b = AppendJSONString(b, t.role)
		b = append(b, `,"content":`...)
		b = AppendJSONString(b, t.content)
		b = append(b, '}')
	}
	return append(b, ']')
}

// copyUniform writes the kept rows in format (KeptText or KeptChat) to w, in input order.
func (p *picked) copyUniform(format string, w io.Writer) error {
	u, err := p.newUniform(format, w)
	if err != nil {
		return err
	}
	lw := &lineWriter{rows: p.out.Kept, fn: u.row}
	if err := p.ix.CopyRows(lw, p.out.Kept); err != nil {
		return err
	}
	if lw.err == nil && lw.at != len(p.out.Kept) {
		return fmt.Errorf("kept as %s: %d rows copied of %d", format, lw.at, len(p.out.Kept))
	}
	return lw.err
}
