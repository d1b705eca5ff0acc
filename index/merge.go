package index

import (
	"bufio"
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

// runCursor reads one run term by term, from a file or from memory.
type runCursor struct {
	end  int // for a run in memory: where its part of the terms ends
	f    *os.File
	r    *bufio.Reader
	mem  *memRun
	i    int    // next term of mem
	buf  []byte // the rest of the current term's postings, for a run in memory
	path string
	term []byte
	df   uint64
	left uint64 // postings of the current term not yet read
	key  uint64
	tf   uint64
	done bool
}

// openRun opens the bytes [from, to) of a run file, which hold whole terms, read through a buffer of
// bufSize bytes.
func openRun(rf runFile, from, to int64, bufSize int) (*runCursor, error) {
	f, err := os.Open(rf.path)
	if err != nil {
		return nil, fmt.Errorf("build index: read run %s: %w", rf.shown, bareErr(err))
	}
	c := &runCursor{f: f, r: bufio.NewReaderSize(io.NewSectionReader(f, from, to-from), bufSize), path: rf.shown}
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

func (c *runCursor) next() error {
	if c.mem != nil {
		if c.i == c.end {
			c.done = true
			return nil
		}
		id := c.mem.order[c.i]
		c.i++
		c.term = append(c.term[:0], c.mem.terms[id]...)
		c.df, c.left, c.key = uint64(c.mem.st[id].df), uint64(c.mem.st[id].df), 0
		c.buf = c.mem.st[id].post
		return nil
	}
	for c.left > 0 { // skip what the merge did not read
		if err := c.posting(); err != nil {
			return err
		}
	}
	n, err := binary.ReadUvarint(c.r)
	if err == io.EOF {
		c.done = true
		return c.f.Close()
	}
	if err != nil {
		return c.bad(err)
	}
	c.term = slices.Grow(c.term[:0], int(n))[:n]
	if _, err := io.ReadFull(c.r, c.term); err != nil {
		return c.bad(err)
	}
	if c.df, err = binary.ReadUvarint(c.r); err != nil {
		return c.bad(err)
	}
	if _, err = binary.ReadUvarint(c.r); err != nil {
		return c.bad(err)
	}
	c.left, c.key = c.df, 0
	return nil
}

// posting reads the next posting of the current term into key and tf.
func (c *runCursor) posting() error {
	if c.mem != nil {
		d, k := binary.Uvarint(c.buf)
		if k <= 0 {
			return c.bad(io.ErrUnexpectedEOF)
		}
		tf, k2 := binary.Uvarint(c.buf[k:])
		if k2 <= 0 {
			return c.bad(io.ErrUnexpectedEOF)
		}
		c.buf = c.buf[k+k2:]
		c.key += d
		c.tf = tf
		c.left--
		return nil
	}
	d, err := binary.ReadUvarint(c.r)
	if err != nil {
		return c.bad(err)
	}
	tf, err := binary.ReadUvarint(c.r)
	if err != nil {
		return c.bad(err)
	}
	c.key += d
	c.tf = tf
	c.left--
	return nil
}

func (c *runCursor) bad(err error) error {
	if err == io.EOF {
		err = io.ErrUnexpectedEOF
	}
	return fmt.Errorf("build index: read run %s: %w", c.path, bareErr(err))
}

// merge k-way merges every worker's runs into the lexicon and postings, translating batch-local
// keys into row numbers, and computes each row's TF-IDF norm once document frequencies are final.
// The terms below mergeSplit and those from it on are merged by two goroutines into files of their
// own, which are then joined: lexicon entries hold lengths, not offsets, so the parts just follow.
func (b *builder) merge(ctx context.Context) (*Stats, error) {
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

func (b *builder) mergePart(ctx context.Context, p *mergePart) error {
	var cursors []*runCursor
	defer func() {
		for _, c := range cursors {
			if !c.done && c.f != nil {
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
		bufSize = int(min(max(b.opt.Mem/int64(2*runs), 4<<10), 1<<20))
	}
	for _, w := range b.workers {
		for _, rf := range w.runs {
			from, to := int64(0), rf.split
			if p.lo != "" {
				from, to = rf.split, rf.size
			}
			c, err := openRun(rf, from, to, bufSize)
			if err != nil {
				return err
			}
			cursors = append(cursors, c)
		}
		if w.memRun != nil {
			c, err := openMemRun(w.memRun, p.lo, p.hi, fmt.Sprintf("worker %d in memory", w.id))
			if err != nil {
				return err
			}
			cursors = append(cursors, c)
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
	var vb [3 * binary.MaxVarintLen64]byte
	var same []*runCursor
	var cur, pb []byte
	const mask = 1<<localBits - 1
	for terms := 0; ; terms++ {
		if terms%4096 == 0 {
			if err := ctx.Err(); err != nil {
				return err
			}
		}
		same = same[:0]
		cur = cur[:0]
		for _, c := range cursors {
			if c.done {
				continue
			}
			switch {
			case len(same) == 0:
				same = append(same, c)
				cur = append(cur[:0], c.term...)
			default:
				switch cmp := strings.Compare(string(c.term), string(cur)); {
				case cmp < 0:
					same = append(same[:0], c)
					cur = append(cur[:0], c.term...)
				case cmp == 0:
					same = append(same, c)
				}
			}
		}
		if len(same) == 0 {
			break
		}
		var df uint64
		for _, c := range same {
			df += c.df
			if err := c.posting(); err != nil {
				return err
			}
		}
		// Smooth idf as in score's TF-IDF: ln((1+N)/(1+df)) + 1.
		idf := math.Log(float64(1+n)/float64(1+int64(df))) + 1
		start := post.n
		prev := int64(-1)
		for postings := 1; ; postings++ {
			// A term held by most rows has as many postings: look at ctx within it too.
			if postings%(1<<20) == 0 {
				if err := ctx.Err(); err != nil {
					return err
				}
			}
			var best *runCursor
			for _, c := range same {
				if c.tf == 0 {
					continue // exhausted for this term
				}
				if best == nil || c.key < best.key {
					best = c
				}
			}
			if best == nil {
				break
			}
			seq := best.key >> localBits
			if seq >= uint64(len(b.base)) {
				return fmt.Errorf("build index: run %s: batch %d out of range", best.path, seq)
			}
			row := b.base[seq] + int64(best.key&mask)
			if row <= prev || row >= n {
				return fmt.Errorf("build index: run %s: posting order broken at row %d", best.path, row)
			}
			tf := best.tf
			// A term's postings are encoded into one buffer and written at once: a write of one to
			// three bytes per posting costs more than encoding it.
			if tf == 1 {
				pb = binary.AppendUvarint(pb, uint64(row-prev)<<1|1)
			} else {
				pb = binary.AppendUvarint(binary.AppendUvarint(pb, uint64(row-prev)<<1), tf)
			}
			if len(pb) >= 1<<20 {
				if err := post.write(pb); err != nil {
					return err
				}
				pb = pb[:0]
			}
			w := float64(tf) * idf
			norm2[row] += w * w
			prev = row
			if best.left > 0 {
				if err := best.posting(); err != nil {
					return err
				}
			} else {
				best.tf = 0
			}
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
		f, err := checksumFile(ctx, b.wd.path(e.Name()))
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
func (d workDir) create(path string) (*fileWriter, error) {
	f, err := os.Create(path)
	if err != nil {
		return nil, d.err("write", err)
	}
	return &fileWriter{path: path, shown: d.shown(path), f: f, w: bufio.NewWriterSize(f, 1<<20)}, nil
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
