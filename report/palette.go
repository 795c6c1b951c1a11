package report

import (
	"image/color"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// The series palette. Colours are the eight of Okabe & Ito (2008), "Color
// Universal Design (CUD): how to make figures and presentations that are
// friendly to colorblind people", J*Fly (sRGB values from memory; the
// palette is common practice in scientific figures). The order is ours:
// the mid-tone colours first, because they read well as thin lines on
// white; black, which is best kept for reference marks, and yellow, which is
// faint on white, come last.
//
// Colour alone is not enough (greyscale printing, and the tritan pair
// sky blue / bluish green), so every series also has its own marker shape
// and its own dash pattern; figures_test.go checks the colours under
// simulated colour-vision deficiencies and the shapes and dashes for series
// whose grey levels are alike.
func seriesColours() []color.RGBA {
	return []color.RGBA{
		{R: 0x00, G: 0x72, B: 0xB2, A: 0xFF}, // blue
		{R: 0xD5, G: 0x5E, B: 0x00, A: 0xFF}, // vermillion
		{R: 0x00, G: 0x9E, B: 0x73, A: 0xFF}, // bluish green
		{R: 0xCC, G: 0x79, B: 0xA7, A: 0xFF}, // reddish purple
		{R: 0xE6, G: 0x9F, B: 0x00, A: 0xFF}, // orange
		{R: 0x56, G: 0xB4, B: 0xE9, A: 0xFF}, // sky blue
		{R: 0x00, G: 0x00, B: 0x00, A: 0xFF}, // black
		{R: 0xF0, G: 0xE4, B: 0x42, A: 0xFF}, // yellow
	}
}

// seriesColourNames names seriesColours, for test messages and captions.
func seriesColourNames() []string {
	return []string{"blue", "vermillion", "bluish green", "reddish purple", "orange", "sky blue", "black", "yellow"}
}

// seriesMarkers are the marker shapes, filled and open shapes alternating so
// that neighbours in the order differ in both outline and fill.
type namedMarker struct {
	name  string
	shape draw.GlyphDrawer
}

func seriesMarkers() []namedMarker {
	return []namedMarker{
		{"filled circle", draw.CircleGlyph{}},
		{"open triangle", draw.TriangleGlyph{}},
		{"filled square", draw.BoxGlyph{}},
		{"cross", draw.CrossGlyph{}},
		{"filled triangle", draw.PyramidGlyph{}},
		{"open circle", draw.RingGlyph{}},
		{"plus", draw.PlusGlyph{}},
		{"open square", draw.SquareGlyph{}},
	}
}

// seriesDashes are the dash patterns (on, off, ... in points); nil is solid.
type namedDashes struct {
	name    string
	pattern []vg.Length
}

func seriesDashes() []namedDashes {
	return []namedDashes{
		{"solid", nil},
		{"dashed", []vg.Length{vg.Points(6), vg.Points(3)}},
		{"dotted", []vg.Length{vg.Points(1.5), vg.Points(2.5)}},
		{"dash-dot", []vg.Length{vg.Points(7), vg.Points(3), vg.Points(1.5), vg.Points(3)}},
		{"long dash", []vg.Length{vg.Points(12), vg.Points(4)}},
		{"dash-dot-dot", []vg.Length{vg.Points(7), vg.Points(2.5), vg.Points(1.5), vg.Points(2.5), vg.Points(1.5), vg.Points(2.5)}},
		{"short dash", []vg.Length{vg.Points(3), vg.Points(2)}},
		{"long-short", []vg.Length{vg.Points(12), vg.Points(3), vg.Points(4), vg.Points(3)}},
	}
}

// seriesStyle is how one series is drawn.
type seriesStyle struct {
	colour     color.RGBA
	colourName string
	marker     draw.GlyphDrawer
	markerName string
	dashes     []vg.Length
	dashName   string
}

// styleOf returns the style of series i. The first eight series differ in
// colour, marker and dash; past eight, colours repeat but the combination
// of colour, marker and dash stays distinct up to 64 series.
func styleOf(i int) seriesStyle {
	if i < 0 {
		i = 0
	}
	colours, names, markers, dashes := seriesColours(), seriesColourNames(), seriesMarkers(), seriesDashes()
	n := len(colours)
	c := i % n
	m := (i + i/n) % len(markers)
	d := (i + 2*(i/n)) % len(dashes)
	return seriesStyle{
		colour:     colours[c],
		colourName: names[c],
		marker:     markers[m].shape,
		markerName: markers[m].name,
		dashes:     dashes[d].pattern,
		dashName:   dashes[d].name,
	}
}

// line returns the series' line style at the given width.
func (s seriesStyle) line(width vg.Length) draw.LineStyle {
	return draw.LineStyle{Color: s.colour, Width: width, Dashes: s.dashes}
}

// solidLine returns a solid line in the series' colour.
func (s seriesStyle) solidLine(width vg.Length) draw.LineStyle {
	return draw.LineStyle{Color: s.colour, Width: width}
}

// glyph returns the series' marker at the given radius.
func (s seriesStyle) glyph(radius vg.Length) draw.GlyphStyle {
	return draw.GlyphStyle{Color: s.colour, Radius: radius, Shape: s.marker}
}

// translucent returns the series' colour at the given opacity (0–1), as a
// premultiplied colour, for bands.
func (s seriesStyle) translucent(alpha float64) color.RGBA {
	a := uint8(alpha*255 + 0.5)
	scale := func(v uint8) uint8 { return uint8(float64(v)*alpha + 0.5) }
	return color.RGBA{R: scale(s.colour.R), G: scale(s.colour.G), B: scale(s.colour.B), A: a}
}
