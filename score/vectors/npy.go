package vectors

import (
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
)

// The .npy format is specified in NumPy's "NEP 1 — A simple file format for
// NumPy arrays" and numpy.lib.format: the magic string "\x93NUMPY", a major
// and minor version byte, the header length (2 bytes little-endian for
// version 1.0, 4 bytes for 2.0 and 3.0), then the header, a Python dict
// literal with keys 'descr', 'fortran_order' and 'shape', padded with spaces
// and ended by a newline; the array's bytes follow.
const npyMagic = "\x93NUMPY"

// maxHeaderLen caps the header a reader loads. NumPy's own reader refuses
// headers over 10,000 bytes unless told otherwise; this is looser, and still
// small.
const maxHeaderLen = 1 << 20

// MaxDim caps the length of a vector any reader accepts, so that a header
// or a first line cannot make a caller allocate blocks of absurd rows.
const MaxDim = 1 << 20

// npyChunk is the most raw bytes an NPY holds at once (unless one row is
// larger).
const npyChunk = 1 << 20

// NPY reads the rows of a 2-D float32 or float16 .npy array, a block at a
// time: it holds at most about 1 MiB of the file's bytes. It implements
// Source.
type NPY struct {
	name     string
	r        io.Reader
	closer   io.Closer
	half     bool // float16 data
	itemSize int
	rows     int64
	dim      int
	next     int64 // the row the next Read starts at
	start    int64 // byte offset of the data
	size     int64 // file size, or -1 when unknown
	checked  bool  // size was known and matched the header
	buf      []byte
}

// OpenNPY opens the .npy file at path and reads its header. Close it when
// done.
func OpenNPY(path string) (*NPY, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("read vectors: %w", err)
	}
	size := int64(-1)
	if st, err := f.Stat(); err == nil && st.Mode().IsRegular() {
		size = st.Size()
	}
	n, err := NewNPY(f, path, size)
	if err != nil {
		f.Close()
		return nil, err
	}
	n.closer = f
	return n, nil
}

// NewNPY reads an .npy header from r, named name in errors. size is the
// length of the whole stream when known, else -1; when known, the data must
// fill it exactly.
func NewNPY(r io.Reader, name string, size int64) (*NPY, error) {
	n := &NPY{name: name, r: r, size: size}
	if err := n.readHeader(); err != nil {
		return nil, fmt.Errorf("read %s: header: %w", name, err)
	}
	return n, nil
}

func (n *NPY) readHeader() error {
	var pre [12]byte
	if _, err := io.ReadFull(n.r, pre[:8]); err != nil {
		return fmt.Errorf("shorter than the 8-byte preamble: %w", ErrTruncated)
	}
	if string(pre[:6]) != npyMagic {
		return fmt.Errorf("starts %q, want the .npy magic %q: %w", pre[:6], npyMagic, ErrFormat)
	}
	var hlen int64
	switch major, minor := pre[6], pre[7]; {
	case major == 1 && minor == 0:
		if _, err := io.ReadFull(n.r, pre[8:10]); err != nil {
			return fmt.Errorf("header length: %w", ErrTruncated)
		}
		hlen, n.start = int64(binary.LittleEndian.Uint16(pre[8:10])), 10
	case (major == 2 || major == 3) && minor == 0:
		if _, err := io.ReadFull(n.r, pre[8:12]); err != nil {
			return fmt.Errorf("header length: %w", ErrTruncated)
		}
		hlen, n.start = int64(binary.LittleEndian.Uint32(pre[8:12])), 12
	default:
		return fmt.Errorf("format version %d.%d, want 1.0, 2.0 or 3.0: %w", major, minor, ErrUnsupported)
	}
	if hlen > maxHeaderLen || (n.size >= 0 && n.start+hlen > n.size) {
		return fmt.Errorf("header of %d bytes: too long for the file or above %d: %w", hlen, maxHeaderLen, ErrTruncated)
	}
	h := make([]byte, hlen)
	if _, err := io.ReadFull(n.r, h); err != nil {
		return fmt.Errorf("header of %d bytes: %w", hlen, ErrTruncated)
	}
	n.start += hlen
	hd, err := parseNPYHeader(h)
	if err != nil {
		return err
	}
	return n.accept(hd)
}

// accept checks that the header describes a 2-D little-endian float32 or
// float16 array in C order whose bytes fill the rest of the file.
func (n *NPY) accept(hd npyHeader) error {
	switch hd.descr {
	case "<f4":
		n.itemSize = 4
	case "<f2":
		n.itemSize, n.half = 2, true
	case ">f4", ">f2":
		return fmt.Errorf("dtype %q is big-endian; save a.astype('<%s'): %w", hd.descr, hd.descr[1:], ErrUnsupported)
	case "<f8", ">f8":
		return fmt.Errorf("dtype %q is float64; save a.astype('<f4'): %w", hd.descr, ErrUnsupported)
	default:
		return fmt.Errorf("dtype %q, want '<f4' (float32) or '<f2' (float16): %w", hd.descr, ErrUnsupported)
	}
	if len(hd.shape) != 2 {
		return fmt.Errorf("shape %s is %d-D, want 2-D (rows, dim): %w", shapeText(hd.shape), len(hd.shape), ErrUnsupported)
	}
	rows, dim := hd.shape[0], hd.shape[1]
	if dim == 0 {
		return fmt.Errorf("shape %s: vectors of length 0: %w", shapeText(hd.shape), ErrUnsupported)
	}
	if dim > MaxDim {
		return fmt.Errorf("shape %s: vectors longer than %d: %w", shapeText(hd.shape), MaxDim, ErrUnsupported)
	}
	// A Fortran-order array of one row or one column has the bytes of the
	// C-order one.
	if hd.fortran && rows > 1 && dim > 1 {
		return fmt.Errorf("Fortran order (column-major); save numpy.ascontiguousarray(a): %w", ErrUnsupported)
	}
	n.rows, n.dim = rows, int(dim)
	rowBytes := dim * int64(n.itemSize)
	if rows > (math.MaxInt64-n.start)/rowBytes {
		return fmt.Errorf("shape %s overflows: %w", shapeText(hd.shape), ErrFormat)
	}
	if n.size >= 0 {
		data, have := rows*rowBytes, n.size-n.start
		switch {
		case have < data:
			return fmt.Errorf("shape %s needs %d bytes of data, the file has %d: %w", shapeText(hd.shape), data, have, ErrTruncated)
		case have > data:
			return fmt.Errorf("%d bytes after the %d×%d array (more than one array in the file?): %w", have-data, rows, dim, ErrFormat)
		}
		n.checked = true
	}
	return nil
}

// Rows returns the number of rows the header gives.
func (n *NPY) Rows() int64 { return n.rows }

// knownRows returns the row count when the file's size confirmed it.
func (n *NPY) knownRows() (int64, bool) { return n.rows, n.checked }

// Dim returns the length of each row.
func (n *NPY) Dim() int { return n.dim }

// Half reports whether the file holds float16 values (converted to float32
// exactly as they are read).
func (n *NPY) Half() bool { return n.half }

// Close closes the file OpenNPY opened; for an NPY made by NewNPY it does
// nothing.
func (n *NPY) Close() error {
	if n.closer == nil {
		return nil
	}
	return n.closer.Close()
}

// Read copies the next rows into dst, at most len(dst)/Dim() of them. A NaN
// or infinite value is an error naming its row, column and byte offset.
func (n *NPY) Read(dst []float32) (int, error) {
	if n.next == n.rows {
		return 0, n.end()
	}
	want := int64(len(dst) / n.dim)
	if want == 0 {
		return 0, fmt.Errorf("read %s: room for %d values, a row has %d", n.name, len(dst), n.dim)
	}
	want = min(want, n.rows-n.next)
	rowBytes := n.dim * n.itemSize
	chunk := max(1, npyChunk/rowBytes)
	if len(n.buf) < min(chunk, int(want))*rowBytes {
		n.buf = make([]byte, min(chunk, int(want))*rowBytes)
	}
	for done := int64(0); done < want; {
		k := min(int64(chunk), want-done)
		b := n.buf[:k*int64(rowBytes)]
		if got, err := io.ReadFull(n.r, b); err != nil {
			at := n.next + int64(got/rowBytes)
			if errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF) {
				return 0, fmt.Errorf("read %s: row %d (byte %d) of %d: %w", n.name, at, n.offset(at), n.rows, ErrTruncated)
			}
			return 0, fmt.Errorf("read %s: row %d (byte %d): %w", n.name, at, n.offset(at), err)
		}
		out := dst[done*int64(n.dim) : (done+k)*int64(n.dim)]
		if bad := n.decode(out, b); bad >= 0 {
			row, col := n.next+int64(bad/n.dim), bad%n.dim
			return 0, fmt.Errorf("read %s: row %d, column %d (byte %d): %v: %w",
				n.name, row, col, n.offset(row)+int64(col*n.itemSize), out[bad], ErrNotFinite)
		}
		n.next += k
		done += k
	}
	return int(want), nil
}

// end checks, after the last row, that a stream of unknown size has no more
// bytes (a file of known size was checked against its header already).
func (n *NPY) end() error {
	if n.size < 0 {
		var one [1]byte
		if k, _ := io.ReadFull(n.r, one[:]); k > 0 {
			return fmt.Errorf("read %s: bytes after the %d×%d array at byte %d: %w", n.name, n.rows, n.dim, n.offset(n.rows), ErrFormat)
		}
		n.size = n.offset(n.rows)
	}
	return io.EOF
}

func (n *NPY) offset(row int64) int64 { return n.start + row*int64(n.dim*n.itemSize) }

// decode converts the little-endian values of b into out and returns the
// index of the first NaN or infinity, or -1.
func (n *NPY) decode(out []float32, b []byte) int {
	if n.half {
		b = b[:2*len(out)]
		for i := range out {
			h := uint32(b[2*i]) | uint32(b[2*i+1])<<8
			switch e := h & 0x7c00; e {
			case 0x7c00:
				out[i] = halfToFloat32(uint16(h))
				return i
			case 0:
				out[i] = halfToFloat32(uint16(h))
			default:
				// A normal value: move sign, exponent and fraction into
				// place and rebias the exponent from 15 to 127 (what
				// halfToFloat32 does, inlined for speed).
				out[i] = math.Float32frombits((h&0x8000)<<16 | ((h&0x7fff)<<13 + (127-15)<<23))
			}
		}
		return -1
	}
	for i := range out {
		u := binary.LittleEndian.Uint32(b[4*i:])
		out[i] = math.Float32frombits(u)
		if u&0x7f800000 == 0x7f800000 {
			return i
		}
	}
	return -1
}

// shapeText writes a shape as Python prints a tuple: (6, 5), (7,), ().
func shapeText(shape []int64) string {
	var b strings.Builder
	b.WriteByte('(')
	for i, d := range shape {
		if i > 0 {
			b.WriteString(", ")
		}
		b.WriteString(strconv.FormatInt(d, 10))
	}
	if len(shape) == 1 {
		b.WriteByte(',')
	}
	b.WriteByte(')')
	return b.String()
}
