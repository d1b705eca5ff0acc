package index

import (
	"errors"
	"math"
	"path/filepath"
	"slices"
	"testing"
)

// TestShardReadsAsItsRows checks that each segment opened as a shard of its set answers, for its
// own rows, what the set answers for them, bit for bit: the set's statistics (rows, average length,
// document frequencies, TF-IDF norms under them), its rows' lengths, tokens, locations among the
// set's sources, ids and postings, and the part's document frequencies summing to the set's.
func TestShardReadsAsItsRows(t *testing.T) {
	files := setFiles(t, 14)
	opt := Options{Text: "prompt,completion", NoDups: true}
	for _, cuts := range [][]int{nil, {7}, {2, 4, 6, 8, 10, 12}} {
		path := buildSet(t, files, cuts, opt)
		set, err := Open(path)
		if err != nil {
			t.Fatal(err)
		}
		defer set.Close()
		terms := []string{"the", "question", "answer", "zebra", "of", "nosuchtermanywhere"}
		partDF := make([]int, len(terms))
		for s := range len(cuts) + 1 {
			sh, err := OpenShard(path, s)
			if err != nil {
				t.Fatal(err)
			}
			if i, of := sh.Shard(); i != s || of != len(cuts)+1 {
				t.Fatalf("shard %d: Shard() = %d of %d", s, i, of)
			}
			if sh.WholeRows() != set.NumRows() || math.Float64bits(sh.AvgLen()) != math.Float64bits(set.AvgLen()) || sh.Meta().Text != set.Meta().Text {
				t.Fatalf("shard %d: statistics differ from the set's", s)
			}
			base := sh.FirstRow()
			for r := range sh.NumRows() {
				g := base + r
				if sh.RowLen(r) != set.RowLen(g) || math.Float64bits(sh.RowNorm(r)) != math.Float64bits(set.RowNorm(g)) ||
					sh.RowLocation(r) != set.RowLocation(g) || sh.RowID(r) != set.RowID(g) {
					t.Fatalf("shard %d row %d (set row %d) differs", s, r, g)
				}
			}
			for k, term := range terms {
				if sh.DF(term) != set.DF(term) {
					t.Fatalf("shard %d: DF(%q) %d, set %d", s, term, sh.DF(term), set.DF(term))
				}
				partDF[k] += sh.PartDF(term)
				rows, _, err := sh.Postings(term, nil, nil)
				all, _, _ := set.Postings(term, nil, nil)
				var want []uint32
				for _, r := range all {
					if int(r) >= base && int(r) < base+sh.NumRows() {
						want = append(want, r-uint32(base))
					}
				}
				if err != nil || !slices.Equal(rows, want) || len(rows) != sh.PartDF(term) {
					t.Fatalf("shard %d: postings of %q differ: %v", s, term, err)
				}
			}
			sh.Close()
		}
		for k, term := range terms {
			if partDF[k] != set.DF(term) {
				t.Fatalf("%v: the shards' PartDF(%q) sum to %d, the set's DF is %d", cuts, term, partDF[k], set.DF(term))
			}
		}
	}
}

func TestOpenShardRefuses(t *testing.T) {
	files := setFiles(t, 3)
	path := buildSet(t, files, []int{1}, Options{Text: "prompt,completion", NoDups: true})
	if _, err := OpenShard(path, 2); err == nil {
		t.Error("shard 2 of a set of 2 was opened")
	}
	if _, err := OpenShard(filepath.Join(filepath.Dir(path), "seg0"), 0); !errors.Is(err, ErrNotIndex) {
		t.Errorf("an index folder opened as a set: %v", err)
	}
}
