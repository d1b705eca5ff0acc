package index

import (
	"bytes"
	"encoding/json"
	"fmt"
	"slices"
	"strings"

	"sluice/index/decontam"
)

// contamFile lists the rows that share an n-gram with the evaluation files the build was given.
const contamFile = "contaminated.jsonl"

// Excluded is what meta.json says of the evaluation files a build checked every row against
// (Options.Exclude), so that a pick excluding the same files, by content, with the same n-gram
// length takes the rows found instead of reading the pool again.
type Excluded struct {
	N     int            `json:"ngram"` // words per n-gram
	Files []ExcludedFile `json:"files"`
	// Rows counts the rows that share an n-gram with a file; Words the words checked, every row's,
	// the work a pick would charge for the check.
	Rows  int64 `json:"rows"`
	Words int64 `json:"words"`
	// Longest is the most words a row had: an n-gram longer than every row matches only rows that
	// equal an evaluation row whole, which the build warns of.
	Longest int `json:"longest_row_words"`
}

// ExcludedFile is one evaluation file as the build read it.
type ExcludedFile struct {
	Path   string `json:"path"` // as given
	SHA256 string `json:"sha256"`
}

// contamLine is a line of contaminated.jsonl: a row, and the evaluation row and n-gram it shares.
type contamLine struct {
	Row   int64  `json:"row"`
	File  int    `json:"file"` // its place in Excluded.Files
	Line  int64  `json:"line"`
	At    int    `json:"at"`    // where the n-gram starts among the row's words
	NGram string `json:"ngram"` // the shared words, joined by single spaces
}

// rowHit is a row of a batch, by its place among the batch's rows, that shares an n-gram.
type rowHit struct {
	i   int
	hit decontam.Hit
}

// startExclude reads the evaluation files of Options.Exclude into the set the workers check rows
// against, and records them in meta.json.
func (b *builder) startExclude() error {
	n := b.opt.ExcludeN
	if n == 0 {
		n = decontam.DefaultN
	}
	set, err := decontam.ReadFiles(b.opt.Exclude, n, b.opt.MaxRowBytes)
	if err != nil {
		return fmt.Errorf("build index: --exclude: %w", err)
	}
	ex := &Excluded{N: n}
	for _, f := range b.opt.Exclude {
		sum, err := FileSHA256(f)
		if err != nil {
			return fmt.Errorf("build index: --exclude: %w", err)
		}
		ex.Files = append(ex.Files, ExcludedFile{Path: f, SHA256: sum})
	}
	b.eval, b.meta.Excluded = set, ex
	return nil
}

// checkEval checks the text of the batch's row i against the evaluation set, as a pick's guard
// checks the text it reads back.
func (w *worker) checkEval(o *batchOut, i int, text []byte) {
	w.words = decontam.Words(w.words[:0], string(text))
	o.words += int64(len(w.words))
	o.longest = max(o.longest, len(w.words))
	if hit, ok := w.eval.Check(w.words); ok {
		hit.Words = append([]string(nil), hit.Words...)
		o.hits = append(o.hits, rowHit{i, hit})
	}
}

// addContam writes the contaminated rows of batch o, whose first row is base, to w.
func (b *builder) addContam(o *batchOut, base int64, w *fileWriter) error {
	ex := b.meta.Excluded
	ex.Words += o.words
	ex.Longest = max(ex.Longest, o.longest)
	for _, h := range o.hits {
		line, err := json.Marshal(contamLine{Row: base + int64(h.i), File: h.hit.File, Line: h.hit.Line, At: h.hit.At, NGram: strings.Join(h.hit.Words, " ")})
		if err != nil {
			return err
		}
		if _, err := w.w.Write(append(line, '\n')); err != nil {
			return w.fail(err)
		}
		ex.Rows++
	}
	return nil
}

// Contamination returns what the build found of the evaluation files it was given: the files, and
// the rows that share an n-gram with them with the evaluation row and n-gram of each. It returns
// nil, nil, nil for an index built without --exclude. A set returns its segments' lists joined, as
// one build of all their files would have found them (a row's check looks at that row alone), when
// every segment was checked against files of the same content, in the same order, at the same
// n-gram length; else nil, nil, nil. One segment opened as a shard (OpenShard) returns its own
// list when the set would join them.
func (ix *Index) Contamination() (*Excluded, map[int]decontam.Hit, error) {
	if ix.set != nil {
		return ix.set.contamination()
	}
	ex := ix.meta.Excluded
	if ex == nil {
		return nil, nil, nil
	}
	hits := map[int]decontam.Hit{}
	last := int64(-1)
	for i, line := range bytes.SplitAfter(ix.contam, []byte("\n")) {
		if len(line) == 0 {
			continue
		}
		var c contamLine
		if err := json.Unmarshal(line, &c); err != nil {
			return nil, nil, fmt.Errorf("index %s: %s line %d: %w: %w", ix.dir, contamFile, i+1, err, ErrDamaged)
		}
		if c.Row <= last || c.Row >= ix.meta.Rows || c.File < 0 || c.File >= len(ex.Files) || c.Line < 1 {
			return nil, nil, fmt.Errorf("index %s: %s line %d: row %d, file %d, line %d out of place: %w", ix.dir, contamFile, i+1, c.Row, c.File, c.Line, ErrDamaged)
		}
		last = c.Row
		hits[int(c.Row)] = decontam.Hit{File: c.File, Line: c.Line, At: c.At, Words: strings.Fields(c.NGram)}
	}
	if int64(len(hits)) != ex.Rows {
		return nil, nil, fmt.Errorf("index %s: %s lists %d rows, meta.json says %d: %w", ix.dir, contamFile, len(hits), ex.Rows, ErrDamaged)
	}
	return ex, hits, nil
}

// contamination joins the segments' lists (see Contamination). One segment opened as a shard
// returns its own list, rows numbered from its first, when every segment's meta.json says the set
// would join theirs.
func (s *segSet) contamination() (*Excluded, map[int]decontam.Hit, error) {
	if s.only >= 0 {
		for _, g := range s.segs {
			if x := g.meta.Excluded; x == nil || !sameChecks(s.segs[0].meta.Excluded, x) {
				return nil, nil, nil
			}
		}
		return s.segs[s.only].Contamination()
	}
	var all *Excluded
	hits := map[int]decontam.Hit{}
	for i, g := range s.segs {
		ex, h, err := g.Contamination()
		if err != nil || ex == nil || all != nil && !sameChecks(all, ex) {
			return nil, nil, err
		}
		if all == nil {
			all = &Excluded{N: ex.N, Files: ex.Files}
		}
		all.Rows += ex.Rows
		all.Words += ex.Words
		all.Longest = max(all.Longest, ex.Longest)
		for r, hit := range h {
			hits[s.base[i]+r] = hit
		}
	}
	return all, hits, nil
}

// sameChecks reports whether a and b checked rows against files of the same content, in the same
// order, at the same n-gram length; the files' paths may differ.
func sameChecks(a, b *Excluded) bool {
	return a.N == b.N && slices.EqualFunc(a.Files, b.Files, func(x, y ExcludedFile) bool { return x.SHA256 == y.SHA256 })
}
