package index

import (
	"os"
	"testing"

	"github.com/klauspost/compress/gzip"
	"github.com/klauspost/compress/zstd"
)

func writeCompressed(t *testing.T, gzPath, zstPath string, data []byte) {
	t.Helper()
	f, err := os.Create(gzPath)
	if err != nil {
		t.Fatal(err)
	}
	gw := gzip.NewWriter(f)
	gw.Write(data)
	if err := gw.Close(); err != nil {
		t.Fatal(err)
	}
	f.Close()
	z, err := os.Create(zstPath)
	if err != nil {
		t.Fatal(err)
	}
	zw, _ := zstd.NewWriter(z)
	zw.Write(data)
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	z.Close()
}
