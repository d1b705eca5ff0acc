package vectors

import (
	"bytes"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// FuzzNPY reads arbitrary bytes as an .npy file, of known size and as a
// stream of unknown size. It must not panic, must not allocate for rows
// the bytes do not hold (the fuzzer's memory limit catches that), and the
// two ways must agree.
func FuzzNPY(f *testing.F) {
	files, _ := filepath.Glob(filepath.Join("testdata", "npy", "*.npy"))
	for _, name := range files {
		if b, err := os.ReadFile(name); err == nil {
			f.Add(b)
		}
	}
	// A header claiming far more rows than follow.
	f.Add([]byte("\x93NUMPY\x01\x00\x46\x00{'descr': '<f4', 'fortran_order': False, 'shape': (1000000000000, 1048576), }\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		var sized, streamed *Matrix
		var err1, err2 error
		if n, err := NewNPY(bytes.NewReader(data), "f.npy", int64(len(data))); err == nil {
			sized, err1 = ReadMatrix(n)
		} else {
			err1 = err
		}
		if n, err := NewNPY(struct{ io.Reader }{bytes.NewReader(data)}, "f.npy", -1); err == nil {
			streamed, err2 = ReadMatrix(n)
		} else {
			err2 = err
		}
		if (err1 == nil) != (err2 == nil) {
			t.Fatalf("known size: %v; stream: %v", err1, err2)
		}
		if err1 != nil {
			return
		}
		if len(sized.Data) != sized.Rows*sized.Dim || sized.Rows*sized.Dim*2 > len(data) || !sameBits(sized.Data, streamed.Data) {
			t.Fatalf("known size %d×%d (%d values), stream %d×%d, from %d bytes", sized.Rows, sized.Dim, len(sized.Data), streamed.Rows, streamed.Dim, len(data))
		}
		if checkFinite(sized.Data) >= 0 {
			t.Fatal("a NaN or infinity got through")
		}
	})
}

// FuzzNPYHeader parses arbitrary header text.
func FuzzNPYHeader(f *testing.F) {
	f.Add("{'descr': '<f4', 'fortran_order': False, 'shape': (3, 4), }          \n")
	f.Add(`{"shape":(3L,4L),"fortran_order":True,"descr":"<f2"}`)
	f.Add("{'descr': [('x', '<f4')], 'fortran_order': False, 'shape': (2,), }")
	f.Add("{'descr': '<f4', 'fortran_order': False, 'shape': (), }")
	f.Fuzz(func(t *testing.T, h string) {
		hd, err := parseNPYHeader([]byte(h))
		if err != nil {
			return
		}
		for _, d := range hd.shape {
			if d < 0 {
				t.Fatalf("shape %v", hd.shape)
			}
		}
	})
}

// FuzzJSONL reads arbitrary text as JSONL vectors.
func FuzzJSONL(f *testing.F) {
	f.Add(`{"id":"a","vector":[1,2.5,-3e-2]}` + "\n" + `{"id":2,"vector":[0,0,1]}` + "\n")
	f.Add(`{"id":1,"vector":[NaN]}`)
	f.Add(`{"id":1,"vector":[1]}` + "\n" + `{"id":1,"vector":[1]}`)
	f.Add(`{"id":1.0,"vector":[1e39]}`)
	f.Fuzz(func(t *testing.T, text string) {
		j, err := NewJSONL(strings.NewReader(text), "v.jsonl", nil)
		if err != nil {
			return
		}
		m, err := ReadMatrix(j)
		if err != nil {
			return
		}
		if len(m.Data) != m.Rows*m.Dim || checkFinite(m.Data) >= 0 || m.Rows > strings.Count(text, "\n")+1 {
			t.Fatalf("%d×%d from %d bytes", m.Rows, m.Dim, len(text))
		}
	})
}

// FuzzWordVectors reads arbitrary text as a word-vector file, then
// averages words of a row over it. The mean of finite vectors must be
// finite.
func FuzzWordVectors(f *testing.F) {
	if b, err := os.ReadFile(filepath.Join("testdata", "words.vec")); err == nil {
		f.Add(string(b), "the cat sat on the mat unknown")
	}
	f.Add("2 2\na 1 0\nb 0 1\n", "a b a")
	f.Add("1 3\nx 3.4e38 3.4e38 -3.4e38\n", "x x x x")
	f.Add("2000000000 1048576\n", "")
	f.Fuzz(func(t *testing.T, text, row string) {
		w, err := ReadWordVectors(strings.NewReader(text), "w.vec", int64(len(text)))
		if err != nil {
			return
		}
		if int64(w.Len())*int64(w.Dim())*2 > int64(len(text)) {
			t.Fatalf("%d words of %d values from %d bytes", w.Len(), w.Dim(), len(text))
		}
		dst := make([]float32, w.Dim())
		if _, err := w.Mean(dst, strings.Fields(row), func(s string) float64 { return float64(len(s)) }); err != nil {
			t.Fatal(err)
		}
		for _, x := range dst {
			if math.IsNaN(float64(x)) || math.IsInf(float64(x), 0) {
				t.Fatalf("mean %v", dst)
			}
		}
	})
}
