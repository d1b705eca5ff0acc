package index

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"hash/crc32"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

// TestSetDupsMatchBuild checks that a set finds, from its segments' stored keys and sketches, the
// duplicates one build of all their files finds: meta.json's duplicates field for field (counts
// and work) and every row's cluster. Two pools: a made-up one of a dozen words, dense with exact
// and near duplicates, cut into six files, and T0 files with two of them repeated (so whole files
// repeat across segments); each split 1, 2, 3 and all ways and at random places. One build's
// duplicates are themselves held to dedup run row by row (TestDupsMatchDetector), and dedup's
// detector to brute-force Jaccard similarities from NumPy (TestDetectorOnFixture).
func TestSetDupsMatchBuild(t *testing.T) {
	data, _ := os.ReadFile(testPool(t, 3000))
	lines := bytes.SplitAfter(data, []byte("\n"))
	dir := t.TempDir()
	var made []string
	for i := range 6 {
		p := filepath.Join(dir, fmt.Sprintf("part%d.jsonl", i))
		// Every part after the first repeats some rows of the one before, so keys cross segments.
		part := bytes.Join(lines[i*500:min((i+1)*500, len(lines))], nil)
		if i > 0 {
			part = append(part, bytes.Join(lines[(i-1)*500:(i-1)*500+40], nil)...)
		}
		if err := os.WriteFile(p, part, 0o644); err != nil {
			t.Fatal(err)
		}
		made = append(made, p)
	}
	pools := map[string][]string{"made-up": made}
	if files, _ := filepath.Glob("../../shared/data/t0-train-50k-per-template/data_per_template/*.jsonl"); len(files) > 0 {
		t0 := setFiles(t, 8)
		pools["T0"] = append(t0, t0[1], t0[6])
	}
	// Evaluation rows from the pool, so that the set's joined list of contaminated rows is checked
	// too, against one build's.
	eval := filepath.Join(dir, "eval.jsonl")
	os.WriteFile(eval, bytes.Join(lines[1700:1720], nil), 0o644)
	rng := rand.New(rand.NewPCG(3, 4))
	for name, files := range pools {
		opt := Options{Text: "prompt,completion", Workers: 2, Exclude: []string{eval}, ExcludeN: 4}
		one := buildOne(t, files, opt)
		if d := one.Meta().Dups; d == nil || d.ExactDuplicates == 0 || d.Duplicates <= d.ExactDuplicates {
			t.Fatalf("%s: the pool should hold exact and near duplicates: %+v", name, d)
		}
		var all []int
		for c := 1; c < len(files); c++ {
			all = append(all, c)
		}
		splits := map[string][]int{"1 way": nil, "2 ways": {len(files) / 2}, "3 ways": {2, 4}, "every file": all}
		var random []int
		for c := 1; c < len(files); c++ {
			if rng.IntN(2) == 0 {
				random = append(random, c)
			}
		}
		splits[fmt.Sprintf("random %v", random)] = random
		for split, cuts := range splits {
			t.Run(name+"/"+split, func(t *testing.T) {
				set, err := Open(buildSetOverlap(t, files, cuts, opt, true))
				if err != nil {
					t.Fatal(err)
				}
				defer set.Close()
				got, err := set.Duplicates(context.Background())
				if err != nil || got == nil {
					t.Fatalf("set's duplicates: %+v, %v", got, err)
				}
				if want := one.Meta().Dups; !reflect.DeepEqual(got, want) {
					t.Fatalf("set's duplicates\n%+v\n%+v\none build's\n%+v\n%+v", got, *got.KeyWork, want, *want.KeyWork)
				}
				ex1, hits1, err1 := one.Contamination()
				ex2, hits2, err2 := set.Contamination()
				if err1 != nil || err2 != nil || ex1 == nil || name == "made-up" && ex1.Rows == 0 || !reflect.DeepEqual(ex1, ex2) || !reflect.DeepEqual(hits1, hits2) {
					t.Fatalf("contaminated rows: one build %+v (%d rows listed, %v), the set %+v (%d, %v)", ex1, len(hits1), err1, ex2, len(hits2), err2)
				}
				for r := range one.NumRows() {
					a, _ := one.DupFirst(r)
					if b, ok := set.DupFirst(r); !ok || a != b {
						t.Fatalf("row %d: the set's cluster starts at %d (%v), one build's at %d", r, b, ok, a)
					}
				}
			})
		}
	}
}

// TestSetDupsNeedSketches checks that a set says nothing of duplicates when a segment did not find
// them, so that a pick finds them itself.
func TestSetDupsNeedSketches(t *testing.T) {
	pool := testPool(t, 300)
	dir := t.TempDir()
	a, b := filepath.Join(dir, "a"), filepath.Join(dir, "b")
	if _, err := Build(context.Background(), a, []string{pool}, Options{}); err != nil {
		t.Fatal(err)
	}
	if _, err := Build(context.Background(), b, []string{pool}, Options{NoDups: true}); err != nil {
		t.Fatal(err)
	}
	set := filepath.Join(dir, "pool.set")
	if _, err := WriteSet(set, []string{a, b}, true); err != nil {
		t.Fatal(err)
	}
	ix, err := Open(set)
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	if d, err := ix.Duplicates(context.Background()); d != nil || err != nil {
		t.Fatalf("a set with a segment without duplicates: %+v, %v; want nil", d, err)
	}
	if _, ok := ix.DupFirst(0); ok {
		t.Fatal("DupFirst answers for a set that found no duplicates")
	}
}

// FuzzSetSketches replaces one segment's sketches file (its size and checksum made to match in
// meta.json) and asks the set for its duplicates: a record out of order, of a row the segment does
// not have, or marks the detector cannot take must be an error naming the file, never a panic.
func FuzzSetSketches(f *testing.F) {
	dir := f.TempDir()
	pool := filepath.Join(dir, "pool.jsonl")
	os.WriteFile(pool, []byte(`{"text":"the ferry leaves the harbour at nine every morning"}`+"\n"+
		`{"text":"the ferry leaves the harbour at nine every evening"}`+"\n"+
		`{"text":"bread rises in a warm oven"}`+"\n"+`{"text":"!!"}`+"\n"), 0o644)
	a, b := filepath.Join(dir, "a"), filepath.Join(dir, "b")
	for _, seg := range []string{a, b} {
		if _, err := Build(context.Background(), seg, []string{pool}, Options{}); err != nil {
			f.Fatal(err)
		}
	}
	good, err := os.ReadFile(filepath.Join(b, sketchesFile))
	if err != nil {
		f.Fatal(err)
	}
	f.Add(good)
	swapped := append([]byte(nil), good...)
	n := len(good) / 4
	copy(swapped, good[n:2*n])
	copy(swapped[n:], good[:n])
	f.Add(swapped)
	f.Fuzz(func(t *testing.T, data []byte) {
		seg := filepath.Join(t.TempDir(), "b")
		os.Mkdir(seg, 0o755)
		names, _ := filepath.Glob(filepath.Join(b, "*"))
		for _, p := range names {
			c, _ := os.ReadFile(p)
			os.WriteFile(filepath.Join(seg, filepath.Base(p)), c, 0o644)
		}
		os.WriteFile(filepath.Join(seg, sketchesFile), data, 0o644)
		var m map[string]any
		c, _ := os.ReadFile(filepath.Join(seg, metaFile))
		json.Unmarshal(c, &m)
		m["files"].(map[string]any)[sketchesFile] = map[string]any{"size": len(data), "crc32c": fmt.Sprintf("%08x", crc32.Checksum(data, castagnoli))}
		c, _ = json.Marshal(m)
		os.WriteFile(filepath.Join(seg, metaFile), c, 0o644)
		set := filepath.Join(t.TempDir(), "pool.set")
		if _, err := WriteSet(set, []string{a, seg}, true); err != nil {
			return // refused at Open: the size does not fit the rows
		}
		ix, err := Open(set)
		if err != nil {
			return
		}
		defer ix.Close()
		if _, err := ix.Duplicates(context.Background()); err != nil && !errors.Is(err, ErrDamaged) {
			t.Fatalf("duplicates: %v, want ErrDamaged or none", err)
		}
		for r := range ix.NumRows() {
			ix.DupFirst(r)
		}
	})
}

// TestSketchesCheckedWhenRead flips a byte of a segment's sketches file: the index still opens
// (Open leaves that file to its reader), and the set that reads it refuses, naming it.
func TestSketchesCheckedWhenRead(t *testing.T) {
	pool := testPool(t, 200)
	dir := t.TempDir()
	a, b := filepath.Join(dir, "a"), filepath.Join(dir, "b")
	for _, seg := range []string{a, b} {
		if _, err := Build(context.Background(), seg, []string{pool}, Options{}); err != nil {
			t.Fatal(err)
		}
	}
	p := filepath.Join(b, sketchesFile)
	data, _ := os.ReadFile(p)
	data[len(data)/2] ^= 1
	os.WriteFile(p, data, 0o644)
	ix, err := Open(b)
	if err != nil {
		t.Fatalf("open of an index whose sketches no command here reads: %v", err)
	}
	ix.Close()
	set := filepath.Join(dir, "pool.set")
	if _, err := WriteSet(set, []string{a, b}, true); err != nil {
		t.Fatal(err)
	}
	if ix, err = Open(set); err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	if _, err := ix.Duplicates(context.Background()); !errors.Is(err, ErrDamaged) || !strings.Contains(err.Error(), "sketches checksum") {
		t.Fatalf("a set over a damaged sketches file: %v, want ErrDamaged naming it", err)
	}
}

// BenchmarkSetDuplicates finds the duplicates of the T0 files cut into four segments from their
// sketches, opening the set afresh each time as a pick does, and reports rows/s; it skips without
// ../shared/data.
func BenchmarkSetDuplicates(b *testing.B) {
	files, _ := sharedPool(b)
	dir := b.TempDir()
	var segs []string
	for i := range 4 {
		seg := filepath.Join(dir, fmt.Sprintf("seg%d", i))
		part := files[i*len(files)/4 : (i+1)*len(files)/4]
		if _, err := Build(context.Background(), seg, part, Options{Text: "prompt,completion"}); err != nil {
			b.Fatal(err)
		}
		segs = append(segs, seg)
	}
	set := filepath.Join(dir, "pool.set")
	if _, err := WriteSet(set, segs, false); err != nil {
		b.Fatal(err)
	}
	rows := 0
	b.ResetTimer()
	for range b.N {
		ix, err := Open(set)
		if err != nil {
			b.Fatal(err)
		}
		if d, err := ix.Duplicates(context.Background()); d == nil || err != nil {
			b.Fatalf("no duplicates found: %v", err)
		}
		rows = ix.NumRows()
		ix.Close()
	}
	b.ReportMetric(float64(b.N*rows)/b.Elapsed().Seconds(), "rows/s")
}

// TestSetDupsStop asks a set for its duplicates with a context already done: the search stops with
// the context's error, and later calls give it again.
func TestSetDupsStop(t *testing.T) {
	pool := testPool(t, 300)
	dir := t.TempDir()
	var segs []string
	for _, name := range []string{"a", "b"} {
		seg := filepath.Join(dir, name)
		if _, err := Build(context.Background(), seg, []string{pool}, Options{}); err != nil {
			t.Fatal(err)
		}
		segs = append(segs, seg)
	}
	set := filepath.Join(dir, "pool.set")
	if _, err := WriteSet(set, segs, true); err != nil {
		t.Fatal(err)
	}
	ix, err := Open(set)
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	for range 2 {
		if d, err := ix.Duplicates(ctx); d != nil || !errors.Is(err, context.Canceled) {
			t.Fatalf("a stopped search: %+v, %v; want context.Canceled", d, err)
		}
	}
}
