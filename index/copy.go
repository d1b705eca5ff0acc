package index

import (
	"bufio"
	"fmt"
	"hash/crc32"
	"io"
	"os"
	"path/filepath"
	"slices"

	"sluice/index/jsonl"
)

// CopyRows writes the given rows to w in input order, each byte for byte as it stands in its source,
// checking every row against the checksum taken when it was indexed. A last line that had no newline
// gets one, so rows stay one per line.
func (ix *Index) CopyRows(w io.Writer, rows []int) error {
	rows = slices.Clone(rows)
	slices.Sort(rows)
	rows = slices.Compact(rows)
	for i := 0; i < len(rows); {
		src := ix.rec(rows[i]).src
		j := i
		for j < len(rows) && ix.rec(rows[j]).src == src {
			j++
		}
		if err := ix.copyFrom(w, int(src), rows[i:j]); err != nil {
			return err
		}
		i = j
	}
	return nil
}

func (ix *Index) sourcePath(s Source) string {
	switch {
	case s.Stored != "":
		return filepath.Join(ix.dir, s.Stored)
	case s.Locate == "":
		return s.Path
	case filepath.IsAbs(s.Locate):
		return s.Locate
	}
	return filepath.Join(ix.dir, s.Locate)
}

func (ix *Index) copyFrom(w io.Writer, si int, rows []int) error {
	s := ix.meta.Sources[si]
	path := ix.sourcePath(s)
	f, err := os.Open(path)
	if err != nil {
		return fmt.Errorf("copy rows from %s: %w", s.Path, err)
	}
	defer f.Close()
	if fi, err := f.Stat(); err != nil {
		return fmt.Errorf("copy rows from %s: %w", s.Path, err)
	} else if fi.Size() != s.Size {
		return fmt.Errorf("copy rows from %s: %d bytes now, %d when indexed: %w", s.Path, fi.Size(), s.Size, ErrSourceChanged)
	}
	var r io.Reader = f
	plain := s.Compression == jsonl.None.String()
	if !plain {
		dr, _, err := jsonl.NewReader(bufio.NewReaderSize(f, 1<<20))
		if err != nil {
			return fmt.Errorf("copy rows from %s: %w", s.Path, err)
		}
		if c, ok := dr.(io.Closer); ok {
			defer c.Close()
		}
		r = bufio.NewReaderSize(dr, 1<<20)
	}
	var pos int64
	var buf []byte
	for _, row := range rows {
		rec := ix.rec(row)
		off, n := int64(rec.off), int(rec.n)
		buf = slices.Grow(buf[:0], n)[:n]
		if plain {
			if _, err := f.ReadAt(buf, off); err != nil {
				return fmt.Errorf("copy rows from %s:%d: %w", s.Path, rec.line, err)
			}
		} else {
			if _, err := io.CopyN(io.Discard, r, off-pos); err != nil {
				return fmt.Errorf("copy rows from %s:%d: %w", s.Path, rec.line, err)
			}
			if _, err := io.ReadFull(r, buf); err != nil {
				return fmt.Errorf("copy rows from %s:%d: %w", s.Path, rec.line, err)
			}
			pos = off + int64(n)
		}
		if crc32.Checksum(buf, castagnoli) != rec.crc {
			return fmt.Errorf("copy rows from %s:%d: row bytes differ from when indexed: %w", s.Path, rec.line, ErrSourceChanged)
		}
		if n == 0 || buf[n-1] != '\n' {
			buf = append(buf, '\n')
		}
		if _, err := w.Write(buf); err != nil {
			return fmt.Errorf("copy rows: %w", err)
		}
	}
	return nil
}
