package external

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"strings"

	"sluice/index/jsonl"
)

// Errors Read wraps, so callers can tell them apart with errors.Is; the
// message around them names the file and line.
var (
	ErrFormat    = errors.New("malformed scores")
	ErrNotFinite = errors.New("score is not a finite number")
	ErrNotInPool = errors.New("not in the pool")
	ErrDuplicate = errors.New("scored twice")
	ErrRepeated  = errors.New("id names several pool rows")
	ErrMissing   = errors.New("pool rows without a score")
)

// Join says how a file's records are matched to pool rows.
type Join int

const (
	// JoinAuto joins by the key the file has: "id" or "row". A file with
	// both must name one with ByID or ByRow.
	JoinAuto Join = iota
	// ByID joins a record's id to the pool rows Options.Lookup gives. Ids
	// are text: a JSON string unescaped, a JSON number as written (so 7
	// and "7" are one id, 7.0 another), a CSV cell as it is.
	ByID
	// ByRow joins a record's 0-based row number: row 0 is the pool's first
	// row.
	ByRow
)

func (j Join) String() string {
	switch j {
	case JoinAuto:
		return "auto"
	case ByID:
		return "id"
	case ByRow:
		return "row"
	}
	return fmt.Sprintf("Join(%d)", int(j))
}

// Missing says what a pool row without a score gets.
type Missing int

const (
	// MissingError makes any pool row without a score an error, listing
	// the first few and the count.
	MissingError Missing = iota
	// MissingLowest gives such rows Scores.Lowest, a score below every
	// score the file gives.
	MissingLowest
	// MissingSkip gives such rows the score NaN: never kept. Scores.Has
	// is false for them.
	MissingSkip
)

func (m Missing) String() string {
	switch m {
	case MissingError:
		return "error"
	case MissingLowest:
		return "lowest"
	case MissingSkip:
		return "skip"
	}
	return fmt.Sprintf("Missing(%d)", int(m))
}

// ParseMissing parses "error", "lowest" or "skip".
func ParseMissing(s string) (Missing, error) {
	for _, m := range []Missing{MissingError, MissingLowest, MissingSkip} {
		if s == m.String() {
			return m, nil
		}
	}
	return 0, fmt.Errorf("missing scores: %q, want error, lowest or skip", s)
}

// Options say how Read joins scores to pool rows.
type Options struct {
	// Rows is the number of pool rows.
	Rows int
	Join Join
	// Lookup returns the pool rows holding id; needed to join by id. An id
	// that names more than one pool row is an error (ErrRepeated): which
	// row the score was meant for cannot be known, so such a pool is
	// joined by row.
	Lookup  func(id string) (rows []int, ok bool)
	Missing Missing
}

// Scores are the scores joined to pool rows.
type Scores struct {
	// Score has one entry per pool row: the file's score, Lowest or NaN
	// for a row without one under MissingLowest or MissingSkip.
	Score []float64
	// Given counts the rows the file scores, Missing those it does not.
	Given, Missing int
	// Lowest is the score given to rows without one under MissingLowest:
	// the lowest score in the file minus 1; where that is no lower
	// (|lowest| ≥ 2⁵³), minus its own magnitude; where that overflows, the
	// next float64 below it (a lowest score of −MaxFloat64 is an error).
	// Zero when no row lacks a score.
	Lowest float64
	// JoinedBy is ByID or ByRow.
	JoinedBy Join
	present  []uint64
}

// Has reports whether the file gives pool row row a score.
func (s *Scores) Has(row int) bool {
	return row >= 0 && row < len(s.Score) && s.present[row/64]&(1<<(row%64)) != 0
}

// maxListed is how many offending ids or rows an error lists.
const maxListed = 5

// Read reads the scores file at path ("-" is standard input; gzip and zstd
// are read too) and joins its records to pool rows. The format is known
// from the first byte that is not white space: '{' is JSONL, one object a
// line,
//
//	{"id": "row-7", "score": 0.93}     or     {"row": 7, "score": 0.93}
//
// and anything else CSV with a header row naming an "id" or "row" column and
// a "score" column (other columns are ignored). Every record must name a
// pool row (else ErrNotInPool, listing the first few and the count), no
// row may be scored twice (ErrDuplicate), every score must be finite
// (ErrNotFinite), and the rows the file leaves out get what
// Options.Missing says. Memory: 8 bytes and a bit per pool row, and one
// line of the file.
func Read(path string, o Options) (*Scores, error) {
	r, _, err := jsonl.Open(path)
	if err != nil {
		return nil, fmt.Errorf("read scores: %w", err)
	}
	defer r.Close()
	return Decode(r, path, o)
}

// Decode is Read for an uncompressed stream named name in errors.
func Decode(r io.Reader, name string, o Options) (*Scores, error) {
	if o.Rows < 0 {
		return nil, fmt.Errorf("read %s: %d pool rows", name, o.Rows)
	}
	if o.Join == ByID && o.Lookup == nil {
		return nil, fmt.Errorf("read %s: joining by id needs a lookup of pool ids", name)
	}
	br := bufio.NewReaderSize(r, 64<<10)
	j := &joiner{name: name, o: o, s: &Scores{Score: make([]float64, o.Rows), present: make([]uint64, (o.Rows+63)/64)}}
	var err error
	if first, perr := firstByte(br); perr != nil {
		err = fmt.Errorf("read %s: %w", name, perr)
	} else if first == '{' {
		err = j.readJSONL(br)
	} else {
		err = j.readCSV(br)
	}
	if err != nil {
		return nil, err
	}
	return j.finish()
}

// firstByte drops a UTF-8 byte order mark from the start of br and returns
// the first byte that is not white space, without consuming it; 0 if there
// is none in the first 64 KiB.
func firstByte(br *bufio.Reader) (byte, error) {
	if b, _ := br.Peek(3); bytes.Equal(b, []byte("\xef\xbb\xbf")) {
		br.Discard(3)
	}
	b, err := br.Peek(br.Size())
	if err != nil && err != io.EOF && err != bufio.ErrBufferFull {
		return 0, err
	}
	if t := bytes.TrimLeft(b, " \t\r\n"); len(t) > 0 {
		return t[0], nil
	}
	return 0, nil
}

// joiner joins records to pool rows as they are read.
type joiner struct {
	name      string
	o         Options
	s         *Scores
	unknown   int
	listed    []string
	lowest    float64
	haveScore bool
}

// start fixes the join from the keys the file has.
func (j *joiner) start(hasID, hasRow bool) error {
	join := j.o.Join
	if join == JoinAuto {
		switch {
		case hasID && hasRow:
			return fmt.Errorf(`both "id" and "row": say which to join by: %w`, ErrFormat)
		case hasID:
			join = ByID
		case hasRow:
			join = ByRow
		default:
			return fmt.Errorf(`no "id" or "row" to join by: %w`, ErrFormat)
		}
	}
	if join == ByID && !hasID {
		return fmt.Errorf(`no "id" to join by: %w`, ErrFormat)
	}
	if join == ByRow && !hasRow {
		return fmt.Errorf(`no "row" to join by: %w`, ErrFormat)
	}
	if join == ByID && j.o.Lookup == nil {
		return fmt.Errorf("the file has ids, but joining by id needs a lookup of pool ids; join by row if the file's rows are the pool's")
	}
	j.s.JoinedBy = join
	return nil
}

// add records score for the pool rows of key (an id, or a row number as
// text) met at line.
func (j *joiner) add(line int64, key string, row int, score float64) error {
	if math.IsNaN(score) || math.IsInf(score, 0) {
		return fmt.Errorf("read %s:%d: %v: %w", j.name, line, score, ErrNotFinite)
	}
	if j.s.JoinedBy == ByID {
		rows, ok := j.o.Lookup(key)
		switch {
		case !ok || len(rows) == 0:
			j.notInPool(line, fmt.Sprintf("%q", key))
			return nil
		case len(rows) > 1:
			return fmt.Errorf("read %s:%d: id %q names %d pool rows (%s): join by row instead: %w", j.name, line, key, len(rows), listInts(rows), ErrRepeated)
		}
		row = rows[0]
		if row < 0 || row >= j.o.Rows {
			return fmt.Errorf("read %s:%d: the lookup gave id %q row %d, the pool has %d", j.name, line, key, row, j.o.Rows)
		}
	} else if row < 0 || row >= j.o.Rows {
		j.notInPool(line, fmt.Sprint(row))
		return nil
	}
	if j.s.Has(row) {
		what := fmt.Sprintf("row %d", row)
		if j.s.JoinedBy == ByID {
			what = fmt.Sprintf("id %q (pool row %d)", key, row)
		}
		return fmt.Errorf("read %s:%d: %s has a score on an earlier line: %w", j.name, line, what, ErrDuplicate)
	}
	j.s.present[row/64] |= 1 << (row % 64)
	j.s.Score[row] = score
	j.s.Given++
	if !j.haveScore || score < j.lowest {
		j.lowest, j.haveScore = score, true
	}
	return nil
}

func (j *joiner) notInPool(line int64, what string) {
	j.unknown++
	if len(j.listed) < maxListed {
		j.listed = append(j.listed, fmt.Sprintf("%s (line %d)", what, line))
	}
}

// finish reports what the file named that the pool lacks, then fills the
// rows without a score.
func (j *joiner) finish() (*Scores, error) {
	s := j.s
	if j.unknown > 0 {
		what := "ids"
		if s.JoinedBy == ByRow {
			what = fmt.Sprintf("rows (the pool has rows 0 to %d)", j.o.Rows-1)
		}
		return nil, fmt.Errorf("read %s: %d %s %w, the first: %s", j.name, j.unknown, what, ErrNotInPool, strings.Join(j.listed, ", "))
	}
	s.Missing = j.o.Rows - s.Given
	if s.Missing == 0 {
		return s, nil
	}
	var rows []int
	for r := 0; r < j.o.Rows && len(rows) < maxListed; r++ {
		if !s.Has(r) {
			rows = append(rows, r)
		}
	}
	switch j.o.Missing {
	case MissingLowest:
		if !j.haveScore {
			return nil, fmt.Errorf("read %s: no pool row has a score, so none is lowest: %w", j.name, ErrMissing)
		}
		low, ok := below(j.lowest)
		if !ok {
			return nil, fmt.Errorf("read %s: no finite score is below the file's lowest, %v", j.name, j.lowest)
		}
		s.Lowest = low
		fill(s, low)
	case MissingSkip:
		fill(s, math.NaN())
	default:
		return nil, fmt.Errorf("read %s: %d of %d %w, the first (0-based): %s; say what they get (lowest or skip)",
			j.name, s.Missing, j.o.Rows, ErrMissing, listInts(rows))
	}
	return s, nil
}

func fill(s *Scores, v float64) {
	for r := range s.Score {
		if !s.Has(r) {
			s.Score[r] = v
		}
	}
}

// below returns a finite number below low: low − 1 when that is below it,
// else low − |low|, else the next float64 down.
func below(low float64) (float64, bool) {
	for _, v := range []float64{low - 1, low - math.Abs(low), math.Nextafter(low, math.Inf(-1))} {
		if v < low && !math.IsInf(v, 0) {
			return v, true
		}
	}
	return 0, false
}

func listInts(v []int) string {
	var b strings.Builder
	for i, x := range v {
		if i == maxListed {
			b.WriteString(", …")
			break
		}
		if i > 0 {
			b.WriteString(", ")
		}
		fmt.Fprint(&b, x)
	}
	return b.String()
}
