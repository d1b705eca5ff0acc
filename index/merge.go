package index

import (
	"bufio"
	"context"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
)

// spill writes the worker's dictionary as a run sorted by term bytes and starts a new one.
// A run entry is: uvarint term length, term, uvarint df, uvarint byte length, postings; a posting is
// the uvarint key delta and the uvarint term frequency.
func (w *worker) spill() error {
	if len(w.terms) == 0 {
		return nil
	}
	order := w.sortedTerms()
	path := filepath.Join(w.runDir, fmt.Sprintf("run-%d-%04d", w.id, len(w.runs)))
	fw, err := newFileWriter(path)
	if err != nil {
		return err
	}
	defer fw.abort()
	var vb [3 * binary.MaxVarintLen64]byte
	for _, id := range order {
		t := w.terms[id]
		n := binary.PutUvarint(vb[:], uint64(len(t)))
		fw.w.Write(vb[:n])
		fw.w.WriteString(t)
		n = binary.PutUvarint(vb[:], uint64(w.df[id]))
		n += binary.PutUvarint(vb[n:], uint64(len(w.post[id])))
		fw.w.Write(vb[:n])
		if _, err := fw.w.Write(w.post[id]); err != nil {
			return fw.fail(err)
		}
	}
	// Runs are scratch: no fsync needed, a crash discards the whole temporary folder.
	if err := fw.closeNoSync(); err != nil {
		return err
	}
	w.runs = append(w.runs, path)
	w.dict = newTermTable()
	w.gen++
	w.terms, w.post, w.last, w.df, w.counts = nil, nil, nil, nil, nil
	w.mem = 0
	return nil
}

// sortedTerms returns the ids of the terms with postings, in term byte order.
func (w *worker) sortedTerms() []int32 {
	order := make([]int32, 0, len(w.terms))
	for i := range w.terms {
		if w.df[i] > 0 {
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
		w.last = nil
		w.counts = nil
		w.memRun = &memRun{order: w.sortedTerms(), terms: w.terms, df: w.df, post: w.post}
	}
}

// memRun is a run still in memory: the worker's dictionary in term order.
type memRun struct {
	order []int32
	terms []string
	df    []uint32
	post  [][]byte
}

// runCursor reads one run term by term, from a file or from memory.
type runCursor struct {
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

func openRun(path string) (*runCursor, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	c := &runCursor{f: f, r: bufio.NewReaderSize(f, 1<<20), path: path}
	return c, c.next()
}

func (c *runCursor) next() error {
	if c.mem != nil {
		if c.i == len(c.mem.order) {
			c.done = true
			return nil
		}
		id := c.mem.order[c.i]
		c.i++
		c.term = append(c.term[:0], c.mem.terms[id]...)
		c.df, c.left, c.key = uint64(c.mem.df[id]), uint64(c.mem.df[id]), 0
		c.buf = c.mem.post[id]
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
	return fmt.Errorf("build index: read run %s: %w", c.path, err)
}

// merge k-way merges every worker's runs into the lexicon and postings, translating batch-local
// keys into row numbers, and computes each row's TF-IDF norm once document frequencies are final.
func (b *builder) merge(ctx context.Context) (*Stats, error) {
	var cursors []*runCursor
	defer func() {
		for _, c := range cursors {
			if !c.done && c.f != nil {
				c.f.Close()
			}
		}
	}()
	st := &Stats{}
	for _, w := range b.workers {
		for _, p := range w.runs {
			c, err := openRun(p)
			if err != nil {
				return nil, fmt.Errorf("build index: %w", err)
			}
			cursors = append(cursors, c)
			st.Runs++
		}
		if w.memRun != nil {
			c := &runCursor{mem: w.memRun, path: fmt.Sprintf("worker %d in memory", w.id)}
			if err := c.next(); err != nil {
				return nil, err
			}
			cursors = append(cursors, c)
		}
	}
	lex, err := newFileWriter(filepath.Join(b.tmp, lexiconFile))
	if err != nil {
		return nil, err
	}
	defer lex.abort()
	post, err := newFileWriter(filepath.Join(b.tmp, postingsFile))
	if err != nil {
		return nil, err
	}
	defer post.abort()

	n := b.meta.Rows
	norm2 := make([]float64, n)
	var vb [3 * binary.MaxVarintLen64]byte
	var same []*runCursor
	var cur []byte
	const mask = 1<<localBits - 1
	for terms := 0; ; terms++ {
		if terms%4096 == 0 {
			if err := ctx.Err(); err != nil {
				return nil, err
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
				return nil, err
			}
		}
		// Smooth idf as in score's TF-IDF: ln((1+N)/(1+df)) + 1.
		idf := math.Log(float64(1+n)/float64(1+int64(df))) + 1
		start := post.n
		prev := int64(-1)
		for {
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
				return nil, fmt.Errorf("build index: run %s: batch %d out of range", best.path, seq)
			}
			row := b.base[seq] + int64(best.key&mask)
			if row <= prev || row >= n {
				return nil, fmt.Errorf("build index: run %s: posting order broken at row %d", best.path, row)
			}
			tf := best.tf
			var k int
			if tf == 1 {
				k = binary.PutUvarint(vb[:], uint64(row-prev)<<1|1)
			} else {
				k = binary.PutUvarint(vb[:], uint64(row-prev)<<1)
				k += binary.PutUvarint(vb[k:], tf)
			}
			if err := post.write(vb[:k]); err != nil {
				return nil, err
			}
			w := float64(tf) * idf
			norm2[row] += w * w
			prev = row
			if best.left > 0 {
				if err := best.posting(); err != nil {
					return nil, err
				}
			} else {
				best.tf = 0
			}
		}
		k := binary.PutUvarint(vb[:], uint64(len(cur)))
		lex.write(vb[:k])
		lex.write(cur)
		k = binary.PutUvarint(vb[:], df)
		k += binary.PutUvarint(vb[k:], uint64(post.n-start))
		if err := lex.write(vb[:k]); err != nil {
			return nil, err
		}
		b.meta.Terms++
		b.meta.Postings += int64(df)
		for _, c := range same {
			if err := c.next(); err != nil {
				return nil, err
			}
		}
	}
	if err := lex.close(); err != nil {
		return nil, err
	}
	if err := post.close(); err != nil {
		return nil, err
	}
	nw, err := newFileWriter(filepath.Join(b.tmp, normsFile))
	if err != nil {
		return nil, err
	}
	defer nw.abort()
	var fb [8]byte
	for _, v := range norm2 {
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

func (b *builder) writeMeta() error {
	entries, err := os.ReadDir(b.tmp)
	if err != nil {
		return fmt.Errorf("build index: %w", err)
	}
	b.meta.Files = map[string]File{}
	for _, e := range entries {
		if e.Name() == metaFile || e.IsDir() {
			continue
		}
		f, err := checksumFile(filepath.Join(b.tmp, e.Name()))
		if err != nil {
			return fmt.Errorf("build index: %w", err)
		}
		b.meta.Files[e.Name()] = f
	}
	data, err := json.MarshalIndent(&b.meta, "", "  ")
	if err != nil {
		return err
	}
	w, err := newFileWriter(filepath.Join(b.tmp, metaFile))
	if err != nil {
		return err
	}
	defer w.abort()
	if err := w.write(append(data, '\n')); err != nil {
		return err
	}
	return w.close()
}

// fileWriter is a buffered file that is flushed and fsynced on close, and removed by abort.
type fileWriter struct {
	path   string
	f      *os.File
	w      *bufio.Writer
	n      int64
	closed bool
}

func newFileWriter(path string) (*fileWriter, error) {
	f, err := os.Create(path)
	if err != nil {
		return nil, fmt.Errorf("write %w", err)
	}
	return &fileWriter{path: path, f: f, w: bufio.NewWriterSize(f, 1<<20)}, nil
}

func (w *fileWriter) write(p []byte) error {
	n, err := w.w.Write(p)
	w.n += int64(n)
	if err != nil {
		return w.fail(err)
	}
	return nil
}

func (w *fileWriter) fail(err error) error { return fmt.Errorf("write %s: %w", w.path, err) }

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

// checkTarget refuses to build over anything but nothing, an empty folder or an earlier index.
func checkTarget(dir string) error {
	fi, err := os.Stat(dir)
	if errors.Is(err, os.ErrNotExist) {
		return nil
	}
	if err != nil {
		return fmt.Errorf("build index: %w", err)
	}
	if !fi.IsDir() {
		return fmt.Errorf("build index: %s exists and is not a folder", dir)
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		return fmt.Errorf("build index: %w", err)
	}
	if len(entries) == 0 {
		return nil
	}
	b, err := os.ReadFile(filepath.Join(dir, metaFile))
	if err == nil {
		var m struct{ Format string }
		if json.Unmarshal(b, &m) == nil && m.Format == Format {
			return nil
		}
	}
	return fmt.Errorf("build index: refusing to replace %s: it is not empty and not a sluice index", dir)
}
