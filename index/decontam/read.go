package decontam

import (
	"fmt"
	"strings"

	"github.com/valyala/fastjson"

	"sluice/index/jsonl"
)

// ReadFiles reads the rows of the evaluation files into a Set of their word n-grams of n words (0
// means DefaultN): each non-blank line's text (the string values of a JSON object, at any depth,
// joined by newlines, or the line itself when it is not one), cut into Words. A Hit names its file
// by its place in files. Lines longer than maxRowBytes are refused, naming the file and line. A
// file without rows is an error: excluding nothing from it is not what was asked for.
func ReadFiles(files []string, n, maxRowBytes int) (*Set, error) {
	if n == 0 {
		n = DefaultN
	}
	b, err := NewBuilder(n)
	if err != nil {
		return nil, err
	}
	var words []string
	for i, f := range files {
		rows, err := eachRow(f, maxRowBytes, func(line int64, text string) error {
			words = Words(words[:0], text)
			return b.Add(i, line, words)
		})
		if err != nil {
			return nil, err
		}
		if rows == 0 {
			return nil, fmt.Errorf("read evaluation file %s: it holds no rows: nothing to exclude; nothing was written", f)
		}
	}
	return b.Set(), nil
}

// eachRow calls fn with the text of every non-blank line of an evaluation file.
func eachRow(path string, maxRowBytes int, fn func(line int64, text string) error) (int, error) {
	rc, _, err := jsonl.Open(path)
	if err != nil {
		return 0, fmt.Errorf("read evaluation file %s: %w", path, err)
	}
	defer rc.Close()
	sc := jsonl.NewScanner(rc, maxRowBytes)
	rows := 0
	for sc.Scan() {
		line := strings.TrimSpace(string(sc.Bytes()))
		if line == "" {
			continue
		}
		rows++
		if err := fn(sc.Line(), jsonText(line)); err != nil {
			return rows, fmt.Errorf("read evaluation file %s:%d: %w", path, sc.Line(), err)
		}
	}
	if err := sc.Err(); err != nil {
		return rows, fmt.Errorf("read evaluation file %s: %w", path, err)
	}
	return rows, nil
}

// jsonText is the text of an evaluation row: the string values of a JSON object, at any depth,
// joined by newlines, or the line itself when it is not one.
func jsonText(line string) string {
	v, err := fastjson.Parse(line)
	if err != nil || v.Type() != fastjson.TypeObject {
		return line
	}
	var b strings.Builder
	var walk func(v *fastjson.Value)
	walk = func(v *fastjson.Value) {
		switch v.Type() {
		case fastjson.TypeString:
			if b.Len() > 0 {
				b.WriteByte('\n')
			}
			b.Write(v.GetStringBytes())
		case fastjson.TypeArray:
			for _, e := range v.GetArray() {
				walk(e)
			}
		case fastjson.TypeObject:
			v.GetObject().Visit(func(_ []byte, e *fastjson.Value) { walk(e) })
		}
	}
	walk(v)
	return b.String()
}
