package score

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

// The row-at-a-time scorer (every list cached) and the per-target passes
// (nothing cached) must agree bit for bit, over spans of several row blocks
// (17 blocks: one worker takes spans of two) and with
// repeated target rows so that ties occur. The property is internal, so no
// reference values are involved.
func TestRowPassesMatchTargetPasses(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	z := rand.NewZipf(rng, 1.1, 2, 4999)
	c := newZipfCorpus(rng, z, 17*rowBlock+17, 40, 5000)
	q := make([]Query, 150)
	for j := range q {
		if j%10 == 9 {
			q[j].Terms = q[j-1].Terms // a tie at every pool row the earlier one reaches
			continue
		}
		for range 1 + j%25 {
			q[j].Terms = append(q[j].Terms, zipfTerm(int(z.Uint64())))
		}
	}
	q = append(q, Query{ID: "no terms"}, Query{ID: "absent", Terms: []string{"not-in-pool"}})
	for _, p := range allParams() {
		p.CacheBytes, p.Workers = -1, 1
		want, err := Score(context.Background(), c, q, p)
		if err != nil {
			t.Fatal(err)
		}
		for _, workers := range []int{1, 2, 5} {
			p.CacheBytes, p.Workers = 0, workers
			got, err := Score(context.Background(), c, q, p)
			if err != nil {
				t.Fatal(err)
			}
			name := fmt.Sprintf("%v/%v workers %d", p.Method, p.Aggregate, workers)
			for r := range got.Scores {
				if math.Float64bits(got.Scores[r]) != math.Float64bits(want.Scores[r]) || got.Best[r] != want.Best[r] {
					t.Fatalf("%s: row %d: score %v best %d, per-target passes %v best %d",
						name, r, got.Scores[r], got.Best[r], want.Scores[r], want.Best[r])
				}
			}
			got.Work.PostingsFetched, want.Work.PostingsFetched = 0, 0
			if got.Work != want.Work {
				t.Errorf("%s: work %+v, want %+v", name, got.Work, want.Work)
			}
		}
	}
}
