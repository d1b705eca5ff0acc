package ngram

import (
	"math/rand/v2"
	"strconv"
	"testing"
)

// zipfRows draws rows of Zipf-distributed words, the shape of word
// frequencies in text, for timing only (no check uses them).
func zipfRows(seed uint64, rows, length, vocab int) [][]string {
	rng := rand.New(rand.NewPCG(seed, 1))
	z := rand.NewZipf(rng, 1.1, 2, uint64(vocab-1))
	words := make([]string, vocab)
	for i := range words {
		words[i] = "w" + strconv.Itoa(i)
	}
	out := make([][]string, rows)
	for r := range out {
		out[r] = make([]string, length)
		for i := range out[r] {
			out[r][i] = words[z.Uint64()]
		}
	}
	return out
}

// BenchmarkScore scores rows against a target and a pool model of 3,000
// rows each, the sizes sluice trains, and reports scored symbols (tokens
// and </s>) per second for the pair of models.
func BenchmarkScore(b *testing.B) {
	for _, order := range []int{3, 5} {
		b.Run("order="+strconv.Itoa(order), func(b *testing.B) {
			tm := mustTrain(b, zipfRows(1, 3000, 40, 50000), Options{Order: order})
			pm := mustTrain(b, zipfRows(2, 3000, 40, 50000), Options{Order: order})
			rows := zipfRows(3, 1000, 40, 50000)
			symbols := 0
			for _, r := range rows {
				symbols += len(r) + 1
			}
			b.ReportAllocs()
			b.ResetTimer()
			sink := 0.0
			for b.Loop() {
				for _, r := range rows {
					sink += Score(tm, pm, r)
				}
			}
			b.ReportMetric(float64(symbols)*float64(b.N)/b.Elapsed().Seconds(), "tokens/s")
			if sink == 0 {
				b.Log(sink)
			}
		})
	}
}

// BenchmarkTrain counts and builds a 3,000-row model and reports training
// tokens per second.
func BenchmarkTrain(b *testing.B) {
	rows := zipfRows(1, 3000, 40, 50000)
	b.ReportAllocs()
	for b.Loop() {
		mustTrain(b, rows, Options{Order: 5})
	}
	b.ReportMetric(float64(3000*40)*float64(b.N)/b.Elapsed().Seconds(), "tokens/s")
}
