package run

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"unicode/utf8"

	"sluice/budget"
)

// Ledger is ledger.json as a pick writes it (budget.Ledger's JSON form).
type Ledger struct {
	Budget    float64       `json:"budget"`
	Lines     []budget.Line `json:"lines"`
	Selection float64       `json:"selection_flops"`
	Training  float64       `json:"training_flops"`
	Total     float64       `json:"total_flops"`
	Left      float64       `json:"left_flops"`
	Stop      string        `json:"stop"`
	Notes     []string      `json:"notes"`
}

// ReadLedger reads the ledger of the run folder dir.
func ReadLedger(dir string) (*Ledger, error) {
	path := filepath.Join(dir, LedgerFile)
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("read run %s: %w", dir, err)
	}
	var l Ledger
	if err := json.Unmarshal(b, &l); err != nil {
		return nil, fmt.Errorf("read %s: %w", path, err)
	}
	return &l, nil
}

// Score is one line of scores.jsonl, with its row number: the line's place in the file from 0,
// which is the row's place among the indexed rows.
type Score struct {
	Row    int     `json:"-"`
	ID     string  `json:"id"`
	Score  float64 `json:"score"`
	Rank   int     `json:"rank"`
	Kept   bool    `json:"kept"`
	Reason string  `json:"reason,omitempty"`
	Tokens int64   `json:"tokens"`
	Target *string `json:"target"`        // the target row that contributed most; nil when none or not asked
	Set    string  `json:"set,omitempty"` // with several target sets, the set whose score, rank and target these are
	Ledger float64 `json:"ledger"`
	// DuplicateOf is, for a row dropped as a duplicate, the id of the row of its cluster kept
	// instead; Contaminated and NGram are, for a row that shares an n-gram with an evaluation
	// file, that file's row (file:line) and the n-gram.
	DuplicateOf  string `json:"duplicate_of,omitempty"`
	Contaminated string `json:"contaminated,omitempty"`
	NGram        string `json:"ngram,omitempty"`
}

// UnmarshalJSON reads a line of scores.jsonl; a row the method did not score (it fell at an
// earlier stage, or had no score brought in) has "score": null, read as NaN.
func (s *Score) UnmarshalJSON(b []byte) error {
	type plain Score
	var v struct {
		*plain
		Score *float64 `json:"score"`
	}
	v.plain = (*plain)(s)
	if err := json.Unmarshal(b, &v); err != nil {
		return err
	}
	s.Score = math.NaN()
	if v.Score != nil {
		s.Score = *v.Score
	}
	return nil
}

// EachScoreLine calls fn with every line of the run's scores.jsonl and its row number. The bytes
// are only valid during the call. An error of fn comes back with the file and line it was on.
// Callers that need only a few fields parse them from the line themselves, so that a pass over
// millions of rows does not decode every field.
//
// A line is read whatever its length: it holds up to three ids (the row's, the row kept in its
// place, its best target row), each as long as the line the index or the target reader took it
// from (--max-row-bytes) and up to six times that once escaped, so no fixed limit would fit every
// run that a pick can write. Memory is one buffer of the longest line.
func EachScoreLine(dir string, fn func(row int, line []byte) error) error {
	path := filepath.Join(dir, ScoresFile)
	f, err := os.Open(path)
	if err != nil {
		return fmt.Errorf("read run %s: %w", dir, err)
	}
	defer f.Close()
	br := bufio.NewReaderSize(f, 1<<16)
	var long []byte // a line longer than br's buffer, gathered
	for row := 0; ; {
		line, err := br.ReadSlice('\n')
		if errors.Is(err, bufio.ErrBufferFull) {
			long = append(long, line...)
			continue
		}
		if err != nil && !errors.Is(err, io.EOF) {
			return fmt.Errorf("read %s: %w", path, err)
		}
		if len(long) > 0 {
			line = append(long, line...)
			long = line[:0]
		}
		if len(line) > 0 {
			line = bytes.TrimSuffix(line, []byte("\n"))
			if ferr := fn(row, bytes.TrimSuffix(line, []byte("\r"))); ferr != nil {
				return fmt.Errorf("read %s:%d: %w", path, row+1, ferr)
			}
			row++
		}
		if err != nil {
			return nil
		}
	}
}

// EachScore calls fn with every line of the run's scores.jsonl, decoded.
func EachScore(dir string, fn func(s Score) error) error {
	return EachScoreLine(dir, func(row int, line []byte) error {
		s := Score{Row: row}
		if err := json.Unmarshal(line, &s); err != nil {
			return err
		}
		return fn(s)
	})
}

// FindScores reads the lines of the run's scores.jsonl whose ids are among ids, every one of them
// when an id repeats, keyed by id.
func FindScores(dir string, ids []string) (map[string][]Score, error) {
	want := map[string][]Score{}
	for _, id := range ids {
		want[id] = nil
	}
	err := EachScoreLine(dir, func(row int, line []byte) error {
		id, ok := plainID(line)
		if !ok {
			var probe struct {
				ID string `json:"id"`
			}
			if err := json.Unmarshal(line, &probe); err != nil {
				return err
			}
			id = []byte(probe.ID)
		}
		if _, ok := want[string(id)]; !ok {
			return nil
		}
		s := Score{Row: row}
		if err := json.Unmarshal(line, &s); err != nil {
			return err
		}
		if _, ok := want[s.ID]; ok { // differs from id only where a line repeats its "id" key
			want[s.ID] = append(want[s.ID], s)
		}
		return nil
	})
	return want, err
}

// plainID returns the id of a scores.jsonl line as a pick writes it, `{"id":"…",` first, when the
// string holds no escape and is valid UTF-8, so that its bytes are the id; ok is false otherwise,
// and the line is then decoded. Decoding every line to find a few made why take 12.7 s on a run of
// 8 million rows, 84 % of it in encoding/json.
func plainID(line []byte) (id []byte, ok bool) {
	const head = `{"id":"`
	if !bytes.HasPrefix(line, []byte(head)) {
		return nil, false
	}
	rest := line[len(head):]
	end := bytes.IndexAny(rest, `"\`)
	if end < 0 || rest[end] != '"' || end+1 >= len(rest) || rest[end+1] != ',' {
		return nil, false
	}
	id = rest[:end]
	for _, c := range id {
		if c < 0x20 {
			return nil, false
		}
	}
	return id, utf8.Valid(id)
}
