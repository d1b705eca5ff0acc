package jsonl

import (
	"bytes"
	"io"
	"os"
	"path/filepath"
	"slices"
	"testing"
)

// benchDir holds real prompt/completion rows; benchmarks skip without it.
const benchDir = "../../../shared/data/t0-train-50k-per-template/data_per_template"

// benchLimit keeps the in-memory sample small enough for a shared machine.
const benchLimit = 16 << 20

func benchData(b *testing.B) []byte {
	b.Helper()
	dir := benchDir
	if _, err := os.Stat(dir); err != nil {
		dir = "/work/shared/data/t0-train-50k-per-template/data_per_template"
	}
	names, err := filepath.Glob(filepath.Join(dir, "*.jsonl"))
	if err != nil || len(names) == 0 {
		b.Skip("no real rows at", dir)
	}
	slices.Sort(names)
	// Every third file, so the sample spans the source datasets rather
	// than the few whose names sort first.
	var data []byte
	for i := 0; i < len(names); i += 3 {
		d, err := os.ReadFile(names[i])
		if err != nil {
			b.Fatal(err)
		}
		data = append(data, d...)
		if len(data) >= benchLimit {
			break
		}
	}
	return data
}

func BenchmarkScanExtract(b *testing.B) {
	raw := benchData(b)
	for _, v := range []struct {
		name string
		data func() []byte
	}{
		{"plain", func() []byte { return raw }},
		{"gzip", func() []byte { return gzipBytes(b, raw) }},
		{"zstd", func() []byte { return zstdBytes(b, raw) }},
	} {
		b.Run(v.name, func(b *testing.B) {
			data := v.data()
			e, err := NewExtractor(mustSpec(b, "prompt,completion"), "", "")
			if err != nil {
				b.Fatal(err)
			}
			var rows, text int
			b.SetBytes(int64(len(raw)))
			b.ReportAllocs()
			b.ResetTimer()
			for b.Loop() {
				rows, text = scanExtract(b, e, data)
			}
			b.ReportMetric(float64(rows)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
			b.ReportMetric(float64(len(raw))/float64(len(data)), "ratio")
			_ = text
		})
	}
}

func scanExtract(b *testing.B, e *Extractor, data []byte) (rows, text int) {
	rc, _, err := NewReader(bytes.NewReader(data))
	if err != nil {
		b.Fatal(err)
	}
	defer rc.Close()
	s := NewScanner(rc, 0)
	for s.Scan() {
		row, err := e.Extract(s.Bytes(), nil)
		if err != nil {
			b.Fatalf("line %d: %v", s.Line(), err)
		}
		rows++
		text += row.TextBytes
	}
	if err := s.Err(); err != nil {
		b.Fatal(err)
	}
	return rows, text
}

// BenchmarkScan measures line splitting alone, to tell it from parsing.
func BenchmarkScan(b *testing.B) {
	raw := benchData(b)
	b.SetBytes(int64(len(raw)))
	for b.Loop() {
		s := NewScanner(bytes.NewReader(raw), 0)
		for s.Scan() {
		}
	}
}

// BenchmarkDecode measures decompression alone.
func BenchmarkDecode(b *testing.B) {
	raw := benchData(b)
	for name, data := range map[string][]byte{"gzip": gzipBytes(b, raw), "zstd": zstdBytes(b, raw)} {
		b.Run(name, func(b *testing.B) {
			b.SetBytes(int64(len(raw)))
			for b.Loop() {
				rc, _, err := NewReader(bytes.NewReader(data))
				if err != nil {
					b.Fatal(err)
				}
				io.Copy(io.Discard, rc)
				rc.Close()
			}
		})
	}
}
