package index

import (
	"bufio"
	"bytes"
	"cmp"
	"errors"
	"fmt"
	"hash/crc32"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"syscall"

	"sluice/index/jsonl"
)

// CopyRows writes the given rows to w in input order, each byte for byte as it stands in its source,
// checking every row against the checksum taken when it was indexed. A last line that had no newline
// gets one, so rows stay one per line.
func (ix *Index) CopyRows(w io.Writer, rows []int) error {
	if ix.set != nil {
		return ix.set.copyRows(w, rows)
	}
	rows = slices.Clone(rows)
	slices.Sort(rows)
	rows = slices.Compact(rows)
	var buf []byte // one read buffer for every source
	for i := 0; i < len(rows); {
		src := ix.rec(rows[i]).src
		// A plain source is copied copyPiece rows at a time, each piece's records given back once
		// it is done (ReleaseRows): a pick keeping 4 million rows of 40 million read every page of
		// the rows file first. A compressed one is read from its start by each call, so at once.
		plain := ix.meta.Sources[src].Compression == jsonl.None.String()
		j := i
		for j < len(rows) && ix.rec(rows[j]).src == src && (!plain || j-i < cmp.Or(ix.piece, copyPiece)) {
			j++
		}
		if err := ix.copyFrom(w, int(src), rows[i:j], copySpan, &buf); err != nil {
			// A record that failed its check read as zeros: that, not the mismatch it made.
			return cmp.Or(ix.Err(), err)
		}
		ix.ReleaseRows(rows[i], rows[j-1]+1)
		i = j
	}
	return ix.Err()
}

// copyPiece is how many rows of a plain source CopyRows copies before it gives their records'
// pages back.
const copyPiece = 1 << 16

// sourcePaths returns where to look for a pool file that is not stored in the index, in order: a
// relative locate is taken from the index folder with its links resolved, as the build recorded it,
// and then, for an index built before locate was recorded that way, from the folder as named.
func (ix *Index) sourcePaths(s Source) []string {
	switch {
	case s.Locate == "":
		return []string{s.Path}
	case filepath.IsAbs(s.Locate):
		return []string{s.Locate}
	}
	paths := []string{filepath.Join(ix.real, s.Locate)}
	if p := filepath.Join(ix.dir, s.Locate); p != paths[0] {
		paths = append(paths, p)
	}
	return paths
}

// sourceFile is a pool file open to copy rows from.
type sourceFile interface {
	io.Reader
	io.ReaderAt
	io.Closer
}

// openSource opens a pool file to copy rows from and returns its size. A source read from a stream
// was stored in the index and is read from the mapping Open made, so it is the copy made by the
// same build as the rows.
func (ix *Index) openSource(s Source) (sourceFile, int64, error) {
	if s.Stored != "" {
		b, ok := ix.stored[s.Stored]
		if !ok {
			return nil, 0, fmt.Errorf("copy rows from %s: the index is closed or lacks %s", s.Path, s.Stored)
		}
		if err := ix.chk.stored[s.Stored].all(); err != nil {
			return nil, 0, fmt.Errorf("copy rows from %s: %w", s.Path, err)
		}
		return nopCloser{bytes.NewReader(b)}, int64(len(b)), nil
	}
	var missing error // the first place's, when none has the file
	for _, path := range ix.sourcePaths(s) {
		// O_NONBLOCK, so that a FIFO (in an index built before streams were stored) is refused
		// below rather than waited on forever.
		f, err := os.OpenFile(path, os.O_RDONLY|syscall.O_NONBLOCK, 0)
		if errors.Is(err, fs.ErrNotExist) {
			if missing == nil {
				missing = err
			}
			continue
		}
		if err != nil {
			return nil, 0, fmt.Errorf("copy rows from %s: %w", s.Path, err)
		}
		fi, err := f.Stat()
		if err == nil && !fi.Mode().IsRegular() {
			err = fmt.Errorf("%s is not a regular file, and the index holds no copy of it: rebuild the index", path)
		}
		if err != nil {
			f.Close()
			return nil, 0, fmt.Errorf("copy rows from %s: %w", s.Path, err)
		}
		return f, fi.Size(), nil
	}
	return nil, 0, fmt.Errorf("copy rows from %s: %w", s.Path, missing)
}

type nopCloser struct{ *bytes.Reader }

func (nopCloser) Close() error { return nil }

// Kept rows of a plain file are read in spans of up to copySpan bytes, skipping gaps of at most
// copyGap between rows: one read for many rows, as few bytes read twice as a gap costs.
const (
	copySpan = 4 << 20
	copyGap  = 4 << 10
)

// copyFrom copies rows of source si, ascending, to w; a plain file is read in spans of up to span
// bytes (0: one read per row).
func (ix *Index) copyFrom(w io.Writer, si int, rows []int, span int, buf *[]byte) error {
	s := ix.meta.Sources[si]
	f, size, err := ix.openSource(s)
	if err != nil {
		return err
	}
	defer f.Close()
	if size != s.Size {
		return fmt.Errorf("copy rows from %s: %d bytes now, %d when indexed: %w", s.Path, size, s.Size, ErrSourceChanged)
	}
	if s.Compression == jsonl.None.String() {
		return ix.copyPlain(w, f, s.Path, rows, span, buf)
	}
	dr, _, err := jsonl.NewReader(bufio.NewReaderSize(f, 1<<20))
	if err != nil {
		return fmt.Errorf("copy rows from %s: %w", s.Path, err)
	}
	if c, ok := dr.(io.Closer); ok {
		defer c.Close()
	}
	r := bufio.NewReaderSize(dr, 1<<20)
	var pos int64
	rbuf := *buf
	defer func() { *buf = rbuf }()
	for _, row := range rows {
		rec := ix.rec(row)
		off, n := int64(rec.off), int(rec.n)
		rbuf = slices.Grow(rbuf[:0], n)[:n]
		if _, err := io.CopyN(io.Discard, r, off-pos); err != nil {
			return fmt.Errorf("copy rows from %s:%d: %w", s.Path, rec.line, err)
		}
		if _, err := io.ReadFull(r, rbuf); err != nil {
			return fmt.Errorf("copy rows from %s:%d: %w", s.Path, rec.line, err)
		}
		pos = off + int64(n)
		if err := writeRow(w, rbuf, rec, s.Path); err != nil {
			return err
		}
	}
	return nil
}

// copyPlain copies rows of a plain file, reading neighbouring rows in one span.
func (ix *Index) copyPlain(w io.Writer, f io.ReaderAt, path string, rows []int, span int, bufp *[]byte) error {
	buf := *bufp
	defer func() { *bufp = buf }()
	for i := 0; i < len(rows); {
		first := ix.rec(rows[i])
		start, end := int64(first.off), int64(first.off)+int64(first.n)
		j := i + 1
		for ; j < len(rows); j++ {
			r := ix.rec(rows[j])
			o, e := int64(r.off), int64(r.off)+int64(r.n)
			if o-end > copyGap || e-start > int64(span) {
				break
			}
			end = max(end, e)
		}
		buf = slices.Grow(buf[:0], int(end-start))[:end-start]
		if _, err := f.ReadAt(buf, start); err != nil {
			return fmt.Errorf("copy rows from %s:%d: %w", path, first.line, err)
		}
		for _, row := range rows[i:j] {
			rec := ix.rec(row)
			o := int64(rec.off) - start
			if err := writeRow(w, buf[o:o+int64(rec.n)], rec, path); err != nil {
				return err
			}
		}
		i = j
	}
	return nil
}

// writeRow checks a row's bytes against its checksum and writes them, with a newline if the row
// had none (a last line without one).
func writeRow(w io.Writer, b []byte, rec rowRec, path string) error {
	if crc32.Checksum(b, castagnoli) != rec.crc {
		return fmt.Errorf("copy rows from %s:%d: row bytes differ from when indexed: %w", path, rec.line, ErrSourceChanged)
	}
	if _, err := w.Write(b); err != nil {
		return fmt.Errorf("copy rows: %w", err)
	}
	if len(b) == 0 || b[len(b)-1] != '\n' {
		if _, err := w.Write([]byte{'\n'}); err != nil {
			return fmt.Errorf("copy rows: %w", err)
		}
	}
	return nil
}
