package index

import (
	"cmp"
	"fmt"
	"io"
	"slices"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"

	"sluice/index/jsonl"
)

// SourceQuarantine is what one pool file lost to the quarantine, and the text fields its rows
// lacked.
type SourceQuarantine struct {
	Rows  int64
	First *Reject
	// Missing lists the paths of the text spec that rows of the file lack (see jsonl.Row.Missing),
	// most-missed first.
	Missing []MissingField

	missing map[string]*missCount // while building
}

// MissingField is a path of the text spec that rows of one pool file lack.
type MissingField struct {
	Path      string
	Rows      int64    // rows lacking it
	FirstLine int64    // the first of them
	Has       []string // the top-level fields that most of those rows do have, most common first
}

// missCount counts, in one batch or source, the rows lacking one path of the text spec.
type missCount struct {
	rows  int64
	first int64            // line of the first such row
	keys  map[string]int64 // top-level fields of those rows, at most maxKeysCounted of them
}

// Bounds on what the warnings gather and show of rows lacking a text field.
const (
	maxKeysCounted = 64 // distinct fields counted per missing path and file
	maxHasShown    = 8  // fields named as those the rows have
)

// noteMissing counts the row at line as lacking paths; ex has just extracted it.
func (o *batchOut) noteMissing(paths []string, line int64, ex *jsonl.Extractor) {
	if o.missing == nil {
		o.missing = map[string]*missCount{}
	}
	for _, p := range paths {
		m := o.missing[p]
		if m == nil {
			m = &missCount{first: line, keys: map[string]int64{}}
			o.missing[p] = m
		}
		m.rows++
		ex.Keys(func(k []byte) {
			if n, ok := m.keys[string(k)]; ok {
				m.keys[string(k)] = n + 1
			} else if len(m.keys) < maxKeysCounted {
				m.keys[string(k)] = 1
			}
		})
	}
}

// addMissing adds a batch's counts to its source's; batches come in input order.
func (q *SourceQuarantine) addMissing(batch map[string]*missCount) {
	if q.missing == nil {
		q.missing = map[string]*missCount{}
	}
	for p, bm := range batch {
		m := q.missing[p]
		if m == nil {
			q.missing[p] = bm
			continue
		}
		m.rows += bm.rows
		for k, n := range bm.keys {
			if _, ok := m.keys[k]; ok || len(m.keys) < maxKeysCounted {
				m.keys[k] += n
			}
		}
	}
}

// finishMissing turns the counts gathered into Missing.
func (q *SourceQuarantine) finishMissing() {
	for p, m := range q.missing {
		f := MissingField{Path: p, Rows: m.rows, FirstLine: m.first}
		for k, n := range m.keys {
			if 2*n >= m.rows {
				f.Has = append(f.Has, k)
			}
		}
		slices.SortFunc(f.Has, func(a, b string) int { return cmp.Or(cmp.Compare(m.keys[b], m.keys[a]), strings.Compare(a, b)) })
		f.Has = f.Has[:min(len(f.Has), maxHasShown)]
		q.Missing = append(q.Missing, f)
	}
	slices.SortFunc(q.Missing, func(a, b MissingField) int {
		return cmp.Or(cmp.Compare(b.Rows, a.Rows), strings.Compare(a.Path, b.Path))
	})
	q.missing = nil
}

// WriteSummary writes what a build read and made, for people: rows, text fields, analyzer,
// terms, repeated ids and the quarantine, with out the folder it was published as.
func (st *Stats) WriteSummary(w io.Writer, out string) {
	m := &st.Meta
	fmt.Fprintf(w, "indexed %d rows from %d file(s) into %s\n", m.Rows, len(m.Sources), out)
	fmt.Fprintf(w, "  text fields   %s (%s)\n", m.Text, st.textHow())
	fmt.Fprintf(w, "  analyzer      %s\n", m.Analyzer)
	fmt.Fprintf(w, "  rows          read %d = indexed %d + quarantined %d (blank lines skipped: %d)\n", m.RowsRead, m.Rows, m.RowsRejected, m.BlankLines)
	fmt.Fprintf(w, "  terms         %d distinct, %d postings, mean row length %.1f terms\n", m.Terms, m.Postings, m.AvgLen)
	if d := st.FirstDuplicate; d != nil {
		// Allowed, not quarantined: the rows are good, only their names clash.
		fmt.Fprintf(w, "  ids           %d rows repeat an earlier row's id (kept; scores.jsonl is in input order), the first %s at %s:%d and %s:%d\n",
			m.DuplicateIDs, strconv.Quote(d.ID), d.First.File, d.First.Line, d.Second.File, d.Second.Line)
	}
	if d := m.Dups; d != nil {
		fmt.Fprintf(w, "  duplicates    %d rows in %d clusters are not their cluster's first (%d exact; near: Jaccard of word %d-gram shingles >= %g, %d MinHash values in %d bands); hashing %.3g FLOPs, paid here for every pick at this threshold\n",
			d.Duplicates, d.Clusters, d.ExactDuplicates, d.Shingle, d.Threshold, d.Hashes, d.Bands, d.FLOPs)
	}
	if x := m.Excluded; x != nil {
		paths := make([]string, len(x.Files))
		for i, f := range x.Files {
			paths[i] = f.Path
		}
		fmt.Fprintf(w, "  evaluation    %d rows share a %d-word n-gram with %s (listed in %s/%s; picks excluding the same files take them, and keep none of them); %d words checked\n",
			x.Rows, x.N, strings.Join(paths, ", "), out, contamFile, x.Words)
	}
	if m.RowsRejected > 0 {
		fmt.Fprintf(w, "  quarantine    %s/rejected.jsonl\n", out)
	}
}

// textHow says where the text spec came from: given, or detected in how many files each shape.
func (st *Stats) textHow() string {
	if !st.TextDetected {
		return "given"
	}
	var shapes []string
	files := map[string]int{}
	for _, s := range st.Sources {
		if s.Detected != "" {
			if files[s.Detected] == 0 {
				shapes = append(shapes, s.Detected)
			}
			files[s.Detected]++
		}
	}
	if len(shapes) < 2 {
		return "detected; pass --text to choose"
	}
	var b strings.Builder
	b.WriteString("detected per file:")
	for i, sh := range shapes {
		if i > 0 {
			b.WriteByte(',')
		}
		fmt.Fprintf(&b, " %s in %d", sh, files[sh])
	}
	b.WriteString("; pass --text to choose")
	return b.String()
}

// quarantineWarnShare is the share of a file's rows set aside past which the build warns: a few
// bad rows are the norm in scraped pools, a tenth of a file is most often fields named otherwise.
const quarantineWarnShare = 0.05

// exampleBytes bounds the bytes of a row a warning shows.
const exampleBytes = 200

// WriteWarnings says loudly which files lost more than a few per cent of their rows to the
// quarantine, with the first of them and a --text that would read it, and which text fields most
// rows of a file lack, with the fields those rows have, so that neither a pool mixing field names
// nor a misspelt field goes by without a word.
func (st *Stats) WriteWarnings(w io.Writer) {
	if x := st.Excluded; x != nil && x.N > x.Longest {
		fmt.Fprintf(w, "warning: --exclude-ngram %d is longer than every pool row (the longest has %d words): a row is found only when its words are an evaluation row's, whole; give a shorter n-gram\n", x.N, x.Longest)
	}
	if st.Mem > 0 && st.DupMem > st.Mem {
		fmt.Fprintf(w, "warning: finding duplicates held %d MiB, more than --mem (%d MiB) by itself: the build passed the bound; give more --mem, or --no-dups and let picks find them\n", st.DupMem>>20, st.Mem>>20)
	}
	for i, q := range st.Quarantined {
		if i >= len(st.Sources) {
			continue
		}
		path := st.Sources[i].Path
		read := st.Sources[i].Rows + q.Rows
		warned := q.First != nil && float64(q.Rows) > quarantineWarnShare*float64(read)
		if warned {
			fmt.Fprintf(w, "warning: %s: %d of its %d rows (%s) were quarantined; the first, line %d: %s\n",
				path, q.Rows, read, percent(q.Rows, read), q.First.Line, q.First.Reason)
			fmt.Fprintf(w, "  the row: %s\n", example(q.First.Raw, q.First.RawEscaped))
			if t := st.suggest(q.First); t != "" {
				fmt.Fprintf(w, "  to index rows like it too: --text %s\n", shellQuote(t))
			}
		}
		writeMissing(w, path, read, q, warned)
	}
}

// writeMissing warns of the text fields that most rows of a file lack, those lacked by the same
// rows together. After a warning of the file's quarantine, whose reasons name the fields missing,
// it warns only of rows that were indexed all the same, from another alternative.
func writeMissing(w io.Writer, path string, read int64, q SourceQuarantine, warned bool) {
	for i := 0; i < len(q.Missing); {
		m := q.Missing[i]
		names := []string{m.Path}
		j := i + 1
		for ; j < len(q.Missing) && q.Missing[j].Rows == m.Rows && q.Missing[j].FirstLine == m.FirstLine && slices.Equal(q.Missing[j].Has, m.Has); j++ {
			names = append(names, q.Missing[j].Path)
		}
		i = j
		if 2*m.Rows <= read || warned && m.Rows <= q.Rows {
			continue
		}
		has := "no fields"
		if len(m.Has) > 0 {
			quoted := make([]string, len(m.Has))
			for k, key := range m.Has {
				quoted[k] = strconv.Quote(key)
			}
			has = strings.Join(quoted, ", ")
		}
		what := "the text field " + names[0] + " is"
		if len(names) > 1 {
			what = "the text fields " + strings.Join(names, ", ") + " are"
		}
		fmt.Fprintf(w, "warning: %s: %s missing from %d of its %d rows (%s), the first at line %d; those rows have %s\n",
			path, what, m.Rows, read, percent(m.Rows, read), m.FirstLine, has)
	}
}

// suggest returns the spec of the index with an alternative added that reads the rejected row r,
// or "" when there is none: the row is no JSON object, or no alternative would read it.
func (st *Stats) suggest(r *Reject) string {
	if r.RawEscaped || len(r.Raw) >= MaxRawBytes {
		return "" // not the row's own bytes, or cut short: not JSON to read
	}
	sp, err := jsonl.ParseSpec(st.Text)
	if err != nil {
		return ""
	}
	more, ok := jsonl.Suggest([]byte(r.Raw))
	if !ok {
		return ""
	}
	both, err := sp.Or(more)
	if err != nil || both.String() == sp.String() {
		return ""
	}
	return both.String()
}

func percent(n, of int64) string {
	if of == 0 {
		return "0%"
	}
	return fmt.Sprintf("%.0f%%", 100*float64(n)/float64(of))
}

// example shows a row in a warning: at most exampleBytes of it, on one line, marked when cut.
func example(raw string, escaped bool) string {
	s := raw
	if !escaped && strings.ContainsFunc(raw, func(r rune) bool { return !unicode.IsPrint(r) && r != ' ' }) {
		q := strconv.Quote(raw)
		s = q[1 : len(q)-1]
	}
	if len(s) <= exampleBytes {
		return s
	}
	n := exampleBytes
	for n > 0 && !utf8.RuneStart(s[n]) {
		n--
	}
	return fmt.Sprintf("%s … (%d bytes in all)", s[:n], len(raw))
}

// shellQuote quotes s for a POSIX shell, so a suggested flag can be pasted as it is.
func shellQuote(s string) string {
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}
