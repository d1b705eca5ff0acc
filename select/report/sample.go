package report

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"strconv"
	"unicode/utf8"

	"sluice/budget"
	"sluice/index/jsonl"
	"sluice/select/audit"
	"sluice/select/run"
)

// sampleRow is a row of scores.jsonl held for the sample.
type sampleRow struct {
	rank  int
	score run.Score
}

// decodeRow reads the line of scores.jsonl of row for the sample.
func decodeRow(row, rank int, line []byte) (sampleRow, error) {
	sr := sampleRow{rank: rank, score: run.Score{Row: row}}
	err := json.Unmarshal(line, &sr.score)
	return sr, err
}

// rankSample keeps the k rows with the smallest (or largest) rank numbers seen so far.
type rankSample struct {
	k       int
	largest bool
	rows    []sampleRow
}

// offer considers the row of scores.jsonl line, ranked rank, for the sample. The line is decoded
// only when the row is taken, which after the first few is rare.
func (s *rankSample) offer(row, rank int, line []byte) error {
	if s.k == 0 {
		return nil
	}
	at := len(s.rows)
	if at == s.k {
		// k is small (at most 100): a scan for the worst is cheaper to read than a heap.
		worst := 0
		for i, r := range s.rows {
			if (s.largest && r.rank < s.rows[worst].rank) || (!s.largest && r.rank > s.rows[worst].rank) {
				worst = i
			}
		}
		if (s.largest && rank <= s.rows[worst].rank) || (!s.largest && rank >= s.rows[worst].rank) {
			return nil
		}
		at = worst
	}
	sr, err := decodeRow(row, rank, line)
	if err != nil {
		return err
	}
	if at == len(s.rows) {
		s.rows = append(s.rows, sr)
	} else {
		s.rows[at] = sr
	}
	return nil
}

func (s *rankSample) sorted() []sampleRow {
	sort.Slice(s.rows, func(i, j int) bool { return s.rows[i].rank < s.rows[j].rank })
	return s.rows
}

// sampleSeed seeds the random sample of kept rows, so that a page made twice of the same run is
// the same page.
const sampleSeed = 1

// reservoir is a uniform random sample of the rows offered, drawn in one pass without knowing how
// many will come: the first k are taken, and the i-th after them replaces a random one of the k
// with probability k/i (Vitter, "Random sampling with a reservoir", ACM TOMS 11(1), 1985,
// Algorithm R).
type reservoir struct {
	k    int
	seen int64
	rng  *rand.Rand
	rows []sampleRow
}

func newReservoir(k int, seed uint64) reservoir {
	return reservoir{k: k, rng: rand.New(rand.NewPCG(seed, seed))}
}

func (r *reservoir) offer(row, rank int, line []byte) error {
	if r.k == 0 {
		return nil
	}
	r.seen++
	at := len(r.rows)
	if at == r.k {
		j := r.rng.Int64N(r.seen)
		if j >= int64(r.k) {
			return nil
		}
		at = int(j)
	}
	sr, err := decodeRow(row, rank, line)
	if err != nil {
		return err
	}
	if at == len(r.rows) {
		r.rows = append(r.rows, sr)
	} else {
		r.rows[at] = sr
	}
	return nil
}

// pick returns up to n of the sampled rows that are not among shown, best rank first. The
// reservoir is shuffled first, so those left out for being shown elsewhere take no place of
// their own: what remains is still a uniform sample of the rows not shown, as long as the
// reservoir held n of them (it holds 3n rows and at most 2n are shown elsewhere).
func (r *reservoir) pick(n int, shown ...[]sampleRow) []sampleRow {
	skip := map[int]bool{}
	for _, rows := range shown {
		for _, sr := range rows {
			skip[sr.score.Row] = true
		}
	}
	r.rng.Shuffle(len(r.rows), func(i, j int) { r.rows[i], r.rows[j] = r.rows[j], r.rows[i] })
	var out []sampleRow
	for _, sr := range r.rows {
		if len(out) == n {
			break
		}
		if !skip[sr.score.Row] {
			out = append(out, sr)
		}
	}
	sort.Slice(out, func(i, j int) bool { return out[i].rank < out[j].rank })
	return out
}

// errNoText says a row holds no text where the index's text spec looks, which the index would
// have refused: the row is shown as read.
var errNoText = errors.New("no text in any of the index's text fields")

// textBlock is one text field of a sample row, as read.
type textBlock struct {
	Label string
	Text  string
	More  string // what was cut from the end, in words; "" when nothing was
}

// rowTexter reads a pool row's text fields one path of the index's text spec at a time, so each
// can be shown under its own name.
type rowTexter struct {
	names []string
	ex    []*jsonl.Extractor
}

// newRowTexter returns the texter of the text spec spec; with an error, rows are shown raw.
func newRowTexter(spec string) (*rowTexter, error) {
	sp, err := jsonl.ParseSpec(spec)
	if err != nil {
		return nil, err
	}
	t := &rowTexter{}
	// Every path of every alternative, once: a row shows the fields it has, each under its name.
	for _, a := range sp.Alternatives() {
		for _, one := range a.Paths() {
			name := one.String()
			if slices.Contains(t.names, name) {
				continue
			}
			ex, err := jsonl.NewExtractor(one, "", "")
			if err != nil {
				return nil, err
			}
			t.names, t.ex = append(t.names, name), append(t.ex, ex)
		}
	}
	return t, nil
}

// Limits on the text shown for a sample row: the rows of a pool can be megabytes long.
const (
	sampleBlockBytes = 600 // of each text part
	sampleBlocks     = 8   // text parts
	sampleRawBytes   = 700 // of a raw line, when the row cannot be read as text
)

// blocks reads the text fields of line: each path's strings, in spec order, blank ones left out.
func (t *rowTexter) blocks(line []byte) ([]textBlock, string, error) {
	var out []textBlock
	hidden := 0
	for i, ex := range t.ex {
		var parts []string
		_, err := ex.Extract(line, func(p []byte) {
			if len(bytes.TrimSpace(p)) > 0 {
				parts = append(parts, string(p))
			}
		})
		if errors.Is(err, jsonl.ErrNoText) || errors.Is(err, jsonl.ErrEmptyText) {
			continue // a field this row leaves out or empty, as the index allowed
		}
		if err != nil {
			return nil, "", err
		}
		for j, p := range parts {
			if len(out) == sampleBlocks {
				hidden++
				continue
			}
			label := t.names[i]
			if len(parts) > 1 {
				label += fmt.Sprintf(" (%d of %d)", j+1, len(parts))
			}
			b := textBlock{Label: clean(label)}
			cut, rest := cutBytes(p, sampleBlockBytes)
			b.Text = clean(cut)
			if rest > 0 {
				b.More = fmt.Sprintf("%d more characters", rest)
			}
			out = append(out, b)
		}
	}
	if len(out) == 0 {
		return nil, "", errNoText
	}
	var more string
	if hidden > 0 {
		more = fmt.Sprintf("%d more text parts", hidden)
	}
	return out, more, nil
}

// cutBytes cuts s to at most n bytes at a rune's start, and says how many runes were cut.
func cutBytes(s string, n int) (string, int) {
	if len(s) <= n {
		return s, 0
	}
	for n > 0 && !utf8.RuneStart(s[n]) {
		n--
	}
	return s[:n], utf8.RuneCountInString(s[n:])
}

type partView struct {
	Term, TF, DF, IDF, TFPart, Weight, Contribution string
	BarW                                            float64
}

type wordView struct {
	Token, At, Target, Pool, Part string
	BarW                          float64
	Neg                           bool
}

type sampleView struct {
	Sample                                        string // which sample: top, above, below, random
	ID, Source, Score, Rank, Fate, Tokens, Ledger string
	Kept                                          bool
	Blocks                                        []textBlock
	MoreBlocks                                    string
	Raw                                           string // the line as read, when it is not shown as text
	RawCut                                        bool
	RawNote                                       string
	Parts                                         []partView
	MoreParts                                     string
	Words                                         []wordView
	TargetOnly                                    bool
	Targets                                       []audit.Target
}

// sampleParts is how many of a sample row's terms are listed, largest contribution first.
const sampleParts = 8

// explainSample explains each sample row for the page, with its text.
func explainSample(x *audit.Explainer, tx *rowTexter, txErr error, sample string, rows []sampleRow) ([]sampleView, error) {
	var out []sampleView
	nm := x.Manifest().Settings.Ngram
	for _, sr := range rows {
		r := sr.score
		w, err := x.Explain(r, 3)
		if err != nil {
			return nil, err
		}
		v := sampleView{Sample: sample, ID: clean(w.ID), Source: clean(w.Source), Score: "none", Rank: strconv.Itoa(w.Rank),
			Fate: clean(w.Why), Kept: w.Kept, Tokens: strconv.FormatInt(w.Tokens, 10), Ledger: budget.FormatFLOPs(w.Ledger),
			TargetOnly: nm != nil && nm.TargetOnly}
		if !math.IsNaN(w.Score) {
			v.Score = strconv.FormatFloat(w.Score, 'g', 6, 64)
		}
		v.Parts, v.MoreParts = partViews(w)
		v.Words = wordViews(w.Words)
		for _, t := range w.Targets {
			t.ID = clean(t.ID)
			for i := range t.Shared {
				t.Shared[i] = clean(t.Shared[i])
			}
			v.Targets = append(v.Targets, t)
		}
		var buf bytes.Buffer
		if err := x.Index().CopyRows(&buf, []int{r.Row}); err != nil {
			v.RawNote = "the row's text could not be read: " + clean(err.Error())
		} else {
			line := bytes.TrimRight(buf.Bytes(), "\r\n")
			if txErr == nil {
				v.Blocks, v.MoreBlocks, err = tx.blocks(line)
			} else {
				err = txErr
			}
			if err != nil {
				cut, rest := cutBytes(string(line), sampleRawBytes)
				v.Raw, v.RawCut = clean(cut), rest > 0
				v.RawNote = "the row is shown as read, since its text fields could not be read: " + clean(err.Error())
			}
		}
		out = append(out, v)
	}
	return out, nil
}

// partViews shows a lexical row's terms, largest contribution first.
func partViews(w audit.Row) ([]partView, string) {
	parts := slices.Clone(w.Parts)
	sort.SliceStable(parts, func(i, j int) bool { return parts[i].Contribution > parts[j].Contribution })
	var rest, top float64
	if len(parts) > 0 {
		top = parts[0].Contribution
	}
	var out []partView
	for i, p := range parts {
		if i >= sampleParts {
			rest += p.Contribution
			continue
		}
		bw := 0.0
		if top > 0 {
			bw = p.Contribution / top * 80
		}
		out = append(out, partView{Term: clean(p.Term), TF: strconv.Itoa(p.TF), DF: strconv.Itoa(p.DF), IDF: fmt.Sprintf("%.3f", p.IDF),
			TFPart: fmt.Sprintf("%.3f", p.TFPart), Weight: fmt.Sprintf("%.4g", p.QueryWeight), Contribution: fmt.Sprintf("%.4g", p.Contribution), BarW: bw})
	}
	var more string
	if len(parts) > sampleParts {
		more = fmt.Sprintf("%d more terms add %.4g", len(parts)-sampleParts, rest)
	}
	return out, more
}

// wordViews shows an n-gram row's tokens that moved its score most, as audit orders them.
func wordViews(ws []audit.Word) []wordView {
	var top float64
	for _, w := range ws {
		top = max(top, math.Abs(w.Part))
	}
	var out []wordView
	for _, w := range ws {
		bw := 0.0
		if top > 0 {
			bw = math.Abs(w.Part) / top * 80
		}
		out = append(out, wordView{Token: clean(w.Token), At: strconv.Itoa(w.Pos), Target: fmt.Sprintf("%.3f", w.Target),
			Pool: fmt.Sprintf("%.3f", w.Pool), Part: fmt.Sprintf("%+.4f", w.Part), BarW: bw, Neg: w.Part < 0})
	}
	return out
}

// SampleRows is the number of rows the page shows with their explanations, in all its samples.
func (rep *Page) SampleRows() int {
	return len(rep.Top) + len(rep.Above) + len(rep.Below) + len(rep.Random)
}
