package vectors

import (
	"encoding/binary"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"
)

// randomMatrix returns rows×dim standard normal float32 values from a
// seeded generator: synthetic input for timing only.
func randomMatrix(rows, dim int, seed uint64) *Matrix {
	r := rand.New(rand.NewPCG(seed, 1))
	m := &Matrix{Rows: rows, Dim: dim, Data: make([]float32, rows*dim)}
	for i := range m.Data {
		m.Data[i] = float32(r.NormFloat64())
	}
	return m
}

// BenchmarkScore scores blocks of pool rows against 1,000 target rows of
// 768 values (Max) and against their centroid, reporting pool rows/s and
// multiply-adds/s.
func BenchmarkScore(b *testing.B) {
	const dim = 768
	targets := randomMatrix(1000, dim, 1)
	pool := randomMatrix(BlockRows, dim, 2)
	for _, method := range []Method{Max, Centroid} {
		b.Run(method.String(), func(b *testing.B) {
			s, err := NewScorer(targets, Options{Method: method})
			if err != nil {
				b.Fatal(err)
			}
			scores, best := make([]float64, BlockRows), make([]int, BlockRows)
			for b.Loop() {
				if _, err := s.Block(pool.Data, 0, scores, best); err != nil {
					b.Fatal(err)
				}
			}
			rows := float64(b.N) * BlockRows
			b.ReportMetric(rows/b.Elapsed().Seconds(), "rows/s")
			b.ReportMetric(float64(s.BlockWork(BlockRows).MultiplyAdds)*float64(b.N)/b.Elapsed().Seconds(), "madds/s")
		})
	}
}

// writeNPY writes m as an .npy file of float32 or float16 values.
func writeNPY(b *testing.B, path string, m *Matrix, half bool) int64 {
	descr, size := "<f4", 4
	if half {
		descr, size = "<f2", 2
	}
	h := fmt.Sprintf("{'descr': '%s', 'fortran_order': False, 'shape': (%d, %d), }", descr, m.Rows, m.Dim)
	for (10+len(h)+1)%64 != 0 {
		h += " "
	}
	h += "\n"
	buf := make([]byte, 0, 10+len(h)+len(m.Data)*size)
	buf = append(buf, npyMagic...)
	buf = append(buf, 1, 0)
	buf = binary.LittleEndian.AppendUint16(buf, uint16(len(h)))
	buf = append(buf, h...)
	for _, x := range m.Data {
		if half {
			buf = binary.LittleEndian.AppendUint16(buf, floatToHalf(x))
		} else {
			buf = binary.LittleEndian.AppendUint32(buf, math.Float32bits(x))
		}
	}
	if err := os.WriteFile(path, buf, 0o644); err != nil {
		b.Fatal(err)
	}
	return int64(len(buf))
}

// floatToHalf truncates a float32 of normal float16 range to float16, for
// making benchmark files only.
func floatToHalf(x float32) uint16 {
	u := math.Float32bits(x)
	exp := int(u>>23&0xff) - 127 + 15
	if exp <= 0 {
		return uint16(u >> 16 & 0x8000)
	}
	return uint16(u>>16&0x8000) | uint16(min(exp, 30))<<10 | uint16(u>>13&0x3ff)
}

// BenchmarkReadNPY reads a 20,000×768 file (59 MiB as float32) through
// ReadMatrix's blocks and reports MB/s of file read.
func BenchmarkReadNPY(b *testing.B) {
	m := randomMatrix(20000, 768, 3)
	for _, half := range []bool{false, true} {
		name := "float32"
		if half {
			name = "float16"
		}
		b.Run(name, func(b *testing.B) {
			path := filepath.Join(b.TempDir(), "pool.npy")
			b.SetBytes(writeNPY(b, path, m, half))
			dst := make([]float32, BlockRows*m.Dim)
			for b.Loop() {
				n, err := OpenNPY(path)
				if err != nil {
					b.Fatal(err)
				}
				rows := 0
				for {
					k, err := n.Read(dst)
					rows += k
					if err != nil {
						break
					}
				}
				n.Close()
				if rows != m.Rows {
					b.Fatalf("%d rows", rows)
				}
			}
		})
	}
}

// BenchmarkScoreWorkers runs Score over 4,096 pool rows against 200
// targets of 768 values (Max) on one and two workers, reporting rows/s.
func BenchmarkScoreWorkers(b *testing.B) {
	const dim = 768
	targets := randomMatrix(200, dim, 4)
	pool := randomMatrix(4096, dim, 5)
	for _, workers := range []int{1, 2} {
		b.Run(fmt.Sprintf("workers=%d", workers), func(b *testing.B) {
			s, err := NewScorer(targets, Options{Method: Max, Workers: workers})
			if err != nil {
				b.Fatal(err)
			}
			for b.Loop() {
				if _, err := s.Score(&matrixSource{m: pool}); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(b.N)*float64(pool.Rows)/b.Elapsed().Seconds(), "rows/s")
		})
	}
}
