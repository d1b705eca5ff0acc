package report

import (
	"fmt"
	"math"
	"sort"
	"strconv"

	"sluice/budget/chart"
	"sluice/select/run"
)

// histBins is the most bins the score histogram uses; after the last doubling it uses between half
// of them and all. It must be even.
const histBins = 48

// scoreHist is a histogram of scores of any sign, built in one pass without knowing their range
// first. Bins have a power-of-two width and edges at its multiples, so a score's bin is
// floor(s/width), exactly; when a score falls outside the bins, the width doubles (merging pairs
// of bins) until every score seen fits. The first width comes from the first two different scores.
//
// With zeroApart (lexical methods, whose scores are never negative) a score of 0 means the row
// shares no term with the target: such rows are counted apart, since they would swamp the first
// bin, and zero is the first of the bins, as if it were a score already seen. Rows with no score
// at all (a cascade's first stage left them out) are counted apart by their reason.
type scoreHist struct {
	zeroApart bool

	width         float64 // 0 until two different scores have been seen
	lo, hi        float64 // the bins in use, as multiples of width: bins[i] is lo+i
	kept, dropped [histBins]int64

	// Before the width is known every score seen equals first.
	first                 float64
	pendKept, pendDropped int64

	rows     int64 // rows with a finite score, zeros apart included
	zero     int64 // rows scoring 0, with zeroApart
	min, max float64
	none     []reasonCount // rows without a score, by reason
}

type reasonCount struct {
	Reason string
	Rows   int64
}

// maxReasons bounds the distinct reasons kept for rows without a score, so that a damaged file
// cannot make the tally grow with its rows; the rest are summed as "other".
const maxReasons = 16

func (h *scoreHist) add(s float64, kept bool) {
	if h.rows == 0 {
		h.min, h.max = s, s
	}
	h.rows++
	h.min, h.max = min(h.min, s), max(h.max, s)
	if h.zeroApart && s == 0 {
		h.zero++
		return
	}
	if h.width == 0 {
		var ref float64
		switch {
		case h.zeroApart:
			// Zero is the reference: the bins start there.
		case h.pendKept+h.pendDropped == 0 || s == h.first:
			h.first = s
			if kept {
				h.pendKept++
			} else {
				h.pendDropped++
			}
			return
		default:
			ref = h.first
		}
		h.start(ref, s)
	}
	i := math.Floor(s / h.width)
	for max(h.hi, i)-min(h.lo, i) >= histBins {
		h.double()
		i = math.Floor(s / h.width)
	}
	if i < h.lo {
		h.shift(h.lo - i)
	}
	h.hi = max(h.hi, i)
	if kept {
		h.kept[int(i-h.lo)]++
	} else {
		h.dropped[int(i-h.lo)]++
	}
}

// start chooses the first width from the gap between a reference score and another one, and puts
// the scores held before it in their bin. From zero (zeroApart) the gap spans at most half the bins,
// as the page has always had it; between two scores, which may both lie inside the range, it spans
// all but two, so the bins are finer unless later scores widen them.
func (h *scoreHist) start(ref, s float64) {
	// Halves first, so that scores near the largest float64 give a finite gap.
	gap := math.Abs(s/2-ref/2) * 2
	span := float64(histBins - 2)
	if h.zeroApart {
		span = histBins / 2
	}
	h.width = math.Max(math.Exp2(math.Ceil(math.Log2(gap/span))), math.SmallestNonzeroFloat64)
	if math.IsInf(gap, 0) {
		h.width = math.Ldexp(1, 1023) // every float64 is within two bins of zero
	}
	h.lo = math.Floor(ref / h.width)
	h.hi = h.lo
	h.kept[0], h.dropped[0] = h.pendKept, h.pendDropped
}

// double doubles the width, merging the bins in pairs aligned to multiples of the new width.
func (h *scoreHist) double() {
	lo := math.Floor(h.lo / 2)
	var kept, dropped [histBins]int64
	for j := 0; j <= int(h.hi-h.lo); j++ {
		to := int(math.Floor((h.lo+float64(j))/2) - lo)
		kept[to] += h.kept[j]
		dropped[to] += h.dropped[j]
	}
	h.kept, h.dropped = kept, dropped
	h.hi = math.Floor(h.hi / 2)
	h.lo = lo
	h.width *= 2
}

// shift moves the bins up by n places, so that the first bin starts n widths lower.
func (h *scoreHist) shift(n float64) {
	k := int(n)
	copy(h.kept[k:], h.kept[:histBins-k])
	copy(h.dropped[k:], h.dropped[:histBins-k])
	clear(h.kept[:k])
	clear(h.dropped[:k])
	h.lo -= n
}

// finish bins the scores still held when every score seen was the same one.
func (h *scoreHist) finish() {
	if h.width != 0 || h.pendKept+h.pendDropped == 0 {
		return
	}
	gap := math.Abs(h.first)
	if gap == 0 {
		gap = 1
	}
	h.start(0, gap)
	h.lo = math.Floor(h.first / h.width)
	h.hi = h.lo
}

// unscored counts a row without a score, for the reason its line gives.
func (h *scoreHist) unscored(reason string) {
	if reason == "" {
		reason = "none given"
	}
	for i := range h.none {
		if h.none[i].Reason == reason {
			h.none[i].Rows++
			return
		}
	}
	if len(h.none) == maxReasons {
		reason = "other"
		if h.none[len(h.none)-1].Reason == reason {
			h.none[len(h.none)-1].Rows++
			return
		}
		h.none[len(h.none)-1].Reason = reason
		h.none[len(h.none)-1].Rows++
		return
	}
	h.none = append(h.none, reasonCount{reason, 1})
}

// used is the number of bins in use: from the first bin (zero, with zeroApart) to the last
// non-empty one.
func (h *scoreHist) used() int {
	if h.width == 0 {
		return 0
	}
	return int(h.hi-h.lo) + 1
}

// edge is the score where bin i starts; lo+i is an integer, so the product is exact (or infinite,
// past the largest float64).
func (h *scoreHist) edge(i int) float64 { return (h.lo + float64(i)) * h.width }

// Histogram geometry, in SVG user units.
const (
	histH = 300
	histL = 64 // left margin, for the count labels
	histR = 16
	histT = 40
	histB = 48
	// frontShare is the width of the smaller of a bin's two bars, drawn in front of the larger.
	frontShare = 0.5
)

type histBar struct {
	Lo, Hi        string // bin edges, exact, for data attributes
	Kept, Dropped int64
	Bars          []barRect // the larger first, the smaller in front of it
	Label         string    // for the tooltip
}

type barRect struct {
	Class      string
	X, Y, W, H float64
}

type tick struct {
	Pos   float64
	Label string
}

type histChart struct {
	W, H           int
	PlotL, PlotR   float64
	PlotT, PlotB   float64
	TickB          float64
	Bars           []histBar
	XTicks, YTicks []tick
	XTitle         string
	BinWidth       string
	Rows           int64 // rows with a finite score
	ZeroApart      bool
	Zero           int64
	Unscored       []reasonCount
	UnscoredRows   int64
	Min, Max       string // exact, for data attributes
	MinText        string
	MaxText        string
	HasZeroLine    bool
	ZeroX          float64
	HasCut         bool
	CutX           float64
	CutTop         float64 // above the plot, so the label covers no bar
	CutLabel       string
	CutAnchor      string
	CutScore       string
	Empty          bool
}

func newHistChart(h *scoreHist, rep *Page) histChart {
	h.finish()
	c := histChart{W: chartW, H: histH, PlotL: histL, PlotR: chartW - histR, PlotT: histT, PlotB: histH - histB,
		TickB: histH - histB + 5, BinWidth: exact(h.width), Rows: h.rows, ZeroApart: h.zeroApart, Zero: h.zero,
		Min: exact(h.min), Max: exact(h.max), MinText: short(h.min), MaxText: short(h.max), XTitle: scoreTitle(rep.Settings)}
	sort.SliceStable(h.none, func(i, j int) bool { return h.none[i].Rows > h.none[j].Rows })
	c.Unscored = h.none
	for _, r := range h.none {
		c.UnscoredRows += r.Rows
	}
	n := h.used()
	if n == 0 {
		c.Empty = true
		return c
	}
	var top int64
	for i := 0; i < n; i++ {
		top = max(top, h.kept[i], h.dropped[i])
	}
	// The bars are not stacked: on a log scale the upper part of a stack would not show its count.
	yScale := chart.LogCount(float64(top)).Onto(c.PlotB, c.PlotT)
	// Only scores near the largest float64 give infinite edges; the axis stops at the largest.
	xlo, xhi := max(h.edge(0), -math.MaxFloat64), min(h.edge(n), math.MaxFloat64)
	x := chart.Linear(xlo, xhi).Onto(c.PlotL, c.PlotR)
	for i := 0; i < n; i++ {
		k, d := h.kept[i], h.dropped[i]
		lo, hi := h.edge(i), h.edge(i+1)
		x0, x1 := x.At(lo)+0.5, x.At(hi)-0.5
		if x1-x0 < 0.5 {
			x1 = x0 + 0.5
		}
		b := histBar{Lo: exact(lo), Hi: exact(hi), Kept: k, Dropped: d,
			Label: fmt.Sprintf("scores %s to %s: %d kept, %d not kept", short(lo), short(hi), k, d)}
		type part struct {
			class string
			v     int64
		}
		parts := []part{{"kept", k}, {"drop", d}}
		if k < d {
			parts[0], parts[1] = parts[1], parts[0]
		}
		for j, p := range parts {
			if p.v == 0 {
				continue
			}
			bx, bw := x0, x1-x0
			if j == 1 {
				bx, bw = x0+bw*(1-frontShare)/2, bw*frontShare
			}
			y := yScale.At(float64(p.v))
			b.Bars = append(b.Bars, barRect{Class: p.class, X: bx, Y: y, W: bw, H: c.PlotB - y})
		}
		c.Bars = append(c.Bars, b)
	}
	for _, t := range yScale.Ticks(6) {
		c.YTicks = append(c.YTicks, tick{t.Pos, groupDigits(int64(t.V))})
	}
	step := chart.TickStep(xhi-xlo, 8)
	for _, t := range x.Ticks(8) {
		c.XTicks = append(c.XTicks, tick{t.Pos, stepLabel(t.V, step)})
	}
	if xlo < 0 && xhi > 0 {
		c.HasZeroLine, c.ZeroX = true, x.At(0)
	}
	if rep.CutRank > 0 && !math.IsNaN(rep.CutScore) {
		c.HasCut = true
		c.CutScore = exact(rep.CutScore)
		c.CutX = x.At(rep.CutScore)
		c.CutTop = c.PlotT - 18
		c.CutLabel = fmt.Sprintf("cut: score %s, rank %d", short(rep.CutScore), rep.CutRank)
		c.CutAnchor = "start"
		if c.CutX > c.PlotL+(c.PlotR-c.PlotL)*0.6 {
			c.CutAnchor = "end"
		}
	}
	return c
}

// stepLabel writes a tick value with as many decimals as its step has, so that ticks reached by
// adding the step read 0.3 and 0, not 0.30000000000000004 and 5.551115123125783e-17.
func stepLabel(v, step float64) string {
	d := max(0, -int(math.Floor(math.Log10(step))))
	v = math.Round(v/step) * step
	if v == 0 {
		v = 0 // not -0
	}
	return strconv.FormatFloat(v, 'f', d, 64)
}

// scoreTitle names the score axis: what a score is, in the run's method.
func scoreTitle(st run.Settings) string {
	name := st.MethodName()
	switch {
	case st.Method != run.MethodNgram:
		return "score (" + name + ")"
	case st.Ngram != nil && st.Ngram.TargetOnly:
		return "score: log-likelihood under the target model, nats per token · " + name
	}
	return "score: cross-entropy difference, pool model − target model, nats per token · " + name
}
