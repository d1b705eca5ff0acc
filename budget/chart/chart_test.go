package chart

import (
	"strconv"
	"strings"
	"testing"
)

var testBox = Box{W: 400, H: 200, L: 40, R: 100, T: 20, B: 30}

func testChart() *Chart {
	return New(testBox, "a & b",
		Axis{Scale: Log10(1e17, 1e19), Title: "x <flops>"},
		Axis{Scale: Linear(0, 1), Title: "y", Tick: func(v float64) string { return strconv.FormatFloat(v, 'f', 2, 64) }})
}

func TestNewFrame(t *testing.T) {
	s := string(testChart().SVG())
	for _, want := range []string{
		`<svg xmlns="http://www.w3.org/2000/svg" width="400" height="200" viewBox="0 0 400 200"`,
		`font-weight="bold">a &amp; b</text>`,
		// y ticks every 0.2 from the plot's bottom (170) to its top (20), labelled by the Tick func
		`<line x1="40.0" x2="300.0" y1="170.0" y2="170.0" stroke="#ddd"/><text x="34.0" y="174.0" text-anchor="end">0.00</text>`,
		`<line x1="40.0" x2="300.0" y1="20.0" y2="20.0" stroke="#ddd"/><text x="34.0" y="24.0" text-anchor="end">1.00</text>`,
		// x ticks at the decades, labelled 1eN by default
		`<line x1="40.0" x2="40.0" y1="20.0" y2="170.0" stroke="#ddd"/><text x="40.0" y="186.0" text-anchor="middle">1e17</text>`,
		`<text x="170.0" y="186.0" text-anchor="middle">1e18</text>`,
		`<rect x="40.0" y="20.0" width="260.0" height="150.0" fill="none" stroke="#333"/>`,
		`<text x="170.0" y="192.0" text-anchor="middle">x &lt;flops&gt;</text>`,
		`<text transform="translate(16 95.0) rotate(-90)" text-anchor="middle">y</text>`,
	} {
		if !strings.Contains(s, want) {
			t.Errorf("frame lacks %s\n%s", want, s)
		}
	}
	if !strings.HasSuffix(s, "</svg>\n") || strings.Count(s, "</svg>") != 1 {
		t.Errorf("not one closed document:\n%s", s)
	}
}

func TestDefaultLinearLabels(t *testing.T) {
	c := New(testBox, "", Axis{Scale: Linear(0, 3)}, Axis{Scale: Linear(0, 1)})
	s := string(c.SVG())
	for _, want := range []string{">0.5</text>", ">2.5</text>", ">0.2</text>"} {
		if !strings.Contains(s, want) {
			t.Errorf("default labels lack %s\n%s", want, s)
		}
	}
}

func TestDrawing(t *testing.T) {
	pts := []Point{{1e17, 0}, {1e18, 0.5}, {1e19, 1}}
	one := pts[:1]
	tests := []struct {
		name string
		draw func(c *Chart)
		want string // "" when nothing is drawn
	}{
		{"series", func(c *Chart) { c.Series(1, pts) },
			`<polyline fill="none" stroke="#c2561a" stroke-width="2" stroke-dasharray="7 4" points="40.0,170.0 170.0,95.0 300.0,20.0"/>` + "\n"},
		{"series of one point", func(c *Chart) { c.Series(0, one) }, ""},
		{"styles start again", func(c *Chart) { c.Series(6, pts[:2]) },
			`<polyline fill="none" stroke="#c2561a" stroke-width="2" stroke-dasharray="7 4" points="40.0,170.0 170.0,95.0"/>` + "\n"},
		{"highlight", func(c *Chart) { c.Highlight(pts[1:]) },
			`<polyline fill="none" stroke="#111" stroke-width="7" stroke-opacity="0.25" stroke-linejoin="round" points="170.0,95.0 300.0,20.0"/>` + "\n"},
		{"band", func(c *Chart) { c.Band(2, pts[1:], []Point{{1e18, 0}, {1e19, 0.2}}) },
			`<path fill="#2b8a3e" fill-opacity="0.10" stroke="none" d="M170.0 95.0L300.0 20.0L300.0 140.0L170.0 170.0Z"/>` + "\n"},
		{"band of one point", func(c *Chart) { c.Band(0, one, one) }, ""},
		{"circle", func(c *Chart) { c.Mark(0, pts[1]) },
			`<circle cx="170.0" cy="95.0" r="3.8" fill="white" stroke="#1f5f99" stroke-width="1.5"/>` + "\n"},
		{"square", func(c *Chart) { c.Mark(1, pts[1]) },
			`<rect x="166.5" y="91.5" width="7" height="7" fill="white" stroke="#c2561a" stroke-width="1.5"/>` + "\n"},
		{"triangle", func(c *Chart) { c.Mark(2, pts[1]) },
			`<path d="M170.0 90.5l4 7h-8z" fill="white" stroke="#2b8a3e" stroke-width="1.5"/>` + "\n"},
		{"diamond", func(c *Chart) { c.Mark(3, pts[1]) },
			`<path d="M170.0 90.5l4 4.5-4 4.5-4-4.5z" fill="white" stroke="#7a3b8f" stroke-width="1.5"/>` + "\n"},
		{"level", func(c *Chart) { c.Level(0.5) },
			`<line x1="40.0" x2="300.0" y1="95.0" y2="95.0" stroke="#333"/>` + "\n"},
		{"rule", func(c *Chart) { c.Rule(1e18, "<1>") },
			`<line x1="170.0" x2="170.0" y1="20.0" y2="170.0" stroke="#555" stroke-dasharray="3 3"/><circle cx="170.0" cy="32.0" r="8" fill="white" stroke="#555"/><text x="170.0" y="36.0" font-size="11" text-anchor="middle">&lt;1&gt;</text>` + "\n"},
	}
	frame := string(testChart().SVG())
	frame = strings.TrimSuffix(frame, "</svg>\n")
	for _, tt := range tests {
		c := testChart()
		tt.draw(c)
		got := strings.TrimSuffix(strings.TrimPrefix(string(c.SVG()), frame), "</svg>\n")
		if got != tt.want {
			t.Errorf("%s:\n got %q\nwant %q", tt.name, got, tt.want)
		}
	}
}

func TestLegend(t *testing.T) {
	c := testChart()
	c.Legend(Legend{Series: []string{"a", "b&c"}, Highlight: "best", Notes: []string{"n1", "n2"},
		Keys: []Key{{"1: a → b", "   at 2"}}})
	s := string(c.SVG())
	// Entries go down the right margin from 16 below the plot's top, 20 apart;
	// notes 15 apart; keys after a gap of 10.
	for _, want := range []string{
		`<line x1="314.0" x2="340.0" y1="36.0" y2="36.0" stroke="#1f5f99" stroke-width="2" stroke-dasharray=""/><circle cx="327.0" cy="36.0"`,
		`<text x="346.0" y="40.0">a</text>`,
		`<text x="346.0" y="60.0">b&amp;c</text>`,
		`<line x1="314.0" x2="340.0" y1="76.0" y2="76.0" stroke="#111" stroke-width="5" stroke-opacity="0.25"/><text x="346.0" y="80.0">best</text>`,
		`<text x="314.0" y="96.0" font-size="11" fill="#444">n1</text>`,
		`<text x="314.0" y="111.0" font-size="11" fill="#444">n2</text>`,
		`<text x="314.0" y="136.0" font-size="11">1: a → b</text><text x="314.0" y="150.0" font-size="11" fill="#444">   at 2</text>`,
	} {
		if !strings.Contains(s, want) {
			t.Errorf("legend lacks %s\n%s", want, s)
		}
	}
}

func TestLogCountLabels(t *testing.T) {
	s := string(New(testBox, "", Axis{Scale: Linear(0, 1)}, Axis{Scale: LogCount(2e6)}).SVG())
	for _, want := range []string{">0</text>", ">1</text>", ">1000</text>", ">1000000</text>"} {
		if !strings.Contains(s, want) {
			t.Errorf("log-count labels lack %s\n%s", want, s)
		}
	}
}
