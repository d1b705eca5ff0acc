package run

import (
	"errors"
	"fmt"
	"strings"

	"sluice/index"
	"sluice/score"
)

// ErrMemory reports a pick that would need more memory than Options.MaxMem allows; nothing was
// written.
var ErrMemory = errors.New("the pick needs more memory than allowed")

// What a pick holds, in bytes, by what it grows with. The figures are BenchmarkPickMemory's
// (live heap, rounded up) and the sizes of the arrays behind them; the mapped index files are not
// counted, since the kernel can drop their pages and read them again.
const (
	// PoolRowBytes is a pool row's share: its score (8) and best target row (4), its place in the
	// ranking (4, and 4 more while a group of close scores is split) and its decision (16); a row's
	// cost is read from the index as the walk meets it. Measured: 19 to 37 (2026-12-03, the
	// sampling of the heap makes the spread).
	PoolRowBytes = 36
	// TargetRowBytes and TargetTermBytes are a target row's share, less its terms, and a term's:
	// its string in the row (16) and its number in the row's query (4; 12 for TF-IDF). Measured:
	// 150 to 300 a row of 13 terms.
	TargetRowBytes  = 200
	TargetTermBytes = 32
	// SetRowBytes is a pool row's share for each target set of a pick for several: the set's score
	// (8), best target row (4), bar (1), decision (16) and place in its ranking (4), and the row's
	// set, keeper and cluster number (7) spread over two sets or more, rounded up. Not measured.
	SetRowBytes = 40
	// fixedBytes covers what grows with nothing: the writers' buffers (1 MiB each), the readers',
	// the lexicon's sample and the runtime.
	fixedBytes = 64 << 20
)

// dupRowBytes is what the duplicate guard holds per pool row, as dedup documents it at its most: a
// sketch of a byte per hash (Detector), the row's number and its cluster (4 and 4), a bucket entry
// per band at 32 bytes, and an exact-duplicate key in a map at 48 (Exact).
func dupRowBytes(bands int) int64 { return minhashes + 4 + 4 + 32*int64(bands) + 48 }

// indexDupRowBytes is what the duplicate guard holds per pool row when it takes the index's
// clusters, which it reads from the index as it needs them: each cluster's row kept (4, until the
// run is written), each row's bar (1) and a bit while counting clusters, rounded up.
// BenchmarkPickMemory measured 45.5 to 47.5 bytes a row in all on a pool of four copies of each
// text, against 34.5 to 39 for a pick that keeps duplicates.
const indexDupRowBytes = 12

// setDupRowBytes is what finding a set's duplicates from its segments' sketches holds per pool row
// (index.Duplicates, dedup.Bulk), with the guard's indexDupRowBytes: each row's cluster (4), the
// exact keys' map (48 a distinct key), the Bulk's row and marks (28), one band's table (up to 32)
// and its candidate pairs (8 each, up to one a band: 128), counting every row distinct.
const setDupRowBytes = indexDupRowBytes + 4 + 48 + 28 + 32 + 128

// memPart is one part of a pick's memory, in words and bytes.
type memPart struct {
	what  string
	bytes int64
}

// memoryNeed estimates the most memory the pick holds at once, with the parts it is made of in
// words, once the target rows are read. Model-based methods add their model, which is not counted.
func (p *picked) memoryNeed() (int64, []string) {
	n := int64(p.ix.NumRows())
	var terms int64
	distinct := map[string]bool{}
	for _, t := range p.targets {
		terms += int64(len(t.Terms))
		for _, term := range t.Terms {
			distinct[term] = true
		}
	}
	span := p.opt.Params.CacheBytes
	if span <= 0 {
		span = score.DefaultSpanBytes
	}
	parts := []memPart{
		{fmt.Sprintf("%d pool rows at %d B", n, PoolRowBytes), n * PoolRowBytes},
		{fmt.Sprintf("%d target rows at %d B and %d target terms at %d B", len(p.targets), TargetRowBytes, terms, TargetTermBytes),
			int64(len(p.targets))*TargetRowBytes + terms*TargetTermBytes},
		// A span's postings take the bound and a quarter more when rows are longer than average.
		{fmt.Sprintf("the postings of a span of rows (--mem %s) and a quarter", formatBytes(span)), span + span/4},
		{"buffers", fixedBytes},
	}
	if lexical(p.opt.method()) || p.opt.Prefilter.active() {
		parts = append(parts, memPart{fmt.Sprintf("a read window of %d B for each of %d distinct target terms' lists", index.CursorWindow, len(distinct)),
			int64(len(distinct)) * index.CursorWindow})
	}
	if k := int64(len(p.sets)); k > 1 {
		parts = append(parts, memPart{fmt.Sprintf("%d target sets, %d B a pool row each", k, SetRowBytes), k * n * SetRowBytes})
	}
	if d := p.ix.DupSettings(); p.takesDups(d) && p.ix.Segments() != nil {
		parts = append(parts, memPart{fmt.Sprintf("the set's clusters of duplicates, found from its segments' sketches, %d B a pool row", setDupRowBytes), n * setDupRowBytes})
	} else if p.takesDups(d) {
		parts = append(parts, memPart{fmt.Sprintf("the index's clusters of duplicates, %d B a pool row", indexDupRowBytes), n * indexDupRowBytes})
	} else if g := p.opt.Guards; !g.KeepDuplicates {
		b := int64(chooseBands(orDefault(g.NearDup, DefaultNearDup)))
		parts = append(parts, memPart{fmt.Sprintf("the duplicate guard, %d B a pool row (--keep-duplicates drops it)", dupRowBytes(int(b))), n * dupRowBytes(int(b))})
	}
	var total int64
	var words []string
	for _, pt := range parts {
		total += pt.bytes
		words = append(words, fmt.Sprintf("%s: %s", pt.what, formatBytes(pt.bytes)))
	}
	return total, words
}

// checkMemory refuses, before any scoring, a pick that would need more than opt.MaxMem.
func (p *picked) checkMemory() error {
	if p.opt.MaxMem <= 0 {
		return nil
	}
	need, parts := p.memoryNeed()
	if need <= p.opt.MaxMem {
		return nil
	}
	return fmt.Errorf("this pick needs about %s (%s), more than --max-mem %s allows: raise it, or lower --mem; nothing was written: %w",
		formatBytes(need), strings.Join(parts, "; "), formatBytes(p.opt.MaxMem), ErrMemory)
}

// formatBytes writes a size in the largest binary unit that keeps it at 1 or more, as --mem takes it.
func formatBytes(b int64) string {
	units := []string{"B", "KiB", "MiB", "GiB", "TiB"}
	v, u := float64(b), 0
	for v >= 1024 && u < len(units)-1 {
		v, u = v/1024, u+1
	}
	if u == 0 {
		return fmt.Sprintf("%d B", b)
	}
	return fmt.Sprintf("%.1f %s", v, units[u])
}
