package vectors

import (
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"sort"
	"strings"
	"testing"
)

type npyValues struct {
	NumPy string
	Files map[string]struct {
		Shape []int
		Descr string
		Hex   [][]string
	}
}

// Source: NumPy 1.24 (Debian python3-numpy). testdata/make_fixtures.py wrote
// each file with numpy.save or numpy.lib.format.write_array (headers of
// versions 1.0, 2.0 and 3.0) from seeded random float32 and float16
// matrices, with float32 and float16 subnormals, -0, the largest and
// smallest normal values set in; npy_values.json holds every value as
// float.hex of the float32 NumPy holds (astype(float32) for float16). Each
// file is read three ways: opened (size known), as a stream of unknown
// size, and one row per Read; all must give those values bit for bit.
func TestNPYAgainstNumPy(t *testing.T) {
	var ref npyValues
	readJSON(t, filepath.Join("testdata", "npy_values.json"), &ref)
	if len(ref.Files) < 6 {
		t.Fatalf("only %d files in the fixture", len(ref.Files))
	}
	names := make([]string, 0, len(ref.Files))
	for name := range ref.Files {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		f := ref.Files[name]
		t.Run(name, func(t *testing.T) {
			var want []float32
			for _, row := range f.Hex {
				for _, h := range row {
					want = append(want, float32(hexFloat(t, h)))
				}
			}
			path := filepath.Join("testdata", "npy", name)
			m := mustNPY(t, path)
			if m.Rows != f.Shape[0] || m.Dim != f.Shape[1] {
				t.Fatalf("shape %d×%d, NumPy (%d, %d)", m.Rows, m.Dim, f.Shape[0], f.Shape[1])
			}
			if !sameBits(m.Data, want) {
				t.Fatalf("values differ from NumPy's:\n got %v\nwant %v", m.Data, want)
			}
			raw, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			n, err := NewNPY(struct{ io.Reader }{bytes.NewReader(raw)}, name, -1)
			if err != nil {
				t.Fatal(err)
			}
			if n.Half() != (f.Descr == "<f2") {
				t.Errorf("Half() = %v for %s", n.Half(), f.Descr)
			}
			var got []float32
			row := make([]float32, max(1, f.Shape[1]))
			for {
				k, err := n.Read(row)
				if err == io.EOF {
					break
				}
				if err != nil || k != 1 {
					t.Fatalf("Read: %d, %v", k, err)
				}
				got = append(got, row...)
			}
			if !sameBits(got, want) {
				t.Fatalf("streamed one row at a time:\n got %v\nwant %v", got, want)
			}
		})
	}
}

// Source: the refused files are NumPy's own (testdata/make_fixtures.py:
// numpy.save of a big-endian, a Fortran-order, a float64, an int32, a 1-D,
// a 3-D, a structured, a (4, 0) array and arrays holding NaN or infinity,
// two arrays saved into one file), plus a NumPy file cut short by 3 bytes,
// one with its 'shape' key renamed and one with its magic changed.
func TestNPYRefusals(t *testing.T) {
	tests := []struct {
		file string
		want error
		text string
	}{
		{"bad_big_endian.npy", ErrUnsupported, "big-endian"},
		{"bad_fortran.npy", ErrUnsupported, "Fortran order"},
		{"bad_float64.npy", ErrUnsupported, "float64"},
		{"bad_int32.npy", ErrUnsupported, `"<i4"`},
		{"bad_1d.npy", ErrUnsupported, "1-D"},
		{"bad_3d.npy", ErrUnsupported, "3-D"},
		{"bad_structured.npy", ErrUnsupported, "structured"},
		{"bad_zero_dim.npy", ErrUnsupported, "length 0"},
		{"bad_nan_f32.npy", ErrNotFinite, "row 2, column 1"},
		{"bad_inf_f32.npy", ErrNotFinite, "row 5, column 4"},
		{"bad_nan_f16.npy", ErrNotFinite, "row 3, column 6"},
		{"bad_inf_f16.npy", ErrNotFinite, "row 1, column 0"},
		{"bad_truncated.npy", ErrTruncated, "needs 120 bytes of data, the file has 117"},
		{"bad_two_arrays.npy", ErrFormat, "after the 6×5 array"},
		{"bad_header.npy", ErrFormat, `"shope"`},
		{"bad_magic.npy", ErrFormat, "magic"},
	}
	for _, tt := range tests {
		t.Run(tt.file, func(t *testing.T) {
			path := filepath.Join("testdata", "npy", tt.file)
			n, err := OpenNPY(path)
			if err == nil {
				_, err = ReadMatrix(n)
				n.Close()
			}
			if !errors.Is(err, tt.want) || !strings.Contains(err.Error(), tt.text) || !strings.Contains(err.Error(), path) {
				t.Fatalf("error %v, want %v saying %q and naming the file", err, tt.want, tt.text)
			}
		})
	}
}

// A stream of unknown size finds a short file or extra bytes only when it
// gets there, and says which row.
func TestNPYStreamEnds(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join("testdata", "npy", "f32_v1.npy"))
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name string
		data []byte
		want error
		text string
	}{
		{"short", raw[:len(raw)-3], ErrTruncated, "row 5 (byte 228) of 6"},
		{"extra", append(raw[:len(raw):len(raw)], 0), ErrFormat, "bytes after the 6×5 array at byte 248"},
		{"header only", raw[:128], ErrTruncated, "row 0 (byte 128)"},
		{"preamble only", raw[:7], ErrTruncated, "preamble"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			n, err := NewNPY(struct{ io.Reader }{bytes.NewReader(tt.data)}, "x.npy", -1)
			if err == nil {
				_, err = ReadMatrix(n)
			}
			if !errors.Is(err, tt.want) || !strings.Contains(err.Error(), tt.text) {
				t.Fatalf("error %v, want %v saying %q", err, tt.want, tt.text)
			}
		})
	}
}

func TestNPYHeader(t *testing.T) {
	tests := []struct {
		header  string
		descr   string
		fortran bool
		shape   []int64
		bad     string // part of the error, when it must fail
	}{
		{header: "{'descr': '<f4', 'fortran_order': False, 'shape': (3, 4), }          \n", descr: "<f4", shape: []int64{3, 4}},
		{header: `{"shape":(3L,4L),"fortran_order":True,"descr":"<f2"}`, descr: "<f2", fortran: true, shape: []int64{3, 4}},
		{header: "{'descr': '<f4', 'fortran_order': False, 'shape': (7,), }\n", descr: "<f4", shape: []int64{7}},
		{header: "{'descr': '<f4', 'fortran_order': False, 'shape': (), }\n", descr: "<f4", shape: nil},
		{header: "{'descr': '<f4', 'fortran_order': False, 'shape': (7), }", bad: "not a tuple"},
		{header: "{'descr': '<f4', 'fortran_order': False}", bad: `no "shape" key`},
		{header: "{'descr': '<f4', 'descr': '<f4', 'fortran_order': False, 'shape': (1, 1)}", bad: "twice"},
		{header: "{'descr': '<f4', 'fortran_order': 0, 'shape': (1, 1)}", bad: "True or False"},
		{header: "{'descr': '<f4', 'fortran_order': False, 'shape': (-1, 1)}", bad: "non-negative integer"},
		{header: "{'descr': '<f4', 'fortran_order': False, 'shape': (99999999999999999999, 1)}", bad: "non-negative integer"},
		{header: "{'descr': '<f4', 'fortran_order': False, 'shape': (1, 1)} x", bad: "text after"},
		{header: "{'descr': '<f4\\n', 'fortran_order': False, 'shape': (1, 1)}", bad: "escape"},
		{header: "{'descr': '<f4", bad: "unterminated"},
		{header: "", bad: "want '{'"},
		{header: "{'descr': '<f4', 'fortran_order': False, 'shape': (1, 1), 'extra': 1}", bad: "unknown key"},
	}
	for _, tt := range tests {
		hd, err := parseNPYHeader([]byte(tt.header))
		if tt.bad != "" {
			if !errors.Is(err, ErrFormat) || !strings.Contains(err.Error(), tt.bad) {
				t.Errorf("%q: error %v, want one saying %q", tt.header, err, tt.bad)
			}
			continue
		}
		if err != nil || hd.descr != tt.descr || hd.fortran != tt.fortran || !equalInts(hd.shape, tt.shape) {
			t.Errorf("%q: %+v, %v; want %s %v %v", tt.header, hd, err, tt.descr, tt.fortran, tt.shape)
		}
	}
}

func equalInts(a, b []int64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// Source: NumPy 1.24's float16 to float32 conversion (astype(float32)) of
// all 65,536 float16 bit patterns, hashed with SHA-256 by
// testdata/make_fixtures.py; subnormals, infinities and NaN payloads
// included. Two subnormals and a signalling NaN are also checked one by
// one.
func TestHalfAgainstNumPy(t *testing.T) {
	var ref struct {
		SHA256     string
		NaN7c01    uint32 `json:"nan_0x7c01"`
		Subnormal1 string `json:"subnormal_0x0001"`
		Subnormal2 string `json:"subnormal_0x83ff"`
	}
	readJSON(t, filepath.Join("testdata", "half.json"), &ref)
	b := make([]byte, 4*65536)
	for h := range 65536 {
		binary.LittleEndian.PutUint32(b[4*h:], math.Float32bits(halfToFloat32(uint16(h))))
	}
	sum := sha256.Sum256(b)
	if got := hex.EncodeToString(sum[:]); got != ref.SHA256 {
		t.Errorf("SHA-256 of all conversions %s, NumPy %s", got, ref.SHA256)
	}
	if got := math.Float32bits(halfToFloat32(0x7c01)); got != ref.NaN7c01 {
		t.Errorf("0x7c01 → %#x, NumPy %#x", got, ref.NaN7c01)
	}
	if got := halfToFloat32(0x0001); float64(got) != hexFloat(t, ref.Subnormal1) {
		t.Errorf("0x0001 → %v, NumPy %s", got, ref.Subnormal1)
	}
	if got := halfToFloat32(0x83ff); float64(got) != hexFloat(t, ref.Subnormal2) {
		t.Errorf("0x83ff → %v, NumPy %s", got, ref.Subnormal2)
	}
}

// The reader's inlined float16 path gives what halfToFloat32 (checked
// against NumPy above) gives, for every finite bit pattern.
func TestHalfDecodePath(t *testing.T) {
	n := &NPY{half: true, itemSize: 2}
	var b [2]byte
	out := make([]float32, 1)
	for h := range 65536 {
		binary.LittleEndian.PutUint16(b[:], uint16(h))
		bad := n.decode(out, b[:])
		if finite := h&0x7c00 != 0x7c00; finite != (bad < 0) {
			t.Fatalf("%#04x: decode reports %d", h, bad)
		}
		if math.Float32bits(out[0]) != math.Float32bits(halfToFloat32(uint16(h))) {
			t.Fatalf("%#04x: decode %v, halfToFloat32 %v", h, out[0], halfToFloat32(uint16(h)))
		}
	}
}

// A header claiming 10¹² rows of 1,048,576 values, on a stream whose size
// is unknown, costs what the bytes present need, not what it claims.
func TestNPYClaimedShapeAllocatesLittle(t *testing.T) {
	h := "{'descr': '<f4', 'fortran_order': False, 'shape': (1000000000000, 1048576), }"
	for (10+len(h)+1)%64 != 0 {
		h += " "
	}
	h += "\n"
	data := append([]byte(npyMagic+"\x01\x00"), byte(len(h)), byte(len(h)>>8))
	data = append(data, h...)
	data = append(data, make([]byte, 4096)...)
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	n, err := NewNPY(struct{ io.Reader }{bytes.NewReader(data)}, "claim.npy", -1)
	if err == nil {
		_, err = ReadMatrix(n)
	}
	runtime.ReadMemStats(&after)
	if !errors.Is(err, ErrTruncated) {
		t.Fatalf("error %v, want ErrTruncated", err)
	}
	if got := after.TotalAlloc - before.TotalAlloc; got > 64<<20 {
		t.Fatalf("allocated %d bytes for %d bytes of input", got, len(data))
	}
	// With the size known, the header alone is refused.
	if _, err := NewNPY(bytes.NewReader(data), "claim.npy", int64(len(data))); !errors.Is(err, ErrTruncated) {
		t.Fatalf("size known: error %v, want ErrTruncated", err)
	}
}
