package index

import (
	"bytes"
	"crypto/sha256"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"sluice/index/dedup"
)

// TestDupsMatchDetector checks the dups file against dedup run directly over the pool's rows in
// order, every row signed and given to the Detector as a pick's guard does (the build skips exact
// duplicates, which must change no cluster), with one to three workers and spills.
func TestDupsMatchDetector(t *testing.T) {
	// The pool's rows again after it, the first 400 of them, make exact duplicates.
	data, _ := os.ReadFile(testPool(t, 3000))
	data = append(data, bytes.Join(bytes.SplitAfter(data, []byte("\n"))[:400], nil)...)
	pool := filepath.Join(t.TempDir(), "pool.jsonl")
	if err := os.WriteFile(pool, data, 0o644); err != nil {
		t.Fatal(err)
	}
	prm := dedup.ForThreshold(0.7)
	det, err := dedup.NewDetector(prm)
	if err != nil {
		t.Fatal(err)
	}
	signer, _ := dedup.NewSigner(prm)
	var exact dedup.Exact
	var h dedup.Hasher
	var keys []dedup.Key
	row := 0
	for _, line := range bytes.Split(data, []byte("\n")) {
		if len(line) == 0 || line[0] != '{' || !bytes.Contains(line, []byte(`"prompt"`)) {
			continue
		}
		var text []byte
		for _, field := range []string{`"prompt":"`, `"completion":"`} {
			i := bytes.Index(line, []byte(field)) + len(field)
			j := i + bytes.IndexByte(line[i:], '"')
			if len(text) > 0 {
				text = append(text, '\n')
			}
			text = append(text, line[i:j]...)
		}
		h.Write(text)
		k := h.Sum()
		keys = append(keys, k)
		signer.Write(text)
		first, _ := exact.Add(row, k)
		if _, err := det.Add(nil, row, signer.Sum(nil)); err != nil {
			t.Fatal(err)
		}
		if first != row {
			det.Clusters().Union(first, row)
		}
		row++
	}
	cl := det.Clusters()
	var ref []byte
	// The small bounds also cut each band's keys into parts, and one block of the sketches file
	// held makes every pair's rows be read again.
	for _, tc := range []struct {
		workers int
		mem     int64
		slots   int
	}{{1, 0, 0}, {2, 4 << 10, 0}, {3, 1 << 10, 1}} {
		dir, _ := build(t, pool, Options{Workers: tc.workers, Mem: tc.mem, NearDup: 0.7, batchRows: 64, dupSlots: tc.slots})
		ix, err := Open(dir)
		if err != nil {
			t.Fatal(err)
		}
		d := ix.Meta().Dups
		if d == nil || d.Threshold != 0.7 || d.Bands != prm.Bands || d.Hashes != prm.Hashes {
			t.Fatalf("meta duplicates %+v, want the parameters %+v", d, prm)
		}
		dupRows := 0
		for r := range row {
			f, ok := ix.DupFirst(r)
			if want := cl.Find(r); !ok || f != want {
				t.Fatalf("workers %d: row %d: first %d, want %d", tc.workers, r, f, want)
			}
			if k, _ := ix.DupKey(r); k != keys[r] {
				t.Fatalf("row %d: key differs", r)
			}
			if f != r {
				dupRows++
			}
		}
		if d.Duplicates != int64(dupRows) || d.Clusters != int64(len(cl.Groups())) || d.ExactDuplicates != int64(row-exact.Len()) {
			t.Errorf("counts %+v, want %d duplicates in %d clusters, %d exact", d, dupRows, len(cl.Groups()), row-exact.Len())
		}
		if d.ExactDuplicates == 0 || int64(dupRows) == d.ExactDuplicates {
			t.Errorf("the pool should hold exact and near duplicates: %+v", d)
		}
		// Repeated texts take their key from the workers' cache, but are counted as hashed.
		if d.Work.Hashed != h.Work().Hashed {
			t.Errorf("workers %d: %d bytes hashed, want %d, every row's", tc.workers, d.Work.Hashed, h.Work().Hashed)
		}
		if d.Work.MinHashes == 0 || d.FLOPs != d.Work.FLOPs() {
			t.Errorf("work %+v, flops %v", d.Work, d.FLOPs)
		}
		b, _ := os.ReadFile(filepath.Join(dir, dupsFile))
		// meta.json too, with the hashing work: which repeated rows a worker signs depends on how
		// batches fall to workers, but the work counted must not.
		m, _ := os.ReadFile(filepath.Join(dir, metaFile))
		b = append(b, m...)
		if ref == nil {
			ref = b
		} else if !bytes.Equal(ref, b) {
			t.Errorf("workers %d: dups differs from the first build", tc.workers)
		}
		ix.Close()
	}
	dir, _ := build(t, pool, Options{NoDups: true})
	ix, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	if _, ok := ix.DupFirst(0); ok || ix.Meta().Dups != nil {
		t.Errorf("NoDups: the index holds duplicates")
	}
	if _, err := os.Stat(filepath.Join(dir, dupsFile)); !os.IsNotExist(err) {
		t.Errorf("NoDups: dups file: %v", err)
	}
}

// TestSeenKeys checks which rows the workers' shared cache of keys lets go unsigned: those with a
// key met in an earlier batch or earlier in their own, never the first row of a key.
func TestSeenKeys(t *testing.T) {
	var c *seenKeys
	claim := func(k dedup.Key, seq int) bool {
		c.mu.Lock()
		defer c.mu.Unlock()
		return c.claimLocked(k, seq)
	}
	c = newSeenKeys()
	k := dedup.Key{1, 2, 3, 4, 5}
	for _, step := range []struct {
		seq  int
		sign bool
	}{
		{5, true},  // the first met
		{5, false}, // a later row of the same batch
		{7, false}, // a later batch
		{3, true},  // an earlier batch, met later: it may be the first
		{4, false}, // after batch 3
		{3, false},
	} {
		if got := claim(k, step.seq); got != step.sign {
			t.Errorf("batch %d: sign %v, want %v", step.seq, got, step.sign)
		}
	}
	// A full set forgets one key for a new one: that key is then signed again.
	var keys []dedup.Key
	for i := range seenWays + 1 {
		key := dedup.Key{9, 9, 9, 9, byte(i)}
		keys = append(keys, key)
		if !claim(key, 1) {
			t.Errorf("key %d: not signed when first met", i)
		}
	}
	signed := 0
	for _, key := range keys {
		if claim(key, 2) {
			signed++
		}
	}
	if signed == 0 {
		t.Errorf("%d keys in a set of %d: none forgotten", seenWays+1, seenWays)
	}
	// Growing keeps the keys: a pool of 3/8 as many distinct keys as the most slots (the T0 pool has
	// 50,000) has its repeats known but for a few.
	c = newSeenKeys()
	var many []dedup.Key
	for i := range seenMaxSlots * 3 / 8 {
		h := sha256.Sum256([]byte(strconv.Itoa(i)))
		many = append(many, dedup.Key(h[:16]))
		claim(many[i], 1)
	}
	forgot := 0 // a few at most: sets of eight at 3/8 full rarely overflow
	for _, key := range many {
		if claim(key, 2) {
			forgot++
		}
	}
	if len(c.keys.slots) != seenMaxSlots || forgot > len(many)/100 {
		t.Errorf("%d slots; %d of %d keys forgotten", len(c.keys.slots), forgot, len(many))
	}
}

// TestSeenTexts checks the cache of texts: a text met once gives its key and normalised length
// back, and claims the key as claim does; a text not met, or one that differs by a byte, is not
// known.
func TestSeenTexts(t *testing.T) {
	c := newSeenKeys()
	text := []byte("Rate the review:\nFive stars.")
	raw := c.rawKey(text)
	if _, _, _, ok := c.claimText(raw, 1); ok {
		t.Fatal("a text never met is known")
	}
	var h dedup.Hasher
	h.Write(text)
	key := h.Sum()
	if !c.claimKey(raw, key, h.Work().Hashed, 1) {
		t.Error("the first row of a key is not signed")
	}
	k, hashed, sign, ok := c.claimText(c.rawKey(bytes.Clone(text)), 2)
	if !ok || k != key || hashed != h.Work().Hashed || sign {
		t.Errorf("known text: key %x, hashed %d, sign %v, ok %v; want %x, %d, false, true", k, hashed, sign, ok, key, h.Work().Hashed)
	}
	// A text met in batch 9, then in batch 7 (which may hold the key's first row), then in 8.
	other := []byte("Rate the review:\nOne star.")
	h.Write(other)
	okey := h.Sum()
	c.claimKey(c.rawKey(other), okey, 1, 9)
	for _, step := range []struct {
		seq  int
		sign bool
	}{{9, false}, {7, true}, {8, false}, {7, false}} {
		if _, _, sign, _ := c.claimText(c.rawKey(other), step.seq); sign != step.sign {
			t.Errorf("batch %d: sign %v, want %v", step.seq, sign, step.sign)
		}
	}
	if _, _, _, ok := c.claimText(c.rawKey([]byte("Rate the review:\nFive stars!")), 2); ok {
		t.Error("a text one byte away is known")
	}
}
