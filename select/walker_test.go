package selection

import (
	"cmp"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestWalkerOverShards checks that rows ranked shard by shard and merged by (score, row), the way
// a pick split across machines would meet them, walk to Pick's decisions and summary to the bit:
// random pools with ties, bars, groups with caps, counts in units, and every stop.
func TestWalkerOverShards(t *testing.T) {
	for seed := range uint64(1000) {
		r := rand.New(rand.NewPCG(seed, 11))
		n := 1 + r.IntN(80)
		scores, costs := make([]float64, n), make([]float64, n)
		barred, group := make([]Reason, n), make([]int32, n)
		for i := range n {
			scores[i] = float64(r.IntN(9)-2) / 2
			costs[i] = float64(r.IntN(20))
			if r.IntN(8) == 0 {
				barred[i] = Duplicate
			}
			group[i] = int32(r.IntN(3))
		}
		opt := Options{Budget: float64(r.IntN(10 * n)), Fixed: float64(r.IntN(n + 1)), Fill: r.IntN(2) == 0,
			Barred: barred, Group: group, Caps: []float64{float64(r.IntN(5 * n)), 1e18, float64(r.IntN(3 * n))}}
		if r.IntN(2) == 0 {
			opt.Unit, opt.MaxCount = 3, float64(r.IntN(10*n))
		}
		if r.IntN(3) == 0 {
			opt.MaxRows = r.IntN(n + 1)
		}
		want, wantSum, err := Pick(scores, costs, opt)
		if err != nil {
			t.Fatalf("seed %d: %v", seed, err)
		}
		// Each shard ranks its own rows; the merge takes the best head, ties to the lower row.
		var shards [][]uint32
		for lo := 0; lo < n; {
			hi := min(n, lo+1+r.IntN(n))
			keys := rankedRows(scores[lo:hi])
			for k := range keys {
				keys[k] += uint32(lo)
			}
			shards, lo = append(shards, keys), hi
		}
		w := NewWalker(opt)
		got := make([]Decision, n)
		for {
			best := -1
			for s, keys := range shards {
				if len(keys) == 0 {
					continue
				}
				if best < 0 || cmp.Or(cmp.Compare(scores[keys[0]], scores[shards[best][0]]), cmp.Compare(shards[best][0], keys[0])) > 0 {
					best = s
				}
			}
			if best < 0 {
				break
			}
			i := shards[best][0]
			shards[best] = shards[best][1:]
			got[i] = w.Step(scores[i], costs[i], barred[i], group[i])
		}
		if !slices.Equal(got, want) || w.Summary() != wantSum {
			t.Fatalf("seed %d: the walk over shards differs from Pick\n got %+v %+v\nwant %+v %+v", seed, got, w.Summary(), want, wantSum)
		}
	}
}
