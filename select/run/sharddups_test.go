package run

import (
	"bufio"
	"context"
	"encoding/binary"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"sluice/index"
	selection "sluice/select"
)

// TestShardedDupsRefuses checks the bad inputs of the search for duplicates split across steps: a
// dups step before the score steps or past the last part, a cut before the dups steps, and a part's
// file damaged after it was written.
func TestShardedDupsRefuses(t *testing.T) {
	files, target := t0Files(t, 4)
	dir := t.TempDir()
	set := t0SetWith(t, dir, files, []int{2}, index.Options{Text: "prompt,completion"})
	opt := shardConfigs(set, target)["bm25-sum-caps"]
	opt.Guards.KeepDuplicates = false
	opt.Out = filepath.Join(dir, "out")
	work := filepath.Join(dir, "work")
	ctx := context.Background()
	if _, err := DupsShard(ctx, opt, work, 0); !errors.Is(err, ErrShardWork) || !strings.Contains(err.Error(), "shard 0") {
		t.Fatalf("a dups step before the score steps: %v", err)
	}
	for i := range 2 {
		if _, err := ScoreShard(ctx, opt, work, i); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := DupsShard(ctx, opt, work, 2); !errors.Is(err, ErrShard) {
		t.Fatalf("a dups step past the last part: %v", err)
	}
	if _, err := DupsShard(ctx, opt, work, 0); err != nil {
		t.Fatal(err)
	}
	if _, err := CutShards(ctx, opt, work); !errors.Is(err, ErrShardWork) || !strings.Contains(err.Error(), "part 1 of 2 (run its dups step)") {
		t.Fatalf("a cut before every dups step: %v", err)
	}
	if _, err := DupsShard(ctx, opt, work, 1); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dupsFolder(work, 1), candsFile)
	b, err := os.ReadFile(path)
	if err != nil || len(b) < candRecSize {
		t.Fatalf("part 1 found no candidate pairs to damage: %v", err)
	}
	b[len(b)-1] ^= 1
	if err := os.WriteFile(path, b, 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := CutShards(ctx, opt, work); !errors.Is(err, ErrShardWork) || !strings.Contains(err.Error(), path) {
		t.Fatalf("a cut over a damaged part: %v", err)
	}
}

// FuzzCutDups gives the cut a part's repeats and candidate pairs of any bytes whose sums match its
// summary, as files written by something else than the dups step could be: the cut must refuse
// them or find clusters whose rows are the set's, never panic.
func FuzzCutDups(f *testing.F) {
	rec := func(a, b uint32, flags byte) []byte {
		r := binary.LittleEndian.AppendUint32(nil, a)
		r = binary.LittleEndian.AppendUint32(r, b)
		return append(r, flags)
	}
	f.Add(append(rec(3, 1, 3), make([]byte, 24)...), append(rec(5, 2, 1), rec(6, 5, 0)...))
	f.Add([]byte{}, append(rec(2, 1, 1), rec(2, 1, 1)...))
	f.Add(append(rec(1, 3, 0), make([]byte, 24)...), rec(9, 1, 1))
	f.Fuzz(func(t *testing.T, repeats, cands []byte) {
		const rows = 8
		work := t.TempDir()
		dir := dupsFolder(work, 0)
		os.MkdirAll(dir, 0o777)
		df := &dupsFile{Format: shardFormat, Of: 1, Repeats: len(repeats) / repeatRecSize, Candidates: len(cands) / candRecSize, Files: map[string]string{}}
		for name, data := range map[string][]byte{repeatsFile: repeats, candsFile: cands} {
			sum, err := writeHashed(filepath.Join(dir, name), name, func(w *bufio.Writer) error { _, err := w.Write(data); return err })
			if err != nil {
				t.Fatal(err)
			}
			df.Files[name] = sum
		}
		if err := writeJSON(filepath.Join(dir, dupsMark), dupsMark, df); err != nil {
			t.Fatal(err)
		}
		heads := []*shardFile{{Format: shardFormat, Of: 1, Rows: rows, Meta: index.Meta{Rows: rows}, Dups: &shardDups{Marked: rows}}}
		p := &picked{opt: &Options{}}
		gd := &guarded{}
		if err := p.cutDups(work, heads, gd); err != nil {
			return
		}
		for r := range rows {
			if c := gd.cluster(r); c < 0 || c > r {
				t.Fatalf("row %d is in the cluster of row %d", r, c)
			}
			if why := p.cutBar(r); why != selection.Kept && why != selection.Duplicate {
				t.Fatalf("row %d barred as %v", r, why)
			}
		}
	})
}

// FuzzLoadDupOf gives a write step the cut's ids of the rows kept instead of its duplicates, of any
// bytes whose sum matches the cut's summary: it must refuse them or name a row kept for each of
// the shard's duplicates, never panic.
func FuzzLoadDupOf(f *testing.F) {
	good := fileHead("sluiceDO", 0, 1, 1, 0)
	good = binary.LittleEndian.AppendUint32(good, 2)
	good = binary.AppendUvarint(good, 3)
	good = append(good, "a:1"...)
	f.Add(good)
	f.Add(good[:len(good)-1])
	f.Add(fileHead("sluiceDO", 0, 1, 9, 0))
	f.Fuzz(func(t *testing.T, data []byte) {
		work := t.TempDir()
		os.MkdirAll(filepath.Join(work, cutName), 0o777)
		name := dupOfName(0)
		sum, err := writeHashed(filepath.Join(work, cutName, name), name, func(w *bufio.Writer) error { _, err := w.Write(data); return err })
		if err != nil {
			t.Fatal(err)
		}
		p := &picked{dec: make([]selection.Decision, 4)}
		p.dec[2].Reason = selection.Duplicate
		err = p.loadDupOf(work, &shardFile{Shard: 0, Of: 1, Rows: 4}, &cutFile{Files: map[string]string{name: sum}})
		if _, ok := p.dupIDs[2]; err == nil && !ok {
			t.Fatal("read no id for the shard's duplicate")
		}
	})
}
