package analysis

import (
	"strings"
	"testing"
)

// sampleProse is the fallback benchmark text when ../shared/data is absent:
// Abraham Lincoln's Gettysburg Address (1863), in the public domain.
const sampleProse = `Four score and seven years ago our fathers brought forth on this continent, a new nation, conceived in Liberty, and dedicated to the proposition that all men are created equal.

Now we are engaged in a great civil war, testing whether that nation, or any nation so conceived and so dedicated, can long endure. We are met on a great battle-field of that war. We have come to dedicate a portion of that field, as a final resting place for those who here gave their lives that that nation might live. It is altogether fitting and proper that we should do this.

But, in a larger sense, we can not dedicate -- we can not consecrate -- we can not hallow -- this ground. The brave men, living and dead, who struggled here, have consecrated it, far above our poor power to add or detract. The world will little note, nor long remember what we say here, but it can never forget what they did here. It is for us the living, rather, to be dedicated here to the unfinished work which they who fought here have thus far so nobly advanced. It is rather for us to be here dedicated to the great task remaining before us -- that from these honored dead we take increased devotion to that cause for which they gave the last full measure of devotion -- that we here highly resolve that these dead shall not have died in vain -- that this nation, under God, shall have a new birth of freedom -- and that government of the people, by the people, for the people, shall not perish from the earth.
`

// benchFields returns realistic fields: every 25th row of the real corpora
// when present (about 2.5 MB), else the sample prose.
func benchFields(b *testing.B) [][]byte {
	if dir := dataDir(b); dir != "" {
		var fields [][]byte
		err := corpusFields(dir, 25, func(_ string, text []byte) {
			if len(text) > 0 {
				fields = append(fields, text)
			}
		})
		if err != nil {
			b.Fatal(err)
		}
		if len(fields) > 0 {
			return fields
		}
	}
	var fields [][]byte
	for _, p := range strings.Split(sampleProse, "\n\n") {
		fields = append(fields, []byte(p))
	}
	return fields
}

func BenchmarkAnalyze(b *testing.B) {
	fields := benchFields(b)
	size := 0
	for _, f := range fields {
		size += len(f)
	}
	for _, name := range Names() {
		for _, path := range []string{"fast", "tagged", "bleve"} {
			b.Run(name+"/"+path, func(b *testing.B) {
				a := mustNew(b, name)
				each := a.Each
				switch path {
				case "tagged":
					// As the index uses it: every tag is read, new ones are set.
					each = func(text []byte, fn func([]byte)) {
						a.EachTagged(text, func(t []byte, tag *uint64) {
							if *tag == 0 {
								*tag = 1
							}
							fn(t)
						})
					}
				case "bleve":
					each = func(text []byte, fn func([]byte)) {
						a.bleveEach(text, func(t []byte, _ *uint64) { fn(t) })
					}
				}
				terms := 0
				fn := func([]byte) { terms++ }
				b.SetBytes(int64(size))
				b.ReportAllocs()
				b.ResetTimer()
				for b.Loop() {
					for _, f := range fields {
						each(f, fn)
					}
				}
				b.ReportMetric(float64(terms)/b.Elapsed().Seconds(), "terms/s")
			})
		}
	}
}
