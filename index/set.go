package index

import (
	"bufio"
	"bytes"
	"cmp"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strings"
	"sync"

	"sluice/index/atomicdir"
	"sluice/index/jsonl"
)

// SetMagic is the first line of an index-set file: a small text file naming index folders
// (segments), one per line, that are read as one index whose rows are theirs in order.
const SetMagic = "sluice-index-set 1"

// setAllowOverlap is the set file's line that lets two segments hold the same pool file.
const setAllowOverlap = "allow-overlap"

// ErrOverlap is returned when two segments of a set hold the same pool file and the set does not
// allow it.
var ErrOverlap = errors.New("a pool file is in two segments")

// ErrIncompatible is returned when the segments of a set were built in ways that cannot be scored
// as one index.
var ErrIncompatible = errors.New("segments cannot be read as one index")

// segSet is what an Index opened from a set file holds instead of its own files: the segments,
// and where each one's rows and sources start among the set's.
type segSet struct {
	segs    []*Index
	base    []int // first row of each segment, then the row count
	srcBase []int // first source of each segment
	// only, when not -1, is the one segment whose rows the Index holds (OpenShard), numbered from 0;
	// the other segments are open for their statistics alone.
	only int

	normOnce sync.Once
	norms    []float64 // the TF-IDF norms under the set's document frequencies, made when first asked
	// releaseEvery is how many bytes of a segment's postings the norms pass reads before it gives
	// their pages back (releaseNorms; tests set less).
	releaseEvery uint64

	dupsOnce sync.Once
	dups     *Dups    // the duplicates found across the segments, when first asked (Duplicates)
	firsts   []uint32 // each row's cluster's first row, with dups
	dupsErr  error
}

// WriteSet checks that the index folders dirs can be read as one index and writes the set file
// path naming them, relative to its folder where they are below it, and returns the set's metadata.
// An existing path is replaced only when it is a set file itself; a path inside an index folder,
// or a folder of one of the kinds within, is refused.
func WriteSet(path string, dirs []string, allowOverlap bool, within ...atomicdir.Kind) (Meta, error) {
	isSet := func(b []byte) bool { return bytes.HasPrefix(b, []byte(SetMagic+"\n")) }
	if err := atomicdir.CheckFile(path, "set file", isSet, dirs, append(within, Folder())...); err != nil {
		return Meta{}, err
	}
	m, err := writeSet(path, dirs, allowOverlap)
	if err != nil {
		return Meta{}, fmt.Errorf("write index set %s: %w", path, err)
	}
	return m, nil
}

func writeSet(path string, dirs []string, allowOverlap bool) (Meta, error) {
	var buf bytes.Buffer
	buf.WriteString(SetMagic + "\n")
	if allowOverlap {
		buf.WriteString(setAllowOverlap + "\n")
	}
	base, err := filepath.Abs(filepath.Dir(path))
	if err != nil {
		return Meta{}, err
	}
	for _, d := range dirs {
		if strings.ContainsAny(d, "\n\r") {
			return Meta{}, fmt.Errorf("segment path %q holds a line break", d)
		}
		abs, err := filepath.Abs(d)
		if err != nil {
			return Meta{}, err
		}
		if rel, err := filepath.Rel(base, abs); err == nil && !strings.HasPrefix(rel, "..") {
			abs = rel
		}
		buf.WriteString(abs + "\n")
	}
	// Open what will be written before writing it: a set that cannot be read is not made.
	ix, err := openSet(path, dirs, allowOverlap)
	if err != nil {
		return Meta{}, err
	}
	m := ix.Meta()
	ix.Close()
	if err := atomicdir.ReplaceFile(path, buf.Bytes()); err != nil {
		return Meta{}, err
	}
	return m, nil
}

// isSetFile reports whether path is a regular file that starts as an index set does.
func isSetFile(path string) bool {
	f, err := os.Open(path)
	if err != nil {
		return false
	}
	defer f.Close()
	if fi, err := f.Stat(); err != nil || !fi.Mode().IsRegular() {
		return false
	}
	head := make([]byte, len(SetMagic)+1)
	_, err = io.ReadFull(f, head)
	return err == nil && string(head) == SetMagic+"\n"
}

// readSet reads a set file: its segments, made relative to its folder, and whether they may share
// a pool file. Blank lines and lines starting with # are skipped.
func readSet(path string) (dirs []string, allowOverlap bool, err error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, false, pathErr("open index set", err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for line := 1; sc.Scan(); line++ {
		t := strings.TrimSpace(sc.Text())
		switch {
		case line == 1:
			if t != SetMagic {
				return nil, false, fmt.Errorf("index set %s:1: does not start with %q: %w", path, SetMagic, ErrNotIndex)
			}
		case t == "" || strings.HasPrefix(t, "#"):
		case t == setAllowOverlap:
			allowOverlap = true
		default:
			if !filepath.IsAbs(t) {
				t = filepath.Join(filepath.Dir(path), t)
			}
			dirs = append(dirs, t)
		}
	}
	if err := sc.Err(); err != nil {
		return nil, false, fmt.Errorf("index set %s: %w", path, err)
	}
	if len(dirs) == 0 {
		return nil, false, fmt.Errorf("index set %s: names no segment: %w", path, ErrNotIndex)
	}
	return dirs, allowOverlap, nil
}

// openSet opens every segment and makes the Index that reads them as one.
func openSet(path string, dirs []string, allowOverlap bool) (ix *Index, err error) {
	s := &segSet{base: []int{0}, only: -1}
	sources := 0
	defer func() {
		if err != nil {
			for _, g := range s.segs {
				g.Close()
			}
		}
	}()
	for _, d := range dirs {
		if isSetFile(d) {
			return nil, fmt.Errorf("index set %s: segment %s is itself a set; name its folders instead: %w", path, d, ErrIncompatible)
		}
		g, err := Open(d)
		if err != nil {
			return nil, fmt.Errorf("index set %s: %w", path, err)
		}
		s.segs = append(s.segs, g)
		s.srcBase = append(s.srcBase, sources)
		sources += len(g.meta.Sources)
		s.base = append(s.base, s.base[len(s.base)-1]+g.NumRows())
	}
	m, err := s.meta(path, allowOverlap)
	if err != nil {
		return nil, err
	}
	return &Index{dir: path, real: path, meta: m, set: s}, nil
}

// meta checks that the segments agree on everything that decides how a row or a target is read
// and scored, and makes the set's metadata: counts summed, sources in order, and no duplicates
// file, so a pick finds duplicates across every segment itself.
func (s *segSet) meta(path string, allowOverlap bool) (Meta, error) {
	first := s.segs[0]
	m := first.meta
	m.Files, m.Command, m.Dups = nil, nil, nil
	m.Rows, m.RowsRead, m.RowsRejected, m.BlankLines, m.DuplicateIDs = 0, 0, 0, 0, 0
	m.TotalLen, m.Postings, m.TextBytes, m.Sources = 0, 0, 0, nil
	seen := map[string]string{} // a source's SHA-256 -> the segment holding it
	for _, g := range s.segs {
		gm := &g.meta
		for _, c := range []struct{ what, a, b string }{
			{"format", m.Format, gm.Format},
			{"analyzer", m.Analyzer, gm.Analyzer},
			{"analyzer chain", m.AnalyzerChain, gm.AnalyzerChain},
			{"id field", m.IDField, gm.IDField},
			{"token field", m.TokensField, gm.TokensField},
			{"tokenizer", m.TokenizerSHA256, gm.TokenizerSHA256},
			{"longest row", fmt.Sprint(m.MaxRowBytes), fmt.Sprint(gm.MaxRowBytes)},
			{"detected text", fmt.Sprint(m.TextDetected), fmt.Sprint(gm.TextDetected)},
		} {
			if c.a != c.b {
				return Meta{}, fmt.Errorf("index set %s: %s has %s %q and %s has %q: %w", path, first.dir, c.what, c.a, g.dir, c.b, ErrIncompatible)
			}
		}
		if !m.TextDetected && (gm.Text != m.Text || gm.Version != m.Version) {
			return Meta{}, fmt.Errorf("index set %s: %s reads text %q (format version %d) and %s reads %q (version %d): %w",
				path, first.dir, m.Text, m.Version, g.dir, gm.Text, gm.Version, ErrIncompatible)
		}
		for _, src := range gm.Sources {
			if prev, ok := seen[src.SHA256]; ok && !allowOverlap && src.SHA256 != "" {
				return Meta{}, fmt.Errorf("index set %s: %s is in %s and in %s (allow it with --allow-overlap): %w", path, src.Path, prev, g.dir, ErrOverlap)
			}
			seen[src.SHA256] = g.dir
			m.Sources = append(m.Sources, src)
		}
		m.Rows += gm.Rows
		m.RowsRead += gm.RowsRead
		m.RowsRejected += gm.RowsRejected
		m.BlankLines += gm.BlankLines
		m.DuplicateIDs += gm.DuplicateIDs
		m.TotalLen += gm.TotalLen
		m.Postings += gm.Postings
		m.TextBytes += gm.TextBytes
	}
	if m.Rows > 0 {
		m.AvgLen = float64(m.TotalLen) / float64(m.Rows) // as the build computes it
	}
	if m.TextDetected {
		text, err := s.detectedText()
		if err != nil {
			return Meta{}, fmt.Errorf("index set %s: %w", path, err)
		}
		m.Text = text.String()
		m.Version = versionFor(text)
	}
	m.Terms = int64(s.countTerms())
	return m, nil
}

// detectedText is the spec a build of every segment's files in one go would have detected: the
// shapes found in any segment, in the order of jsonl.Shapes.
func (s *segSet) detectedText() (jsonl.Spec, error) {
	found := map[string]bool{}
	for _, g := range s.segs {
		sp, err := jsonl.ParseSpec(g.meta.Text)
		if err != nil {
			return jsonl.Spec{}, fmt.Errorf("%s: text %q: %w", g.dir, g.meta.Text, err)
		}
		for _, a := range sp.Alternatives() {
			found[a.String()] = true
		}
	}
	var spec jsonl.Spec
	for _, sh := range jsonl.Shapes() {
		if found[sh.String()] {
			var err error
			if spec, err = spec.Or(sh); err != nil {
				return jsonl.Spec{}, err
			}
		}
	}
	return spec, nil
}

// terms walks the union of the segments' lexicons in byte order, calling fn with each term, the
// segments holding it and each one's entry for it (in[k]'s entry is at ents[in[k]]): one pass over
// every lexicon, with no lookups.
func (s *segSet) terms(fn func(term []byte, in []int, ents []termEntry) error) error {
	rest := make([][]byte, len(s.segs))
	heads := make([][]byte, len(s.segs))
	ents := make([]termEntry, len(s.segs))
	for i, g := range s.segs {
		if err := g.lexWalked(); err != nil { // the walk below trusts every entry
			return err
		}
		rest[i] = g.lex.b
	}
	advance := func(i int) {
		heads[i] = nil
		if t, df, pl, r, ok := nextEntry(rest[i]); ok {
			heads[i], rest[i] = t, r
			post := ents[i].postEnd
			ents[i] = termEntry{df: df, post: post, postEnd: post + pl}
		}
	}
	for i := range s.segs {
		advance(i)
	}
	var in []int
	var cur []byte
	for {
		in, cur = in[:0], nil
		for i, h := range heads {
			if h == nil {
				continue
			}
			switch c := bytes.Compare(h, cur); {
			case cur == nil || c < 0:
				in, cur = append(in[:0], i), h
			case c == 0:
				in = append(in, i)
			}
		}
		if cur == nil {
			return nil
		}
		if err := fn(cur, in, ents); err != nil {
			return err
		}
		for _, i := range in {
			advance(i)
		}
	}
}

func (s *segSet) countTerms() int {
	n := 0
	s.terms(func([]byte, []int, []termEntry) error { n++; return nil })
	return n
}

// seg returns the segment holding row and the row's number in it.
func (s *segSet) seg(row int) (*Index, int, int) {
	if s.only >= 0 {
		return s.segs[s.only], row, s.only
	}
	i := sort.SearchInts(s.base[1:], row+1)
	return s.segs[i], row - s.base[i], i
}

// rowNorm makes every row's norm the first time one is asked for: a pass over every posting of
// every segment, summing in the order and the two halves the build sums in, so that a row's norm
// is the bits a build of all the files in one go would have written.
func (s *segSet) rowNorm(row int, n int64) float64 {
	s.normOnce.Do(func() {
		normed := n // the rows normed, numbered from base: every segment's, or one shard's from 0
		base := s.base
		if s.only >= 0 {
			normed, base = int64(s.base[s.only+1]-s.base[s.only]), make([]int, len(s.segs))
		}
		parts := [2][]float64{make([]float64, normed), make([]float64, normed)}
		// The halves are summed apart, as the build's merge sums them: one goroutine each, so that
		// both cores work while every scorer waits for the norms.
		var errs [2]error
		var wg sync.WaitGroup
		for half := range 2 {
			wg.Go(func() { errs[half] = s.sumNorms(half, parts[half], base, n) })
		}
		wg.Wait()
		err := errors.Join(errs[0], errs[1])
		if err != nil {
			s.segs[0].fail(err) // Err reports it; the norms are NaN
		}
		s.norms = parts[0]
		for r := range s.norms {
			s.norms[r] = math.Sqrt(s.norms[r] + parts[1][r])
			if err != nil {
				s.norms[r] = math.NaN()
			}
		}
	})
	return s.norms[row]
}

// sumNorms adds, for the terms of one half of the term space (0: before mergeSplit, 1: from it on),
// each posting's squared TF-IDF weight under the set's document frequencies to acc, by row
// numbered from base; n is the set's row count.
func (s *segSet) sumNorms(half int, acc []float64, base []int, n int64) error {
	var rows, tfs []uint32
	// The pass reads each segment's postings in file order (terms in byte order), so what it has
	// read is given back behind it as it goes, a stretch at a time: a pass over a large set would
	// otherwise hold every posting of every segment resident by its end.
	every := cmp.Or(s.releaseEvery, releaseNorms)
	given := make([]uint64, len(s.segs)) // each segment's postings below this are given back
	err := s.terms(func(term []byte, in []int, ents []termEntry) error {
		switch from := string(term) >= mergeSplit; {
		case from && half == 0:
			return errHalfDone // terms come in byte order: the rest are the other half's
		case !from && half == 1:
			return nil
		}
		var df uint64
		for _, i := range in {
			df += ents[i].df
		}
		idf := math.Log(float64(1+n)/float64(1+int64(df))) + 1 // as the build's merge computes it
		for _, i := range in {
			if s.only >= 0 && i != s.only {
				continue // counted in df; its rows are not this shard's
			}
			var err error
			c := s.segs[i].cursorAt(ents[i], string(term))
			if rows, tfs, err = c.Next(math.MaxInt, rows[:0], tfs[:0]); err != nil {
				return err
			}
			for k, r := range rows {
				w := float64(tfs[k]) * idf
				acc[base[i]+int(r)] += w * w
			}
			if g := s.segs[i]; ents[i].postEnd-given[i] >= every {
				g.releaseIn(g.postings, int(given[i]), int(ents[i].postEnd))
				given[i] = ents[i].postEnd
			}
		}
		return nil
	})
	if errors.Is(err, errHalfDone) {
		return nil
	}
	return err
}

// errHalfDone stops the first half's walk of the terms at mergeSplit.
var errHalfDone = errors.New("half done")

// postings appends term's postings from every segment, rows renumbered into the set's.
func (s *segSet) postings(term string, rows, tfs []uint32) ([]uint32, []uint32, error) {
	if s.only >= 0 {
		return s.segs[s.only].Postings(term, rows, tfs)
	}
	for i, g := range s.segs {
		from := len(rows)
		var err error
		if rows, tfs, err = g.Postings(term, rows, tfs); err != nil {
			return rows, tfs, err
		}
		for k := from; k < len(rows); k++ {
			rows[k] += uint32(s.base[i])
		}
	}
	return rows, tfs, nil
}

// cursor is term's cursor over every segment in turn.
func (s *segSet) cursor(ix *Index, term string) *Cursor {
	if s.only >= 0 {
		return s.segs[s.only].NewCursor(term)
	}
	c := &Cursor{ix: ix, term: term, row: -1, next: -1}
	for _, g := range s.segs {
		c.parts = append(c.parts, g.NewCursor(term))
	}
	return c
}

// nextParts is Cursor.Next for a cursor over a set's segments.
func (c *Cursor) nextParts(end int, rows, tfs []uint32) ([]uint32, []uint32, error) {
	s := c.ix.set
	for c.part < len(c.parts) {
		lo, hi := s.base[c.part], s.base[c.part+1]
		if end <= lo {
			break
		}
		from := len(rows)
		var err error
		if rows, tfs, err = c.parts[c.part].Next(min(end, hi)-lo, rows, tfs); err != nil {
			return rows, tfs, err
		}
		for k := from; k < len(rows); k++ {
			rows[k] += uint32(lo)
		}
		if end < hi {
			break
		}
		c.part++
	}
	return rows, tfs, nil
}

// copyRows copies rows segment by segment, in input order.
func (s *segSet) copyRows(w io.Writer, rows []int) error {
	if s.only >= 0 {
		return s.segs[s.only].CopyRows(w, rows)
	}
	rows = slices.Clone(rows)
	slices.Sort(rows)
	rows = slices.Compact(rows)
	var local []int
	for i := 0; i < len(rows); {
		g, _, si := s.seg(rows[i])
		local = local[:0]
		j := i
		for ; j < len(rows) && rows[j] < s.base[si+1]; j++ {
			local = append(local, rows[j]-s.base[si])
		}
		if err := g.CopyRows(w, local); err != nil {
			return err
		}
		i = j
	}
	return nil
}

// Segments returns the folders of the segments an index read from a set file is made of, or nil
// for an index folder.
func (ix *Index) Segments() []string {
	if ix.set == nil {
		return nil
	}
	dirs := make([]string, len(ix.set.segs))
	for i, g := range ix.set.segs {
		dirs[i] = g.dir
	}
	return dirs
}
