package index

import (
	"bufio"
	"bytes"
	"context"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"
)

// spill writes the worker's dictionary as a run sorted by term bytes and starts a new one.
// A run entry is: uvarint term length, term, uvarint df, uvarint byte length, postings; a posting is
// the uvarint key delta and the uvarint term frequency.
func (w *worker) spill() error {
	if len(w.terms) == 0 {
		return nil
	}
	order := w.sortedTerms()
	path := w.wd.path("runs", fmt.Sprintf("run-%d-%04d", w.id, len(w.runs)))
	fw, err := w.wd.create(path)
	if err != nil {
		return err
	}
	defer fw.abort()
	var vb [3 * binary.MaxVarintLen64]byte
	var off int64
	split := int64(-1)
	for _, id := range order {
		t := w.terms[id]
		if split < 0 && t >= mergeSplit {
			split = off
		}
		n := binary.PutUvarint(vb[:], uint64(len(t)))
		fw.w.Write(vb[:n])
		fw.w.WriteString(t)
		off += int64(n + len(t))
		ts := &w.st[id]
		n = binary.PutUvarint(vb[:], uint64(ts.df))
		n += binary.PutUvarint(vb[n:], uint64(len(ts.post)))
		fw.w.Write(vb[:n])
		if _, err := fw.w.Write(ts.post); err != nil {
			return fw.fail(err)
		}
		off += int64(n + len(ts.post))
	}
	if split < 0 {
		split = off
	}
	// Runs are scratch: no fsync needed, a crash discards the whole temporary folder.
	if err := fw.closeNoSync(); err != nil {
		return err
	}
	w.runs = append(w.runs, runFile{path: path, shown: w.wd.shown(path), split: split, size: off})
	w.dict = newTermTable()
	w.gen++
	w.terms, w.st = nil, nil
	w.mem = 0
	return nil
}

// sortedTerms returns the ids of the terms with postings, in term byte order.
func (w *worker) sortedTerms() []int32 {
	order := make([]int32, 0, len(w.terms))
	for i := range w.terms {
		if w.st[i].df > 0 {
			order = append(order, int32(i))
		}
	}
	slices.SortFunc(order, func(a, b int32) int { return strings.Compare(w.terms[a], w.terms[b]) })
	return order
}

// finish keeps the worker's last dictionary in memory as a sorted run, so the merge reads it
// without a trip through the disk.
func (w *worker) finish() {
	if len(w.terms) > 0 {
		w.memRun = &memRun{order: w.sortedTerms(), terms: w.terms, st: w.st}
	}
}

// memRun is a run still in memory: the worker's dictionary in term order.
type memRun struct {
	order []int32
	terms []string
	st    []termState
}

// runFile is a run spilled to disk; split is the offset of its first term at or past mergeSplit.
type runFile struct {
	path, shown string // shown names it in errors
	split, size int64
}

// mergeSplit divides the term space between the two goroutines of the merge. It is fixed, not drawn
// from the data or the number of cores, so the bytes written depend on neither.
const mergeSplit = "m"

// runCursor reads one run term by term, from a file or from memory. Of the current term it holds
// the bytes and df, and hands out its postings a window at a time (window, consume).
type runCursor struct {
	path   string // names the run in errors
	worker int    // the worker that made the run
	ord    int    // the run's place among all runs: by worker, then in the order they were made
	term   []byte
	df     uint64
	done   bool
	// A run in memory: its dictionary, the next of its terms in order and where its part ends, and
	// the current term's postings not yet consumed.
	mem    *memRun
	i, end int
	post   []byte
	// A run file: the bytes [off, stop) of f are not yet read; buf[r:w] are read and not consumed,
	// and left bytes of the current term's postings are not yet consumed.
	f         *os.File
	off, stop int64
	buf       []byte
	r, w      int
	left      int64
}

// maxEntryHead bounds a run entry's bytes before its postings: length, term, df, byte length.
const maxEntryHead = 3*binary.MaxVarintLen64 + MaxTermBytes

// maxPosting bounds the bytes of one posting in a run: key delta and tf.
const maxPosting = 2 * binary.MaxVarintLen64

// openRun opens the bytes [from, to) of a run file, which hold whole terms, read through a buffer of
// bufSize bytes (at least maxEntryHead) with one pread per refill.
func openRun(rf runFile, from, to int64, bufSize int) (*runCursor, error) {
	f, err := os.Open(rf.path)
	if err != nil {
		return nil, fmt.Errorf("build index: read run %s: %w", rf.shown, bareErr(err))
	}
	c := &runCursor{f: f, off: from, stop: to, buf: make([]byte, max(bufSize, maxEntryHead)), path: rf.shown}
	return c, c.next()
}

// openMemRun opens the terms of a run in memory that fall in [lo, hi); hi "" is no bound.
func openMemRun(m *memRun, lo, hi, name string) (*runCursor, error) {
	at := func(bound string) int {
		i, _ := slices.BinarySearchFunc(m.order, bound, func(id int32, t string) int { return strings.Compare(m.terms[id], t) })
		return i
	}
	c := &runCursor{mem: m, i: at(lo), end: len(m.order), path: name}
	if hi != "" {
		c.end = at(hi)
	}
	return c, c.next()
}

// fill moves the unconsumed bytes to the front of buf and reads as many more as fit.
func (c *runCursor) fill() error {
	c.w = copy(c.buf, c.buf[c.r:c.w])
	c.r = 0
	for c.w < len(c.buf) && c.off < c.stop {
		n, err := c.f.ReadAt(c.buf[c.w:c.w+int(min(int64(len(c.buf)-c.w), c.stop-c.off))], c.off)
		c.w += n
		c.off += int64(n)
		if err != nil && !(err == io.EOF && n > 0) {
			return c.bad(err)
		}
	}
	return nil
}

// next moves to the run's next term, skipping what is left of the current term's postings.
func (c *runCursor) next() error {
	if c.mem != nil {
		if c.i == c.end {
			c.done = true
			return nil
		}
		id := c.mem.order[c.i]
		c.i++
		c.term = append(c.term[:0], c.mem.terms[id]...)
		c.df = uint64(c.mem.st[id].df)
		c.post = c.mem.st[id].post
		return nil
	}
	for c.left > 0 {
		if c.r == c.w {
			if err := c.fill(); err != nil {
				return err
			}
			if c.r == c.w {
				return c.bad(io.ErrUnexpectedEOF)
			}
		}
		k := int(min(c.left, int64(c.w-c.r)))
		c.r += k
		c.left -= int64(k)
	}
	if c.w-c.r < maxEntryHead && c.off < c.stop {
		if err := c.fill(); err != nil {
			return err
		}
	}
	if c.r == c.w {
		c.done = true
		err := c.f.Close()
		c.f = nil
		return err
	}
	b := c.buf[c.r:c.w]
	n, k := binary.Uvarint(b)
	if k <= 0 || n > MaxTermBytes || uint64(len(b)-k) < n {
		return c.bad(io.ErrUnexpectedEOF)
	}
	c.term = append(c.term[:0], b[k:k+int(n)]...)
	at := k + int(n)
	df, k := binary.Uvarint(b[at:])
	if k <= 0 {
		return c.bad(io.ErrUnexpectedEOF)
	}
	at += k
	size, k := binary.Uvarint(b[at:])
	if k <= 0 || size > math.MaxInt64 {
		return c.bad(io.ErrUnexpectedEOF)
	}
	c.r += at + k
	c.df, c.left = df, int64(size)
	return nil
}

// window returns the current term's postings read and not yet consumed, and whether they are all
// of them; a window that is not the last holds at least maxPosting bytes, so a posting that starts
// within maxPosting of its end is read from the next window.
func (c *runCursor) window() ([]byte, bool, error) {
	if c.mem != nil {
		return c.post, true, nil
	}
	if int64(c.w-c.r) < min(c.left, maxPosting) {
		if err := c.fill(); err != nil {
			return nil, false, err
		}
		if int64(c.w-c.r) < min(c.left, maxPosting) {
			return nil, false, c.bad(io.ErrUnexpectedEOF)
		}
	}
	n := min(c.left, int64(c.w-c.r))
	return c.buf[c.r : c.r+int(n)], n == c.left, nil
}

// consume marks the first n bytes of the last window as read.
func (c *runCursor) consume(n int) {
	if c.mem != nil {
		c.post = c.post[n:]
		return
	}
	c.r += n
	c.left -= int64(n)
}

func (c *runCursor) bad(err error) error {
	if err == io.EOF {
		err = io.ErrUnexpectedEOF
	}
	return fmt.Errorf("build index: read run %s: %w", c.path, bareErr(err))
}

// termHeap orders the cursors by term, then by their place among the runs, so the runs holding the
// least term come off it by worker and, within a worker, in the order they were made.
type termHeap []*runCursor

func (h termHeap) less(i, j int) bool {
	if c := bytes.Compare(h[i].term, h[j].term); c != 0 {
		return c < 0
	}
	return h[i].ord < h[j].ord
}

func (h *termHeap) push(c *runCursor) {
	*h = append(*h, c)
	s := *h
	for i := len(s) - 1; i > 0; {
		p := (i - 1) / 2
		if !s.less(i, p) {
			break
		}
		s[i], s[p] = s[p], s[i]
		i = p
	}
}

func (h *termHeap) pop() *runCursor {
	s := *h
	top := s[0]
	last := len(s) - 1
	s[0] = s[last]
	s[last] = nil
	s = s[:last]
	for i := 0; ; {
		l, m := 2*i+1, i
		if l < len(s) && s.less(l, m) {
			m = l
		}
		if r := l + 1; r < len(s) && s.less(r, m) {
			m = r
		}
		if m == i {
			break
		}
		s[i], s[m] = s[m], s[i]
		i = m
	}
	*h = s
	return top
}

// postStream is one worker's postings of a term: the term's postings in each of the worker's runs
// that hold it, one after another. A worker takes batches in input order, so its runs hold rows in
// that order and the stream is ascending without any merge within it.
type postStream struct {
	cs    []*runCursor
	ci    int    // the cursor being read
	chunk []byte // its window
	final bool   // whether the window is the last of the cursor's postings of the term
	p     int    // read up to here in chunk
	acc   uint64 // the key of the cursor's last posting read
	n     uint64 // postings read over all cursors
	key   uint64 // the head posting
	tf    uint64
}

// start points the stream at the first posting of its first cursor.
func (s *postStream) start() (bool, error) {
	s.ci, s.p, s.acc, s.n = 0, 0, 0, 0
	var err error
	if s.chunk, s.final, err = s.cs[0].window(); err != nil {
		return false, err
	}
	return s.advance()
}

// advance reads the next posting into key and tf, and says whether there was one.
func (s *postStream) advance() (bool, error) {
	for {
		if s.p < len(s.chunk) && (s.final || s.p+maxPosting <= len(s.chunk)) {
			b := s.chunk[s.p:]
			var d, tf uint64
			var k int
			if b[0] < 0x80 {
				d, k = uint64(b[0]), 1
			} else if d, k = binary.Uvarint(b); k <= 0 {
				return false, s.cs[s.ci].bad(io.ErrUnexpectedEOF)
			}
			if k < len(b) && b[k] < 0x80 {
				tf, k = uint64(b[k]), k+1
			} else {
				t, k2 := binary.Uvarint(b[k:])
				if k2 <= 0 {
					return false, s.cs[s.ci].bad(io.ErrUnexpectedEOF)
				}
				tf, k = t, k+k2
			}
			s.p += k
			s.acc += d
			s.key, s.tf = s.acc, tf
			s.n++
			return true, nil
		}
		c := s.cs[s.ci]
		c.consume(s.p)
		s.p = 0
		if s.final {
			if s.ci++; s.ci == len(s.cs) {
				return false, nil
			}
			c, s.acc = s.cs[s.ci], 0
		}
		var err error
		if s.chunk, s.final, err = c.window(); err != nil {
			return false, err
		}
	}
}

// merge k-way merges every worker's runs into the lexicon and postings, translating batch-local
// keys into row numbers, and computes each row's TF-IDF norm once document frequencies are final.
// The terms below mergeSplit and those from it on are merged by two goroutines into files of their
// own, which are then joined: lexicon entries hold lengths, not offsets, so the parts just follow.
func (b *builder) merge(ctx context.Context) (*Stats, error) {
	if b.opt.trace != nil {
		b.opt.trace("merge")
		defer b.opt.trace("merged")
	}
	st := &Stats{}
	for _, w := range b.workers {
		st.Runs += len(w.runs)
	}
	bounds := [2][2]string{{"", mergeSplit}, {mergeSplit, ""}}
	var parts [2]mergePart
	var wg sync.WaitGroup
	for i := range parts {
		p := &parts[i]
		p.lo, p.hi = bounds[i][0], bounds[i][1]
		p.lex = b.wd.path(fmt.Sprintf("%s.part%d", lexiconFile, i))
		p.post = b.wd.path(fmt.Sprintf("%s.part%d", postingsFile, i))
		wg.Go(func() { p.err = b.mergePart(ctx, p) })
	}
	wg.Wait()
	for i := range parts {
		if parts[i].err != nil {
			return nil, parts[i].err
		}
		b.meta.Terms += parts[i].terms
		b.meta.Postings += parts[i].postings
	}
	for _, f := range []struct{ name, a, b string }{
		{lexiconFile, parts[0].lex, parts[1].lex},
		{postingsFile, parts[0].post, parts[1].post},
	} {
		if err := b.wd.join(b.wd.path(f.name), f.a, f.b); err != nil {
			return nil, err
		}
	}
	if err := b.writeLexKeys(ctx); err != nil {
		return nil, err
	}
	nw, err := b.wd.create(b.wd.path(normsFile))
	if err != nil {
		return nil, err
	}
	defer nw.abort()
	var fb [8]byte
	for r, v := range parts[0].norm2 {
		if r%(1<<20) == 0 {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
		}
		v += parts[1].norm2[r]
		binary.LittleEndian.PutUint64(fb[:], math.Float64bits(math.Sqrt(v)))
		if err := nw.write(fb[:]); err != nil {
			return nil, err
		}
	}
	if err := nw.close(); err != nil {
		return nil, err
	}
	for i := range b.meta.Sources {
		b.meta.Sources[i].Rows = b.srcRows[i]
	}
	return st, nil
}

// mergePart is the merge of the terms in [lo, hi) into files of their own.
type mergePart struct {
	lo, hi          string
	lex, post       string
	norm2           []float64 // sum over the part's terms of (tf·idf)² per row
	terms, postings int64
	err             error
}

// mergePart takes the terms off a heap of every run's cursor, least first. A term's postings are
// each worker's runs concatenated (postStream) and the workers' streams merged by key: a worker's
// keys are ascending and batches are whole to one worker, so the merge moves from one worker to
// another only where a batch of the other comes first. The work per posting is the same whatever
// the number of runs.
func (b *builder) mergePart(ctx context.Context, p *mergePart) error {
	var all []*runCursor
	defer func() {
		for _, c := range all {
			if c.f != nil {
				c.f.Close()
			}
		}
	}()
	// Each part reads every run through a buffer of its own; with many runs the buffers share
	// what --mem allows rather than take 1 MiB each. Their size does not change the bytes written.
	runs := 0
	for _, w := range b.workers {
		runs += len(w.runs)
	}
	bufSize := 1 << 20
	if runs > 0 {
		bufSize = int(min(max(b.opt.Mem/int64(2*runs), 16<<10), 1<<20))
	}
	var h termHeap
	for wi, w := range b.workers {
		add := func(c *runCursor, err error) error {
			if err != nil {
				return err
			}
			c.worker, c.ord = wi, len(all)
			all = append(all, c)
			if !c.done {
				h.push(c)
			}
			return nil
		}
		for _, rf := range w.runs {
			from, to := int64(0), rf.split
			if p.lo != "" {
				from, to = rf.split, rf.size
			}
			if err := add(openRun(rf, from, to, bufSize)); err != nil {
				return err
			}
		}
		if w.memRun != nil {
			if err := add(openMemRun(w.memRun, p.lo, p.hi, fmt.Sprintf("worker %d in memory", w.id))); err != nil {
				return err
			}
		}
	}
	lex, err := b.wd.create(p.lex)
	if err != nil {
		return err
	}
	defer lex.abort()
	post, err := b.wd.create(p.post)
	if err != nil {
		return err
	}
	defer post.abort()

	n := b.meta.Rows
	norm2 := make([]float64, n)
	p.norm2 = norm2
	base := b.base
	var vb [3 * binary.MaxVarintLen64]byte
	var same []*runCursor
	streams := make([]postStream, len(b.workers))
	var live []*postStream
	var cur, pb []byte
	const mask = 1<<localBits - 1
	for terms := 0; len(h) > 0; terms++ {
		if terms%4096 == 0 {
			if err := ctx.Err(); err != nil {
				return err
			}
		}
		same = append(same[:0], h.pop())
		cur = append(cur[:0], same[0].term...)
		for len(h) > 0 && bytes.Equal(h[0].term, cur) {
			same = append(same, h.pop())
		}
		// One stream per worker holding the term, its runs in the order they were made.
		var df uint64
		live = live[:0]
		for i := 0; i < len(same); {
			j := i + 1
			for j < len(same) && same[j].worker == same[i].worker {
				j++
			}
			s := &streams[len(live)]
			s.cs = same[i:j]
			for _, c := range s.cs {
				df += c.df
			}
			ok, err := s.start()
			if err != nil {
				return err
			}
			if ok {
				live = append(live, s)
			}
			i = j
		}
		// Smooth idf as in score's TF-IDF: ln((1+N)/(1+df)) + 1.
		idf := math.Log(float64(1+n)/float64(1+int64(df))) + 1
		start := post.n
		prev := int64(-1)
		var got uint64
		for switches := 1; len(live) > 0; switches++ {
			// A term held by most rows has as many postings: look at ctx within it too.
			if switches%1024 == 0 {
				if err := ctx.Err(); err != nil {
					return err
				}
			}
			bi := 0
			for i := 1; i < len(live); i++ {
				if live[i].key < live[bi].key {
					bi = i
				}
			}
			bound := uint64(math.MaxUint64)
			for i, s := range live {
				if i != bi {
					bound = min(bound, s.key)
				}
			}
			s := live[bi]
			for {
				seq := s.key >> localBits
				if seq >= uint64(len(base)) {
					return fmt.Errorf("build index: run %s: batch %d out of range", s.cs[s.ci].path, seq)
				}
				row := base[seq] + int64(s.key&mask)
				if row <= prev || row >= n {
					return fmt.Errorf("build index: run %s: posting order broken at row %d", s.cs[s.ci].path, row)
				}
				tf := s.tf
				// A term's postings are encoded into one buffer and written at once: a write of one
				// to three bytes per posting costs more than encoding it.
				if tf == 1 {
					pb = binary.AppendUvarint(pb, uint64(row-prev)<<1|1)
				} else {
					pb = binary.AppendUvarint(binary.AppendUvarint(pb, uint64(row-prev)<<1), tf)
				}
				w := float64(tf) * idf
				norm2[row] += w * w
				prev = row
				ok, err := s.advance()
				if err != nil {
					return err
				}
				if !ok {
					got += s.n
					live[bi] = live[len(live)-1]
					live = live[:len(live)-1]
					break
				}
				if s.key >= bound {
					break
				}
			}
			if len(pb) >= 1<<20 {
				if err := post.write(pb); err != nil {
					return err
				}
				pb = pb[:0]
			}
		}
		if got != df {
			return fmt.Errorf("build index: runs of term %q: %d postings, df %d", cur, got, df)
		}
		if err := post.write(pb); err != nil {
			return err
		}
		pb = pb[:0]
		k := binary.PutUvarint(vb[:], uint64(len(cur)))
		lex.write(vb[:k])
		lex.write(cur)
		k = binary.PutUvarint(vb[:], df)
		k += binary.PutUvarint(vb[k:], uint64(post.n-start))
		if err := lex.write(vb[:k]); err != nil {
			return err
		}
		p.terms++
		p.postings += int64(df)
		for _, c := range same {
			if err := c.next(); err != nil {
				return err
			}
			if !c.done {
				h.push(c)
			}
		}
	}
	// The parts are joined and synced as one file; they need no sync of their own.
	if err := lex.closeNoSync(); err != nil {
		return err
	}
	return post.closeNoSync()
}

// join writes the concatenation of a and b to dst, synced, and removes a and b.
func (d workDir) join(dst, a, b string) error {
	w, err := d.create(dst)
	if err != nil {
		return err
	}
	defer w.abort()
	for _, p := range []string{a, b} {
		f, err := os.Open(p)
		if err != nil {
			return d.err("build index: read", err)
		}
		_, err = io.Copy(w.w, f)
		f.Close()
		if err != nil {
			return w.fail(err)
		}
		os.Remove(p)
	}
	return w.close()
}

func (b *builder) writeMeta(ctx context.Context) error {
	entries, err := os.ReadDir(b.tmp)
	if err != nil {
		return b.wd.err("build index: list", err)
	}
	b.meta.Files = map[string]File{}
	for _, e := range entries {
		if e.Name() == metaFile || e.IsDir() {
			continue
		}
		f, err := checksumFile(ctx, b.wd.path(e.Name()), blockSize(e.Name()))
		if err != nil {
			return b.wd.err("build index: read", err)
		}
		b.meta.Files[e.Name()] = f
	}
	data, err := json.MarshalIndent(&b.meta, "", "  ")
	if err != nil {
		return err
	}
	w, err := b.wd.create(b.wd.path(metaFile))
	if err != nil {
		return err
	}
	defer w.abort()
	if err := w.write(append(data, '\n')); err != nil {
		return err
	}
	return w.close()
}

// workDir is the working folder of a build and the folder it is published as. Errors name files by
// the names they take once published, since the working folder (.idx.tmp-…) is gone by the time
// anyone reads the message.
type workDir struct {
	tmp, dir string
}

// path returns the path of name in the working folder.
func (d workDir) path(name ...string) string {
	return filepath.Join(append([]string{d.tmp}, name...)...)
}

// shown returns the name path takes once the folder is published; a path outside the working
// folder is its own name.
func (d workDir) shown(path string) string {
	rel, err := filepath.Rel(d.tmp, path)
	if err != nil || rel == ".." || strings.HasPrefix(rel, ".."+string(filepath.Separator)) {
		return path
	}
	return filepath.Join(d.dir, rel)
}

// err words a file system error as "verb file: cause", the file named as shown gives it.
func (d workDir) err(verb string, err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return fmt.Errorf("%s %s: %w", verb, d.shown(pe.Path), pe.Err)
	}
	var le *os.LinkError
	if errors.As(err, &le) {
		return fmt.Errorf("%s %s: %w", verb, d.shown(le.New), le.Err)
	}
	return fmt.Errorf("%s %s: %w", verb, d.dir, err)
}

// bareErr strips the path from a file system error, for a message that names the file itself.
func bareErr(err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// fileWriter is a buffered file that is flushed and fsynced on close, and removed by abort.
type fileWriter struct {
	path   string
	shown  string // the name errors give the file
	f      *os.File
	w      *bufio.Writer
	n      int64
	closed bool
}

// create starts the file at path in the working folder.
func (d workDir) create(path string) (*fileWriter, error) { return d.createSized(path, 1<<20) }

// createSized is create with a write buffer of size bytes, for files written many at once.
func (d workDir) createSized(path string, size int) (*fileWriter, error) {
	f, err := os.Create(path)
	if err != nil {
		return nil, d.err("write", err)
	}
	return &fileWriter{path: path, shown: d.shown(path), f: f, w: bufio.NewWriterSize(f, size)}, nil
}

func (w *fileWriter) write(p []byte) error {
	n, err := w.w.Write(p)
	w.n += int64(n)
	if err != nil {
		return w.fail(err)
	}
	return nil
}

func (w *fileWriter) fail(err error) error {
	return fmt.Errorf("write %s: %w", w.shown, bareErr(err))
}

func (w *fileWriter) close() error { return w.finish(true) }

func (w *fileWriter) closeNoSync() error { return w.finish(false) }

func (w *fileWriter) finish(sync bool) error {
	if w.closed {
		return nil
	}
	w.closed = true
	err := w.w.Flush()
	if err == nil && sync {
		err = w.f.Sync()
	}
	if cerr := w.f.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return w.fail(err)
	}
	return nil
}

func (w *fileWriter) abort() {
	if !w.closed {
		w.closed = true
		w.f.Close()
		os.Remove(w.path)
	}
}

// isIndex says whether dir holds an index of some version, which a build may replace.
func isIndex(dir string) bool {
	b, err := os.ReadFile(filepath.Join(dir, metaFile))
	if err != nil {
		return false
	}
	var m struct{ Format string }
	return json.Unmarshal(b, &m) == nil && m.Format == Format
}
