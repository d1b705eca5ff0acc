package vectors

import (
	"errors"
	"fmt"
	"io"
	"math"
)

// Errors the readers and the scorer wrap, so callers can tell them apart
// with errors.Is; the message around them names the file, line or row.
var (
	ErrFormat      = errors.New("malformed input")
	ErrUnsupported = errors.New("unsupported array")
	ErrTruncated   = errors.New("truncated")
	ErrNotFinite   = errors.New("not a finite number")
	ErrLength      = errors.New("vectors of different lengths")
	ErrZero        = errors.New("zero vector")
	ErrDuplicate   = errors.New("duplicate")
)

// Source is a stream of vectors of one length, one per row in input order.
type Source interface {
	// Dim returns the length of every vector; 0 only for a stream with no
	// rows.
	Dim() int
	// Read copies the next rows into dst, at most len(dst)/Dim() of them,
	// one after the other, and returns how many it copied. After the last
	// row it returns 0, io.EOF. A dst shorter than one row is an error.
	Read(dst []float32) (int, error)
}

// Matrix is a dense row-major matrix of float32, held in memory.
type Matrix struct {
	Rows, Dim int
	Data      []float32 // Rows×Dim values, row after row
}

// Row returns row i, sharing Data.
func (m *Matrix) Row(i int) []float32 { return m.Data[i*m.Dim : (i+1)*m.Dim] }

// sized is a Source that knows its row count before reading, such as an
// .npy file whose header was checked against the file's size; ok is false
// when the count is only claimed.
type sized interface{ knownRows() (rows int64, ok bool) }

// knownRows returns what src says of its row count, if it may be trusted
// for allocating.
func knownRows(src Source) (int64, bool) {
	if s, ok := src.(sized); ok {
		return s.knownRows()
	}
	return 0, false
}

// maxPrealloc caps what ReadMatrix allocates before reading, for a Source
// that announces its row count (64 MiB of float32); past it the matrix grows
// as rows arrive.
const maxPrealloc = 16 << 20

// ReadMatrix reads src to its end into memory. It is for the target rows,
// which are few; pool rows are scored block by block instead.
func ReadMatrix(src Source) (*Matrix, error) {
	m := &Matrix{Dim: src.Dim()}
	if m.Dim == 0 {
		if _, err := src.Read(nil); err != io.EOF {
			return nil, fmt.Errorf("read vectors: want end of stream, got %w", err)
		}
		return m, nil
	}
	if rows, ok := knownRows(src); ok && rows < int64(maxPrealloc/m.Dim) {
		// One spare row, so that the read meeting the end needs no growth.
		m.Data = make([]float32, 0, (rows+1)*int64(m.Dim))
	}
	for {
		if cap(m.Data)-len(m.Data) < m.Dim {
			grown := make([]float32, len(m.Data), len(m.Data)+max(len(m.Data)/2, 1<<16, m.Dim))
			copy(grown, m.Data)
			m.Data = grown
		}
		free := m.Data[len(m.Data):cap(m.Data)]
		n, err := src.Read(free[:len(free)/m.Dim*m.Dim])
		m.Data = m.Data[:len(m.Data)+n*m.Dim]
		m.Rows += n
		if err == io.EOF {
			return m, nil
		}
		if err != nil {
			return nil, err
		}
	}
}

// checkFinite returns the index of the first NaN or infinite value of v,
// or -1.
func checkFinite(v []float32) int {
	for i, x := range v {
		if math.Float32bits(x)&0x7f800000 == 0x7f800000 {
			return i
		}
	}
	return -1
}
