package jsonl

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"runtime"
	"strings"
	"testing"
	"testing/iotest"
)

type scanned struct {
	off     int64
	n       int
	line    int64
	text    string
	tooLong bool
}

func scanAll(t testing.TB, r io.Reader, maxLine int) ([]scanned, error) {
	t.Helper()
	s := NewScanner(r, maxLine)
	var out []scanned
	for s.Scan() {
		if s.TooLong() && len(s.Bytes()) != 0 {
			t.Fatalf("too-long line %d has %d bytes", s.Line(), len(s.Bytes()))
		}
		out = append(out, scanned{s.Offset(), s.Len(), s.Line(), string(s.Bytes()), s.TooLong()})
	}
	return out, s.Err()
}

func TestScanner(t *testing.T) {
	tests := []struct {
		name    string
		in      string
		maxLine int
		want    []scanned
	}{
		{"empty", "", 0, nil},
		{"final newline", "a\nbc\n", 0, []scanned{{0, 2, 1, "a", false}, {2, 3, 2, "bc", false}}},
		{"no final newline", "a\nbc", 0, []scanned{{0, 2, 1, "a", false}, {2, 2, 2, "bc", false}}},
		{"blank lines", "\n\na\n\n", 0, []scanned{{0, 1, 1, "", false}, {1, 1, 2, "", false}, {2, 2, 3, "a", false}, {4, 1, 4, "", false}}},
		{"CRLF keeps CR", "a\r\nb\r\n", 0, []scanned{{0, 3, 1, "a\r", false}, {3, 3, 2, "b\r", false}}},
		{"lone CR is not a break", "a\rb\n", 0, []scanned{{0, 4, 1, "a\rb", false}}},
		{"BOM kept", "\xef\xbb\xbf{}\n{}", 0, []scanned{{0, 6, 1, "\xef\xbb\xbf{}", false}, {6, 2, 2, "{}", false}}},
		{"exactly max", "abc\nab\n", 3, []scanned{{0, 4, 1, "abc", false}, {4, 3, 2, "ab", false}}},
		{"too long between", "ab\nabcdef\nxy", 3, []scanned{{0, 3, 1, "ab", false}, {3, 7, 2, "", true}, {10, 2, 3, "xy", false}}},
		{"too long last no newline", "ab\nabcd", 3, []scanned{{0, 3, 1, "ab", false}, {3, 4, 2, "", true}}},
		{"too long last with newline", "abcdefgh\n", 3, []scanned{{0, 9, 1, "", true}}},
		{"too long twice", "abcdefgh\nijklmnopq\nz", 2, []scanned{{0, 9, 1, "", true}, {9, 10, 2, "", true}, {19, 1, 3, "z", false}}},
		{"one over", "abcd\n", 3, []scanned{{0, 5, 1, "", true}}},
	}
	readers := []struct {
		name string
		wrap func(io.Reader) io.Reader
	}{
		{"whole", func(r io.Reader) io.Reader { return r }},
		{"one byte", iotest.OneByteReader},
		{"half", iotest.HalfReader},
		{"data with EOF", iotest.DataErrReader},
	}
	for _, tt := range tests {
		for _, rd := range readers {
			t.Run(tt.name+"/"+rd.name, func(t *testing.T) {
				got, err := scanAll(t, rd.wrap(strings.NewReader(tt.in)), tt.maxLine)
				if err != nil {
					t.Fatal(err)
				}
				if fmt.Sprint(got) != fmt.Sprint(tt.want) {
					t.Errorf("got  %v\nwant %v", got, tt.want)
				}
			})
		}
	}
}

// TestScannerMatchesPython checks offsets and lengths against rows.lines,
// made by CPython's readline (testdata/gen_lines.py).
func TestScannerMatchesPython(t *testing.T) {
	data, err := os.ReadFile("testdata/rows.jsonl")
	if err != nil {
		t.Fatal(err)
	}
	want, err := os.ReadFile("testdata/rows.lines")
	if err != nil {
		t.Fatal(err)
	}
	got, err := scanAll(t, bytes.NewReader(data), 0)
	if err != nil {
		t.Fatal(err)
	}
	var b strings.Builder
	for _, l := range got {
		fmt.Fprintf(&b, "%d %d %d\n", l.line, l.off, l.n)
		if !strings.HasPrefix(string(data[l.off:]), l.text) {
			t.Errorf("line %d: Bytes %q is not the input at %d", l.line, l.text, l.off)
		}
	}
	if b.String() != string(want) {
		t.Errorf("got\n%s\nwant (CPython readline)\n%s", b.String(), want)
	}
}

type repeatReader byte

func (r repeatReader) Read(p []byte) (int, error) {
	for i := range p {
		p[i] = byte(r)
	}
	return len(p), nil
}

func TestScannerLongLineBoundedMemory(t *testing.T) {
	const (
		long    = 10 << 20
		maxLine = 1 << 20
	)
	first, last := "{\"a\":1}\n", "{\"b\":2}"
	r := io.MultiReader(strings.NewReader(first), io.LimitReader(repeatReader('x'), long),
		strings.NewReader("\n"+last))
	var before, after runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&before)
	s := NewScanner(r, maxLine)
	var got []scanned
	for s.Scan() {
		got = append(got, scanned{s.Offset(), s.Len(), s.Line(), string(s.Bytes()), s.TooLong()})
	}
	runtime.ReadMemStats(&after)
	if err := s.Err(); err != nil {
		t.Fatal(err)
	}
	want := []scanned{
		{0, len(first), 1, first[:len(first)-1], false},
		{int64(len(first)), long + 1, 2, "", true},
		{int64(len(first) + long + 1), len(last), 3, last, false},
	}
	if fmt.Sprint(got) != fmt.Sprint(want) {
		t.Errorf("got %v, want %v", got, want)
	}
	if c := cap(s.buf); c > maxLine+1 {
		t.Errorf("buffer grew to %d bytes, want at most %d", c, maxLine+1)
	}
	// The buffer doubles from 64 KiB up to 1 MiB+1, about 2 MiB in all.
	if alloc := after.TotalAlloc - before.TotalAlloc; alloc > 4<<20 {
		t.Errorf("scanning a %d-byte line allocated %d bytes", long, alloc)
	}
}

var errBoom = errors.New("boom")

func TestScannerReadError(t *testing.T) {
	r := io.MultiReader(strings.NewReader("a\nb\npart"), iotest.ErrReader(errBoom))
	got, err := scanAll(t, r, 0)
	if !errors.Is(err, errBoom) {
		t.Fatalf("err = %v, want boom", err)
	}
	if want := "read line 3 at byte 4: boom"; err.Error() != want {
		t.Errorf("err = %q, want %q", err, want)
	}
	if len(got) != 2 {
		t.Errorf("got %d lines before the error, want 2", len(got))
	}

	// While skipping a too-long line.
	r = io.MultiReader(strings.NewReader("a\nbbbbbbbbbb"), iotest.ErrReader(errBoom))
	got, err = scanAll(t, r, 4)
	if !errors.Is(err, errBoom) || len(got) != 1 {
		t.Errorf("got %d lines, err %v; want 1 line and boom", len(got), err)
	}
}

func TestScannerHugeMaxLine(t *testing.T) {
	got, err := scanAll(t, strings.NewReader("a\nb"), math.MaxInt)
	if err != nil || len(got) != 2 {
		t.Errorf("got %v, %v", got, err)
	}
}

type stuckReader struct{}

func (stuckReader) Read([]byte) (int, error) { return 0, nil }

func TestScannerNoProgress(t *testing.T) {
	_, err := scanAll(t, stuckReader{}, 0)
	if !errors.Is(err, io.ErrNoProgress) {
		t.Errorf("err = %v, want io.ErrNoProgress", err)
	}
}

// chunkReader hands out its data in pieces of the given sizes, in turn.
type chunkReader struct {
	data  []byte
	sizes []byte
	i     int
}

func (r *chunkReader) Read(p []byte) (int, error) {
	if len(r.data) == 0 {
		return 0, io.EOF
	}
	n := 1
	if len(r.sizes) > 0 {
		n = int(r.sizes[r.i%len(r.sizes)])%17 + 1
		r.i++
	}
	n = min(n, len(p), len(r.data))
	copy(p, r.data[:n])
	r.data = r.data[n:]
	return n, nil
}

func FuzzScanner(f *testing.F) {
	f.Add([]byte("a\nb\n"), uint8(0), []byte{3})
	f.Add([]byte("abcdef\n\nxy"), uint8(3), []byte{1, 2})
	f.Add([]byte("\r\n\xef\xbb\xbf\n"), uint8(1), []byte{})
	for _, b := range badInputFiles(f) {
		f.Add(b, uint8(16), []byte{7})
	}
	f.Fuzz(func(t *testing.T, in []byte, maxLine uint8, sizes []byte) {
		ml := int(maxLine)
		if ml == 0 {
			ml = -1 // default
		}
		s := NewScanner(&chunkReader{data: in, sizes: sizes}, ml)
		var off int64
		var n int64
		for s.Scan() {
			n++
			if s.Offset() != off || s.Line() != n {
				t.Fatalf("line %d at %d, want line %d at %d", s.Line(), s.Offset(), n, off)
			}
			l := s.Len()
			if l <= 0 || off+int64(l) > int64(len(in)) {
				t.Fatalf("line %d: bad length %d at %d of %d", n, l, off, len(in))
			}
			raw := in[off : off+int64(l)]
			body := bytes.TrimSuffix(raw, []byte("\n"))
			if bytes.IndexByte(body, '\n') >= 0 || (len(body) == len(raw) && off+int64(l) != int64(len(in))) {
				t.Fatalf("line %d: %q is not one line", n, raw)
			}
			limit := ml
			if ml < 0 {
				limit = DefaultMaxLine
			}
			if s.TooLong() != (len(body) > limit) {
				t.Fatalf("line %d of %d bytes: TooLong %v with max %d", n, len(body), s.TooLong(), limit)
			}
			if s.TooLong() {
				if len(s.Bytes()) != 0 {
					t.Fatalf("too-long line %d has bytes", n)
				}
			} else if !bytes.Equal(s.Bytes(), body) {
				t.Fatalf("line %d: Bytes %q, want %q", n, s.Bytes(), body)
			}
			off += int64(l)
		}
		if err := s.Err(); err != nil {
			t.Fatal(err)
		}
		if off != int64(len(in)) {
			t.Fatalf("lines cover %d of %d bytes", off, len(in))
		}
	})
}

// Scanner must accept what bufio.Reader hands it; this is how Open's readers
// reach it.
func TestScannerOverBufio(t *testing.T) {
	got, err := scanAll(t, bufio.NewReaderSize(strings.NewReader("x\ny"), 16), 0)
	if err != nil || len(got) != 2 {
		t.Errorf("got %v, %v", got, err)
	}
}
