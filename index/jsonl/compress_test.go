package jsonl

import (
	"bytes"
	"errors"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/klauspost/compress/gzip"
	"github.com/klauspost/compress/zstd"
)

func TestDetectMagic(t *testing.T) {
	// Magic numbers: gzip 1f 8b (RFC 1952 section 2.3.1); zstd frame
	// 28 b5 2f fd and skippable frames 5? 2a 4d 18 (RFC 8878 sections 3.1.1
	// and 3.1.2).
	tests := []struct {
		in   string
		want Compression
	}{
		{"", None},
		{"\x1f", None},
		{"\x1f\x8b", Gzip},
		{"\x1f\x8b\x08\x00", Gzip},
		{"\x28\xb5\x2f", None},
		{"\x28\xb5\x2f\xfd", Zstd},
		{"\x50\x2a\x4d\x18", Zstd},
		{"\x5f\x2a\x4d\x18", Zstd},
		{"\x60\x2a\x4d\x18", None},
		{"{\"a\":1}", None},
		{"\xef\xbb\xbf{", None},
	}
	for _, tt := range tests {
		if got := detect([]byte(tt.in)); got != tt.want {
			t.Errorf("detect(%q) = %v, want %v", tt.in, got, tt.want)
		}
	}
}

func TestCompressionString(t *testing.T) {
	for c, want := range map[Compression]string{None: "none", Gzip: "gzip", Zstd: "zstd", 9: "Compression(9)"} {
		if got := c.String(); got != want {
			t.Errorf("%d.String() = %q, want %q", uint8(c), got, want)
		}
	}
}

// TestReadCompressedFixtures reads files made by Debian's gzip and zstd tools
// (testdata/gen_compressed.sh), encoders independent of the decoders here.
func TestReadCompressedFixtures(t *testing.T) {
	want, err := os.ReadFile("testdata/rows.jsonl")
	if err != nil {
		t.Fatal(err)
	}
	for name, c := range map[string]Compression{
		"rows.jsonl":     None,
		"rows.jsonl.gz":  Gzip,
		"rows.jsonl.zst": Zstd,
		"two.gz":         Gzip,
		"two.zst":        Zstd,
		"misnamed.jsonl": Zstd,
	} {
		rc, got, err := Open(filepath.Join("testdata", name))
		if err != nil {
			t.Errorf("Open(%s): %v", name, err)
			continue
		}
		if got != c {
			t.Errorf("Open(%s) compression %v, want %v", name, got, c)
		}
		data, err := io.ReadAll(rc)
		if err != nil {
			t.Errorf("read %s: %v", name, err)
		}
		if err := rc.Close(); err != nil {
			t.Errorf("close %s: %v", name, err)
		}
		if !bytes.Equal(data, want) {
			t.Errorf("%s: decoded %d bytes differ from rows.jsonl (%d bytes)", name, len(data), len(want))
		}
	}
}

func TestOpenMissing(t *testing.T) {
	_, _, err := Open(filepath.Join(t.TempDir(), "none.jsonl"))
	if !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("err = %v, want fs.ErrNotExist", err)
	}
}

func TestOpenStdin(t *testing.T) {
	r, w, err := os.Pipe()
	if err != nil {
		t.Fatal(err)
	}
	old := os.Stdin
	os.Stdin = r
	defer func() { os.Stdin = old; r.Close() }()
	go func() {
		zw := gzip.NewWriter(w)
		zw.Write([]byte("{\"text\":\"in\"}\n"))
		zw.Close()
		w.Close()
	}()
	rc, c, err := Open("-")
	if err != nil {
		t.Fatal(err)
	}
	data, err := io.ReadAll(rc)
	if err != nil || c != Gzip || string(data) != "{\"text\":\"in\"}\n" {
		t.Errorf("got %q, %v, %v", data, c, err)
	}
	rc.Close()
	if _, err := r.Stat(); err != nil {
		t.Errorf("closing the reader closed stdin: %v", err)
	}
}

// testBody is a few thousand rows, enough for several compressed blocks.
func testBody(t testing.TB) []byte {
	t.Helper()
	rows, err := os.ReadFile("testdata/rows.jsonl")
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	for i := 0; b.Len() < 1<<20; i++ {
		b.Write(bytes.TrimPrefix(rows, bom))
		b.WriteByte('\n')
	}
	return b.Bytes()
}

func gzipBytes(t testing.TB, data []byte) []byte {
	t.Helper()
	var b bytes.Buffer
	zw := gzip.NewWriter(&b)
	if _, err := zw.Write(data); err != nil {
		t.Fatal(err)
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func zstdBytes(t testing.TB, data []byte) []byte {
	t.Helper()
	zw, err := zstd.NewWriter(nil)
	if err != nil {
		t.Fatal(err)
	}
	defer zw.Close()
	return zw.EncodeAll(data, nil)
}

func TestNewReaderRoundTrip(t *testing.T) {
	body := testBody(t)
	for _, tt := range []struct {
		c    Compression
		data []byte
	}{
		{None, body},
		{Gzip, gzipBytes(t, body)},
		{Zstd, zstdBytes(t, body)},
	} {
		rc, c, err := NewReader(bytes.NewReader(tt.data))
		if err != nil {
			t.Fatalf("%v: %v", tt.c, err)
		}
		if c != tt.c {
			t.Errorf("detected %v, want %v", c, tt.c)
		}
		lines, err := scanAll(t, rc, 0)
		rc.Close()
		if err != nil {
			t.Fatalf("%v: %v", tt.c, err)
		}
		var got bytes.Buffer
		for _, l := range lines {
			got.WriteString(l.text)
			got.WriteByte('\n')
		}
		if !bytes.Equal(got.Bytes(), body) {
			t.Errorf("%v: lines do not rebuild the input", tt.c)
		}
	}
}

func TestTruncatedGzip(t *testing.T) {
	body := testBody(t)
	gz := gzipBytes(t, body)
	rc, _, err := NewReader(bytes.NewReader(gz[:len(gz)/2]))
	if err != nil {
		t.Fatal(err)
	}
	defer rc.Close()
	lines, err := scanAll(t, rc, 0)
	if !errors.Is(err, io.ErrUnexpectedEOF) {
		t.Fatalf("err = %v, want io.ErrUnexpectedEOF", err)
	}
	if !strings.Contains(err.Error(), "read line ") {
		t.Errorf("err %q does not name the line", err)
	}
	for _, l := range lines {
		if !bytes.HasPrefix(body[l.off:], []byte(l.text+"\n")) {
			t.Fatalf("line %d before the cut is wrong", l.line)
		}
	}

	// Cut inside the 10-byte header: NewReader itself fails.
	if _, _, err := NewReader(bytes.NewReader(gz[:5])); !errors.Is(err, io.ErrUnexpectedEOF) {
		t.Errorf("header cut: err = %v, want io.ErrUnexpectedEOF", err)
	}
	// Cut before the 8-byte trailer (CRC-32 and size, RFC 1952 section 2.3).
	rc2, _, err := NewReader(bytes.NewReader(gz[:len(gz)-4]))
	if err != nil {
		t.Fatal(err)
	}
	defer rc2.Close()
	if _, err := scanAll(t, rc2, 0); !errors.Is(err, io.ErrUnexpectedEOF) {
		t.Errorf("trailer cut: err = %v, want io.ErrUnexpectedEOF", err)
	}
}

func TestCorruptGzip(t *testing.T) {
	gz := gzipBytes(t, testBody(t))
	gz[len(gz)-6] ^= 0xff // in the CRC-32
	rc, _, err := NewReader(bytes.NewReader(gz))
	if err != nil {
		t.Fatal(err)
	}
	defer rc.Close()
	if _, err := scanAll(t, rc, 0); !errors.Is(err, gzip.ErrChecksum) {
		t.Errorf("err = %v, want gzip.ErrChecksum", err)
	}
}

func TestCorruptZstd(t *testing.T) {
	zs := zstdBytes(t, testBody(t))
	for _, tt := range []struct {
		name string
		data []byte
	}{
		{"flipped", func() []byte {
			b := bytes.Clone(zs)
			for i := len(b) / 3; i < len(b)/3+16; i++ {
				b[i] ^= 0x5a
			}
			return b
		}()},
		{"truncated", zs[:len(zs)/2]},
		{"header only", zs[:6]},
	} {
		rc, _, err := NewReader(bytes.NewReader(tt.data))
		if err != nil {
			continue // refused up front: also fine
		}
		_, err = scanAll(t, rc, 0)
		rc.Close()
		if err == nil {
			t.Errorf("%s zstd frame read without error", tt.name)
		}
	}
}
