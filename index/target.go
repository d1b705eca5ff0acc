package index

import (
	"errors"
	"fmt"
	"runtime"
	"slices"
	"strconv"
	"sync"

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
// returned as rejects, not errors; an unreadable file is an error. Terms longer than MaxTermBytes
// are dropped, as an index drops them. Rows are analysed on all cores
// (each worker with its own analyzer of an's kind); the result is in file order all the same.
func ReadTargets(path, spec, idField string, an *analysis.Analyzer, maxRowBytes int) ([]Target, []Reject, error) {
	sp, err := jsonl.ParseSpec(spec)
	if err != nil {
		return nil, nil, fmt.Errorf("read target %s: %w", path, err)
	}
	if _, err := jsonl.NewExtractor(sp, idField, ""); err != nil {
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
	// A target set is small, so its lines are gathered first and analysed in parallel after.
	var lines []targetLine
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
		tl := targetLine{line: sc.Line(), off: sc.Offset(), n: sc.Len()}
		switch {
		case sc.TooLong():
			tl.reject = fmt.Sprintf("row longer than %d bytes", maxRowBytes)
		case isBlank(line):
			continue
		}
		tl.raw = slices.Clone(line)
		lines = append(lines, tl)
	}
	if err := sc.Err(); err != nil {
		return nil, nil, fmt.Errorf("read target %s: %w", path, err)
	}
	if sniff.End(); sniff.Err() != nil {
		return nil, nil, fmt.Errorf("read target %s: %w", path, sniff.Err())
	}

	nw := max(1, min(runtime.GOMAXPROCS(0), len(lines)/64))
	errs := make([]error, nw)
	var wg sync.WaitGroup
	for i := range nw {
		wg.Go(func() {
			wan := an
			if i > 0 {
				if wan, errs[i] = analysis.New(an.Name()); errs[i] != nil {
					return
				}
			}
			ex, _ := jsonl.NewExtractor(sp, idField, "") // checked above
			sc := &targetScratch{seen: map[string]string{}}
			for j := i * len(lines) / nw; j < (i+1)*len(lines)/nw; j++ {
				if lines[j].analyse(path, ex, wan, sc); lines[j].reject == "" {
					lines[j].raw = nil // only a reject needs its line from here on
				}
			}
		})
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return nil, nil, fmt.Errorf("read target %s: %w", path, err)
		}
	}
	var out []Target
	var rej []Reject
	for i := range lines {
		tl := &lines[i]
		if tl.reject != "" {
			rej = append(rej, newReject(path, tl.line, tl.off, tl.n, tl.reject, tl.raw))
			continue
		}
		out = append(out, tl.t)
	}
	return out, rej, nil
}

// targetLine is one non-blank line of a target file on its way to a Target or a Reject.
type targetLine struct {
	line   int64
	off    int64
	n      int // bytes in the file, newline included
	raw    []byte
	reject string
	t      Target
}

// targetScratch is one worker's space for analysing target rows, reused from row to row.
type targetScratch struct {
	cut   []byte   // for cutLongRuns
	terms []string // the row's terms, copied to fit into its Target
	// seen holds one string per distinct term, shared by every row holding it: a target set
	// repeats most of its terms, and a string each would cost its bytes again at every use.
	seen map[string]string
}

// analyse makes the line's Target, or its reject. Terms longer than MaxTermBytes are dropped, as
// the index drops them.
func (tl *targetLine) analyse(path string, ex *jsonl.Extractor, an *analysis.Analyzer, sc *targetScratch) {
	if tl.reject != "" {
		return
	}
	terms := sc.terms[:0]
	row, err := ex.Extract(tl.raw, func(part []byte) {
		part, sc.cut = cutLongRuns(part, sc.cut)
		an.Each(part, func(t []byte) {
			if len(t) > MaxTermBytes {
				return
			}
			s, ok := sc.seen[string(t)]
			if !ok {
				s = string(t)
				sc.seen[s] = s
			}
			terms = append(terms, s)
		})
	})
	sc.terms = terms
	if err != nil {
		tl.reject = reasonOf(err)
		if tl.n == len(tl.raw) && errors.Is(err, jsonl.ErrNotJSON) {
			tl.reject += "; it is the last line and has no newline: the file may have been cut short"
		}
		return
	}
	id := path + ":" + strconv.FormatInt(tl.line, 10)
	if row.HasID {
		id = string(row.ID)
	}
	tl.t = Target{ID: id, Line: tl.line, Terms: slices.Clone(terms), TextBytes: row.TextBytes}
}
