package jsonl

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"

	"github.com/klauspost/compress/gzip"
	"github.com/klauspost/compress/zstd"
)

// Compression names the container format of an input stream.
type Compression uint8

const (
	None Compression = iota // plain bytes
	Gzip                    // RFC 1952 gzip, possibly several members
	Zstd                    // RFC 8878 zstd, possibly several frames
)

func (c Compression) String() string {
	switch c {
	case None:
		return "none"
	case Gzip:
		return "gzip"
	case Zstd:
		return "zstd"
	}
	return fmt.Sprintf("Compression(%d)", uint8(c))
}

// maxZstdWindow caps the window a zstd frame may ask for, so that a hostile
// or damaged header cannot make the decoder allocate without bound. 128 MiB
// (window log 27) is the reference zstd tool's default decoding limit
// (recalled from memory; common practice).
const maxZstdWindow = 1 << 27

// peekSize is the read-ahead buffer put in front of the source; it only has
// to hold the magic bytes, but a larger one also batches small reads.
const peekSize = 256 << 10

// Open opens path ("-" means standard input) and returns a reader of its
// decompressed bytes. The compression is detected from the magic bytes, not
// the file name, so a misnamed file still reads correctly. Closing the
// reader closes the file, but never standard input.
func Open(path string) (io.ReadCloser, Compression, error) {
	var f *os.File
	if path == "-" {
		f = os.Stdin
	} else {
		var err error
		f, err = os.Open(path)
		if err != nil {
			return nil, None, err
		}
	}
	r, c, err := NewReader(f)
	if err != nil {
		if f != os.Stdin {
			f.Close()
		}
		name := path
		if path == "-" {
			name = "stdin"
		}
		return nil, c, fmt.Errorf("open %s: %w", name, err)
	}
	if f == os.Stdin {
		return r, c, nil
	}
	return &fileReader{ReadCloser: r, f: f}, c, nil
}

type fileReader struct {
	io.ReadCloser
	f *os.File
}

func (r *fileReader) Close() error {
	err := r.ReadCloser.Close()
	if ferr := r.f.Close(); err == nil {
		err = ferr
	}
	return err
}

var (
	gzipMagic = []byte{0x1f, 0x8b}
	zstdMagic = []byte{0x28, 0xb5, 0x2f, 0xfd}
)

// detect reports the compression that the first bytes of a stream announce.
func detect(b []byte) Compression {
	switch {
	case bytes.HasPrefix(b, gzipMagic):
		return Gzip
	case bytes.HasPrefix(b, zstdMagic):
		return Zstd
	// A zstd stream may start with a skippable frame, magic 0x184D2A5?
	// little-endian (RFC 8878 section 3.1.2).
	case len(b) >= 4 && b[0]&0xf0 == 0x50 && b[1] == 0x2a && b[2] == 0x4d && b[3] == 0x18:
		return Zstd
	}
	return None
}

// NewReader returns a reader of the decompressed bytes of r, detecting the
// compression from its first bytes. Closing the returned reader releases the
// decoder but does not close r.
func NewReader(r io.Reader) (io.ReadCloser, Compression, error) {
	br := bufio.NewReaderSize(r, peekSize)
	head, err := br.Peek(4)
	if err != nil && err != io.EOF {
		return nil, None, fmt.Errorf("read header: %w", err)
	}
	c := detect(head)
	switch c {
	case Gzip:
		zr, err := gzip.NewReader(br)
		if err != nil {
			return nil, c, fmt.Errorf("gzip header: %w", err)
		}
		return &streamReader{zr, c}, c, nil
	case Zstd:
		// One decoder goroutine: the caller already runs one reader per
		// input, and the machine this targets has few cores.
		zr, err := zstd.NewReader(br,
			zstd.WithDecoderConcurrency(1),
			zstd.WithDecoderMaxWindow(maxZstdWindow),
			zstd.WithDecoderLowmem(true))
		if err != nil {
			return nil, c, fmt.Errorf("zstd: %w", err)
		}
		return &streamReader{zr.IOReadCloser(), c}, c, nil
	}
	return io.NopCloser(br), c, nil
}

// streamReader words a decoder's errors: which format, and whether the stream was cut short or
// damaged, since the decoders' own words ("unexpected EOF", "CRC check failed") say neither.
type streamReader struct {
	io.ReadCloser
	c Compression
}

func (s *streamReader) Read(p []byte) (int, error) {
	n, err := s.ReadCloser.Read(p)
	switch {
	case err == nil || err == io.EOF:
	case errors.Is(err, io.ErrUnexpectedEOF):
		err = fmt.Errorf("%s stream ends early, the file is cut short: %w", s.c, err)
	default:
		err = fmt.Errorf("damaged %s stream: %w", s.c, err)
	}
	return n, err
}
