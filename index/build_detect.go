package index

import (
	"bufio"
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"strings"

	"sluice/index/jsonl"
)

// headBytes bounds what the detection of a file's shape reads of it, and so what it holds of a
// stream: 100 rows of most pools are well under it.
const headBytes = 16 << 20

// heldHead is what the detection read of a stream (stdin, a pipe), which cannot be opened again:
// the file, still open, and the bytes read from it, which the build reads first.
type heldHead struct {
	f    *os.File
	head []byte
}

// detectShapes finds the text shape of each pool file from its first rows, before any row is
// indexed, and makes the spec of the shapes found, in the order of jsonl.Shapes: a row takes the
// first it has in full. A pool whose files name their fields differently is thus read whole, and
// the spec in meta.json still reads every row as the build did.
func (b *builder) detectShapes(ctx context.Context) error {
	shapes := jsonl.Shapes()
	found := make([]bool, len(shapes))
	b.detected = make([]string, len(b.paths))
	for si, path := range b.paths {
		lines, err := b.head(ctx, si, path)
		if err != nil {
			return err
		}
		if len(lines) == 0 {
			continue // nothing but blank lines: the file has no shape, and needs none
		}
		sp, err := jsonl.Detect(lines)
		if err != nil {
			return fmt.Errorf("build index: %s: no --text given and %w", path, err)
		}
		for i, sh := range shapes {
			if sh.String() == sp.String() {
				found[i] = true
			}
		}
		b.detected[si] = sp.String()
	}
	var spec jsonl.Spec
	for i, sh := range shapes {
		if !found[i] {
			continue
		}
		var err error
		if spec, err = spec.Or(sh); err != nil {
			return fmt.Errorf("build index: %w", err) // never: no known shape holds another
		}
	}
	if len(spec.Alternatives()) == 0 {
		return fmt.Errorf("build index: no rows in %s, only blank lines or nothing: %w", strings.Join(b.paths, ", "), ErrEmptyPool)
	}
	b.spec = spec
	b.meta.TextDetected = true
	return nil
}

// head returns the first non-blank lines of pool file si, at most sampleRows of them and headBytes
// read, having checked that they may be JSONL. A stream's bytes read are kept in b.held.
func (b *builder) head(ctx context.Context, si int, path string) ([][]byte, error) {
	f := os.Stdin
	if path != "-" {
		var err error
		if f, err = os.Open(path); err != nil {
			return nil, pathErr("read", err)
		}
	}
	stream := f == os.Stdin
	if !stream {
		fi, err := f.Stat()
		switch {
		case err != nil:
			f.Close()
			return nil, pathErr("read", err)
		case fi.IsDir():
			f.Close()
			return nil, fmt.Errorf("read %s: is a folder, not a JSONL file", path)
		}
		stream = !fi.Mode().IsRegular()
	}
	rec := &headReader{r: f, left: headBytes, keep: stream}
	if stream {
		b.held[si] = &heldHead{f: f}
		defer func() { b.held[si].head = rec.kept }()
	} else {
		defer f.Close()
	}
	r, _, err := jsonl.NewReader(bufio.NewReaderSize(rec, 64<<10))
	if err != nil {
		return nil, fmt.Errorf("read %s: %w", path, err)
	}
	defer r.Close()
	sc := jsonl.NewScanner(jsonl.WithContext(ctx, r), b.opt.MaxRowBytes)
	var (
		lines [][]byte
		sniff jsonl.Sniffer
		held  int
	)
	for len(lines) < sampleRows && held < headBytes && sc.Scan() {
		line := sc.Bytes()
		sniff.Line(line)
		if sc.TooLong() || isBlank(bytes.TrimPrefix(line, utf8BOM)) {
			continue
		}
		lines = append(lines, bytes.Clone(line))
		held += len(line)
	}
	if err := sc.Err(); err != nil && !errors.Is(err, errHeadFull) && ctx.Err() == nil {
		return nil, fmt.Errorf("read %s: %w", path, err)
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if len(lines) < sampleRows && rec.eof {
		sniff.End()
	}
	if err := sniff.Err(); err != nil {
		return nil, fmt.Errorf("read %s: %w", path, err)
	}
	return lines, nil
}

// errHeadFull ends the read of a file's head once headBytes are read.
var errHeadFull = errors.New("the head read is full")

// headReader reads at most left bytes of r, keeping them when keep is set.
type headReader struct {
	r    io.Reader
	left int
	keep bool
	kept []byte
	eof  bool // r itself ended
}

func (h *headReader) Read(p []byte) (int, error) {
	if h.left <= 0 {
		return 0, errHeadFull
	}
	p = p[:min(len(p), h.left)]
	n, err := h.r.Read(p)
	h.left -= n
	if h.keep {
		h.kept = append(h.kept, p[:n]...)
	}
	if err == io.EOF {
		h.eof = true
	}
	return n, err
}
