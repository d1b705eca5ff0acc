package jsonl

import (
	"bytes"
	"fmt"
	"io"
	"math"
)

// DefaultMaxLine is the line limit NewScanner uses when given maxLine <= 0.
const DefaultMaxLine = 16 << 20

// initialBuf is the buffer a Scanner starts with; it grows only when a line
// does not fit, up to maxLine+1 bytes.
const initialBuf = 64 << 10

// maxEmptyReads bounds how often a reader may return (0, nil) in a row
// before the Scanner gives up, as bufio does.
const maxEmptyReads = 100

// Scanner splits a stream into lines, keeping for each the byte offset and
// the 1-based line number in the stream. Unlike bufio.Scanner it survives
// an over-long line: it skips it in bounded memory, reports it through
// TooLong and goes on.
type Scanner struct {
	r       io.Reader
	maxLine int
	buf     []byte
	start   int   // first unconsumed byte in buf
	end     int   // end of valid data in buf
	scanned int   // buf[start:scanned] is known to hold no '\n'
	pos     int64 // stream offset of buf[start]
	eof     bool
	readErr error // sticky error from r, reported once buf is drained

	line    []byte
	off     int64
	n       int
	lineNo  int64
	tooLong bool
	err     error
}

// NewScanner returns a Scanner reading r that loads lines of at most
// maxLine bytes (not counting the "\n"); maxLine <= 0 means DefaultMaxLine.
func NewScanner(r io.Reader, maxLine int) *Scanner {
	if maxLine <= 0 {
		maxLine = DefaultMaxLine
	}
	maxLine = min(maxLine, math.MaxInt/2) // keeps maxLine+1 and doubling in range
	size := initialBuf
	if maxLine+1 < size {
		size = maxLine + 1
	}
	return &Scanner{r: r, maxLine: maxLine, buf: make([]byte, size)}
}

// Scan advances to the next line and reports whether there is one. It
// returns false at the end of the stream or on a read error; Err tells
// which.
func (s *Scanner) Scan() bool {
	if s.err != nil {
		return false
	}
	s.line, s.tooLong = nil, false
	for {
		if i := bytes.IndexByte(s.buf[s.scanned:s.end], '\n'); i >= 0 {
			nl := s.scanned + i
			s.emit(s.buf[s.start:nl], nl+1-s.start)
			s.start = nl + 1
			s.scanned = s.start
			return true
		}
		s.scanned = s.end
		if s.end-s.start > s.maxLine {
			return s.skipLong()
		}
		if s.readErr != nil {
			s.fail(s.readErr)
			return false
		}
		if s.eof {
			if s.end == s.start {
				return false
			}
			s.emit(s.buf[s.start:s.end], s.end-s.start)
			s.start, s.scanned = s.end, s.end
			return true
		}
		s.fill()
	}
}

func (s *Scanner) emit(line []byte, n int) {
	s.line = line
	s.off = s.pos
	s.n = n
	s.lineNo++
	s.pos += int64(n)
}

func (s *Scanner) fail(err error) {
	s.err = fmt.Errorf("read line %d at byte %d: %w", s.lineNo+1, s.pos, err)
}

// fill makes room in buf and reads once more from r.
func (s *Scanner) fill() {
	if s.start > 0 {
		copy(s.buf, s.buf[s.start:s.end])
		s.end -= s.start
		s.scanned -= s.start
		s.start = 0
	}
	if s.end == len(s.buf) {
		size := 2 * len(s.buf)
		if size > s.maxLine+1 {
			size = s.maxLine + 1
		}
		nb := make([]byte, size)
		copy(nb, s.buf[:s.end])
		s.buf = nb
	}
	s.read()
}

func (s *Scanner) read() {
	for range maxEmptyReads {
		n, err := s.r.Read(s.buf[s.end:])
		if n < 0 || n > len(s.buf)-s.end {
			s.readErr = fmt.Errorf("reader returned invalid count %d", n)
			return
		}
		s.end += n
		if err == io.EOF {
			s.eof = true
			return
		}
		if err != nil {
			s.readErr = err
			return
		}
		if n > 0 {
			return
		}
	}
	s.readErr = io.ErrNoProgress
}

// skipLong consumes the rest of a line that exceeds maxLine, keeping no more
// than one buffer of it in memory, and reports it as too long.
func (s *Scanner) skipLong() bool {
	skipped := s.end - s.start
	s.start, s.end, s.scanned = 0, 0, 0
	for {
		if s.readErr != nil {
			s.fail(s.readErr)
			return false
		}
		if s.eof {
			break
		}
		s.read()
		if i := bytes.IndexByte(s.buf[:s.end], '\n'); i >= 0 {
			skipped += i + 1
			s.start, s.scanned = i+1, i+1
			break
		}
		skipped += s.end
		s.end = 0
	}
	s.emit(nil, skipped)
	s.tooLong = true
	return true
}

// Bytes returns the current line without its trailing "\n"; a "\r" before
// it is kept. It is empty for a too-long line and is valid only until the
// next call to Scan.
func (s *Scanner) Bytes() []byte { return s.line }

// TooLong reports whether the current line exceeded maxLine and was skipped
// unread; Offset, Len and Line still describe it.
func (s *Scanner) TooLong() bool { return s.tooLong }

// Offset returns the byte offset of the current line's first byte in the
// stream.
func (s *Scanner) Offset() int64 { return s.off }

// Len returns the length of the current line including its "\n", if any:
// exactly the bytes a byte-identical copy of the row must take.
func (s *Scanner) Len() int { return s.n }

// Line returns the 1-based number of the current line.
func (s *Scanner) Line() int64 { return s.lineNo }

// Err returns the first read error met, wrapped with the line number and
// offset reached; it is nil at a clean end of stream.
func (s *Scanner) Err() error { return s.err }
