package index

import (
	"errors"
	"fmt"
	"strconv"

	"sluice/index/analysis"
	"sluice/index/jsonl"
)

// Target is one analysed row of a target set.
type Target struct {
	ID        string
	Line      int64
	Terms     []string
	TextBytes int
}

// ReadTargets reads a target set with the given text spec and analyzer. Rows that cannot be read are
// returned as rejects, not errors; an unreadable file is an error.
func ReadTargets(path, spec, idField string, an *analysis.Analyzer, maxRowBytes int) ([]Target, []Reject, error) {
	sp, err := jsonl.ParseSpec(spec)
	if err != nil {
		return nil, nil, fmt.Errorf("read target %s: %w", path, err)
	}
	if maxRowBytes <= 0 {
		maxRowBytes = DefaultMaxRowBytes
	}
	rc, _, err := jsonl.Open(path)
	if err != nil {
		return nil, nil, pathErr("read target", err)
	}
	defer rc.Close()
	sc := jsonl.NewScanner(rc, maxRowBytes)
	ex, err := jsonl.NewExtractor(sp, idField, "")
	if err != nil {
		return nil, nil, fmt.Errorf("read target %s: %w", path, err)
	}
	var out []Target
	var rej []Reject
	var sniff jsonl.Sniffer
	sniffing := true
	for sc.Scan() {
		line := sc.Bytes()
		if sniffing && sniff.Line(line) {
			sniffing = false
			if err := sniff.Err(); err != nil {
				return nil, nil, fmt.Errorf("read target %s: %w", path, err)
			}
		}
		bad := func(reason string) {
			rej = append(rej, newReject(path, sc.Line(), sc.Offset(), sc.Len(), reason, line))
		}
		if sc.TooLong() {
			bad(fmt.Sprintf("row longer than %d bytes", maxRowBytes))
			continue
		}
		if isBlank(line) {
			continue
		}
		var terms []string
		row, err := ex.Extract(line, func(part []byte) {
			an.Each(part, func(t []byte) { terms = append(terms, string(t)) })
		})
		if err != nil {
			reason := reasonOf(err)
			if sc.Len() == len(line) && errors.Is(err, jsonl.ErrNotJSON) {
				reason += "; it is the last line and has no newline: the file may have been cut short"
			}
			bad(reason)
			continue
		}
		id := path + ":" + strconv.FormatInt(sc.Line(), 10)
		if row.HasID {
			id = string(row.ID)
		}
		out = append(out, Target{ID: id, Line: sc.Line(), Terms: terms, TextBytes: row.TextBytes})
	}
	if err := sc.Err(); err != nil {
		return nil, nil, fmt.Errorf("read target %s: %w", path, err)
	}
	if sniff.End(); sniff.Err() != nil {
		return nil, nil, fmt.Errorf("read target %s: %w", path, sniff.Err())
	}
	return out, rej, nil
}
