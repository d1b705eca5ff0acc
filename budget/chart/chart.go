package chart

import (
	"fmt"
	"html"
	"math"
	"strconv"
	"strings"
)

// A Box is a picture's size and the margins around its plot area, in pixels.
// The right margin holds the legend.
type Box struct {
	W, H       float64
	L, R, T, B float64
}

// An Axis is what one side of the frame shows.
type Axis struct {
	Scale Scale  // New places it on the plot area
	Title string // written along the axis
	// Tick labels a tick's value; nil writes powers of ten as 1e18 on a
	// log scale, whole counts in full on a log-count scale and the shortest
	// exact decimal otherwise.
	Tick func(v float64) string
}

// A Point is a place in data units; the chart maps it onto pixels.
type Point struct{ X, Y float64 }

// A Chart is one SVG document being written. Series are named by their
// number, which picks their style, so a legend entry always matches its line.
type Chart struct {
	box  Box
	x, y Scale
	b    strings.Builder
}

// ticksPerAxis is how many ticks a linear axis aims at: enough to read a
// value off, few enough that labels do not touch at these sizes.
const ticksPerAxis = 6

// New starts a chart of box b: the background, the title, a grid with tick
// labels on both axes, the plot area's border and the axes' titles.
func New(b Box, title string, x, y Axis) *Chart {
	c := &Chart{box: b, x: x.Scale.Onto(b.L, b.W-b.R), y: y.Scale.Onto(b.H-b.B, b.T)}
	fmt.Fprintf(&c.b, `<svg xmlns="http://www.w3.org/2000/svg" width="%.0f" height="%.0f" viewBox="0 0 %.0f %.0f" font-family="Helvetica, Arial, sans-serif" font-size="12">`+"\n", b.W, b.H, b.W, b.H)
	c.b.WriteString(`<rect width="100%" height="100%" fill="white"/>` + "\n")
	fmt.Fprintf(&c.b, `<text x="%.0f" y="20" font-size="15" font-weight="bold">%s</text>`+"\n", b.L, html.EscapeString(title))
	for _, t := range c.y.Ticks(ticksPerAxis) {
		fmt.Fprintf(&c.b, `<line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="#ddd"/><text x="%.1f" y="%.1f" text-anchor="end">%s</text>`+"\n",
			b.L, b.W-b.R, t.Pos, t.Pos, b.L-6, t.Pos+4, html.EscapeString(y.label(t.V)))
	}
	for _, t := range c.x.Ticks(ticksPerAxis) {
		fmt.Fprintf(&c.b, `<line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="#ddd"/><text x="%.1f" y="%.1f" text-anchor="middle">%s</text>`+"\n",
			t.Pos, t.Pos, b.T, b.H-b.B, t.Pos, b.H-b.B+16, html.EscapeString(x.label(t.V)))
	}
	fmt.Fprintf(&c.b, `<rect x="%.1f" y="%.1f" width="%.1f" height="%.1f" fill="none" stroke="#333"/>`+"\n", b.L, b.T, b.W-b.L-b.R, b.H-b.T-b.B)
	fmt.Fprintf(&c.b, `<text x="%.1f" y="%.1f" text-anchor="middle">%s</text>`+"\n", (b.L+b.W-b.R)/2, b.H-8, html.EscapeString(x.Title))
	fmt.Fprintf(&c.b, `<text transform="translate(16 %.1f) rotate(-90)" text-anchor="middle">%s</text>`+"\n", (b.T+b.H-b.B)/2, html.EscapeString(y.Title))
	return c
}

func (a Axis) label(v float64) string {
	switch {
	case a.Tick != nil:
		return a.Tick(v)
	case a.Scale.log:
		return "1e" + strconv.Itoa(int(math.Round(math.Log10(v))))
	case a.Scale.count:
		return strconv.FormatFloat(v, 'f', -1, 64)
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// SVG is the document so far, closed. The chart can still be drawn on.
func (c *Chart) SVG() []byte { return []byte(c.b.String() + "</svg>\n") }

// Series draws series i as a line through pts, in its colour and dash.
// Fewer than two points draw nothing: a line needs two ends.
func (c *Chart) Series(i int, pts []Point) {
	st := styleOf(i)
	c.polyline(pts, fmt.Sprintf(`stroke="%s" stroke-width="2" stroke-dasharray="%s"`, st.color, st.dash))
}

// Faded draws series i as Series does, but thin and pale: the same
// quantity where it is less sure, such as a prediction past the data behind it.
func (c *Chart) Faded(i int, pts []Point) {
	st := styleOf(i)
	c.polyline(pts, fmt.Sprintf(`stroke="%s" stroke-width="1.5" stroke-opacity="0.45" stroke-dasharray="%s"`, st.color, st.dash))
}

// Highlight draws a wide, pale line through pts under the series, to pick
// out a path across them such as the best of several at each x.
func (c *Chart) Highlight(pts []Point) {
	c.polyline(pts, `stroke="#111" stroke-width="7" stroke-opacity="0.25" stroke-linejoin="round"`)
}

func (c *Chart) polyline(pts []Point, attrs string) {
	if len(pts) < 2 {
		return
	}
	c.b.WriteString(`<polyline fill="none" ` + attrs + ` points="`)
	for i, p := range pts {
		if i > 0 {
			c.b.WriteByte(' ')
		}
		fmt.Fprintf(&c.b, "%.1f,%.1f", c.x.At(p.X), c.y.At(p.Y))
	}
	c.b.WriteString("\"/>\n")
}

// Band shades, in series i's colour, the area between upper and lower, an
// uncertainty band: upper left to right, then lower back. Both run over the
// same x; fewer than two points of upper shade nothing.
func (c *Chart) Band(i int, upper, lower []Point) {
	if len(upper) < 2 {
		return
	}
	c.b.WriteString(`<path fill="` + styleOf(i).color + `" fill-opacity="0.10" stroke="none" d="`)
	for j, p := range upper {
		cmd := "L"
		if j == 0 {
			cmd = "M"
		}
		fmt.Fprintf(&c.b, "%s%.1f %.1f", cmd, c.x.At(p.X), c.y.At(p.Y))
	}
	for j := len(lower) - 1; j >= 0; j-- {
		fmt.Fprintf(&c.b, "L%.1f %.1f", c.x.At(lower[j].X), c.y.At(lower[j].Y))
	}
	c.b.WriteString("Z\"/>\n")
}

// Mark draws series i's marker at p, for a measured point as against a
// line through predictions.
func (c *Chart) Mark(i int, p Point) {
	st := styleOf(i)
	marker(&c.b, st.marker, c.x.At(p.X), c.y.At(p.Y), st.color)
}

// Level draws a solid line across the plot area at y, a reference such as zero.
func (c *Chart) Level(y float64) {
	b, py := c.box, c.y.At(y)
	fmt.Fprintf(&c.b, `<line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="#333"/>`+"\n", b.L, b.W-b.R, py, py)
}

// Rule draws a dashed line up the plot area at x with a short label, such as
// a number, in a circle at its top. Say what it means in the legend's Keys:
// longer words on the plot would cover the lines.
func (c *Chart) Rule(x float64, label string) {
	b, px := c.box, c.x.At(x)
	fmt.Fprintf(&c.b, `<line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="#555" stroke-dasharray="3 3"/>`, px, px, b.T, b.H-b.B)
	fmt.Fprintf(&c.b, `<circle cx="%.1f" cy="%.1f" r="8" fill="white" stroke="#555"/><text x="%.1f" y="%.1f" font-size="11" text-anchor="middle">%s</text>`+"\n",
		px, b.T+12, px, b.T+16, html.EscapeString(label))
}

// A Legend is what the right margin explains, top to bottom.
type Legend struct {
	Series    []string // names of series 0, 1, …, each beside its line and marker
	Highlight string   // name of the Highlight line; "" for none
	Notes     []string // small grey lines, such as what bands and markers show
	Keys      []Key    // what the Rules' labels mean
}

// A Key explains a Rule: a heading that starts with the rule's label, and
// a detail line under it.
type Key struct{ Head, Detail string }

// Legend writes l in the right margin.
func (c *Chart) Legend(l Legend) {
	x, y := c.box.W-c.box.R+14, c.box.T+16
	for i, name := range l.Series {
		st := styleOf(i)
		fmt.Fprintf(&c.b, `<line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="%s" stroke-width="2" stroke-dasharray="%s"/>`, x, x+26, y, y, st.color, st.dash)
		marker(&c.b, st.marker, x+13, y, st.color)
		fmt.Fprintf(&c.b, `<text x="%.1f" y="%.1f">%s</text>`+"\n", x+32, y+4, html.EscapeString(name))
		y += 20
	}
	if l.Highlight != "" {
		fmt.Fprintf(&c.b, `<line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="#111" stroke-width="5" stroke-opacity="0.25"/><text x="%.1f" y="%.1f">%s</text>`+"\n",
			x, x+26, y, y, x+32, y+4, html.EscapeString(l.Highlight))
		y += 20
	}
	for _, n := range l.Notes {
		fmt.Fprintf(&c.b, `<text x="%.1f" y="%.1f" font-size="11" fill="#444">%s</text>`+"\n", x, y, html.EscapeString(n))
		y += 15
	}
	if len(l.Notes) > 0 {
		y += 10
	}
	for _, k := range l.Keys {
		fmt.Fprintf(&c.b, `<text x="%.1f" y="%.1f" font-size="11">%s</text><text x="%.1f" y="%.1f" font-size="11" fill="#444">%s</text>`+"\n",
			x, y, html.EscapeString(k.Head), x, y+14, html.EscapeString(k.Detail))
		y += 34
	}
}

// Marker shapes, one per style.
const (
	circle = iota
	square
	triangle
	diamond
)

// Series styles differ in dash and marker as well as colour, so the charts
// read in grey print. Series past the last style start again at the first.
var styles = [...]style{
	{"#1f5f99", "", circle},
	{"#c2561a", "7 4", square},
	{"#2b8a3e", "2 3", triangle},
	{"#7a3b8f", "10 3 2 3", diamond},
	{"#8c6d1f", "4 2", circle},
}

type style struct {
	color, dash string
	marker      int
}

func styleOf(series int) style {
	n := len(styles)
	return styles[(series%n+n)%n]
}

// marker draws a marker centred on pixel x, y, filled white so that it
// stands out on the line it sits on.
func marker(b *strings.Builder, kind int, x, y float64, color string) {
	switch kind {
	case square:
		fmt.Fprintf(b, `<rect x="%.1f" y="%.1f" width="7" height="7" fill="white" stroke="%s" stroke-width="1.5"/>`, x-3.5, y-3.5, color)
	case triangle:
		fmt.Fprintf(b, `<path d="M%.1f %.1fl4 7h-8z" fill="white" stroke="%s" stroke-width="1.5"/>`, x, y-4.5, color)
	case diamond:
		fmt.Fprintf(b, `<path d="M%.1f %.1fl4 4.5-4 4.5-4-4.5z" fill="white" stroke="%s" stroke-width="1.5"/>`, x, y-4.5, color)
	default:
		fmt.Fprintf(b, `<circle cx="%.1f" cy="%.1f" r="3.8" fill="white" stroke="%s" stroke-width="1.5"/>`, x, y, color)
	}
	b.WriteByte('\n')
}
