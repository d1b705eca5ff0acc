package run

import (
	"bufio"
	"os"
	"path/filepath"
	"testing"

	"sluice/index/decontam"
)

// FuzzReadContam gives the cut and the write step a shard's contaminated rows of any bytes whose
// sum matches its summary, as a file written by something else than the score step could be: they
// must refuse it or read rows of the shard, ascending, each naming an evaluation file it has.
func FuzzReadContam(f *testing.F) {
	f.Add([]byte(`{"row":1,"file":0,"line":3,"words":["a","b"]}`+"\n"+`{"row":5,"file":1,"line":9,"words":["c"]}`+"\n"), 2)
	f.Add([]byte(`{"row":5,"file":0,"line":3,"words":["a"]}`+"\n"+`{"row":1,"file":0,"line":9,"words":["c"]}`+"\n"), 2)
	f.Add([]byte(`{"row":9,"file":3}`), 1)
	f.Fuzz(func(t *testing.T, data []byte, count int) {
		work := t.TempDir()
		dir := shardFolder(work, 0)
		os.MkdirAll(dir, 0o777)
		sum, err := writeHashed(filepath.Join(dir, contamFile), contamFile, func(w *bufio.Writer) error { _, err := w.Write(data); return err })
		if err != nil {
			t.Fatal(err)
		}
		sf := &shardFile{Shard: 0, Of: 1, Rows: 8, Contaminated: count, Files: map[string]string{contamFile: sum}}
		last, n := -1, 0
		err = readContam(work, sf, 2, func(r int, hit decontam.Hit) {
			if r <= last || r >= 8 || hit.File < 0 || hit.File >= 2 || len(hit.Words) == 0 {
				t.Fatalf("read row %d (file %d, %d words) after row %d", r, hit.File, len(hit.Words), last)
			}
			last, n = r, n+1
		})
		if err == nil && n != count {
			t.Fatalf("read %d rows, the summary says %d", n, count)
		}
	})
}
