package results

import (
	"bytes"
	"errors"
	"fmt"
	"image/color"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"
)

// Figure is one rendered figure.
type Figure struct {
	// Name is the file-name stem: "bias-curves", "efficiency-vs-tuning",
	// "psi-functions", "iterations", "failures", "coverage" or
	// "efficiency-curve".
	Name string
	// Title says the scenario, and the cell where the figure shows one.
	Title string
	// Caption says in a sentence or two what is drawn and what the bands
	// and bars are.
	Caption string
	// SVG and PNG are the rendered figure.
	SVG []byte
	PNG []byte // PNG image, figurePixelsX × figurePixelsY pixels on a white background
}

// Figure geometry: every figure is figureWidth × figureHeight, and its PNG
// is rendered at figureDPI, so it is figurePixelsX × figurePixelsY pixels.
const (
	figureWidth  = 7 * vg.Inch
	figureHeight = 4.5 * vg.Inch
	figureDPI    = 120
	// figurePixelsX and figurePixelsY are the PNG's size.
	figurePixelsX = 840
	figurePixelsY = 540
)

// Line widths and marker radius.
const (
	seriesLineWidth = 1.6
	markerRadius    = 3
)

// sansFace returns the typeface of every figure text (Liberation Sans, shipped
// with gonum/plot, so no system font is needed).
func sansFace() font.Font { return font.Font{Typeface: "Liberation", Variant: "Sans"} }

// isFailure reports whether fits that ended with s failed.
func isFailure(s StatusCount) bool { return !s.Converged }

// Figures renders every figure that r's contents support, in a fixed order:
// bias-curves, efficiency-vs-tuning, psi-functions, iterations, failures,
// coverage. A figure whose data r lacks is skipped, so the result may be
// empty.
func Figures(r *Results) ([]Figure, error) {
	if r == nil {
		return nil, errors.New("figures: no results")
	}
	fc := newFigureContext(r)
	builders := []struct {
		name  string
		build func() (*figureSpec, error)
	}{
		{"bias-curves", fc.biasCurves},
		{"efficiency-vs-tuning", fc.efficiencyVsTuning},
		{"psi-functions", fc.psiFunctions},
		{"iterations", fc.iterations},
		{"failures", fc.failures},
		{"coverage", fc.coverage},
	}
	var figs []Figure
	for _, b := range builders {
		spec, err := b.build()
		if err != nil {
			return nil, fmt.Errorf("figure %s: %w", b.name, err)
		}
		if spec == nil {
			continue
		}
		spec.name = b.name
		f, err := spec.figure()
		if err != nil {
			return nil, fmt.Errorf("figure %s: %w", b.name, err)
		}
		figs = append(figs, f)
	}
	return figs, nil
}

// EfficiencyCurveFigure renders an asymptotic efficiency curve against a
// tuning constant (for `rhomark tune --sweep`): efficiency[i] at
// constants[i]. When ges has finite values, a second panel beside it shows
// the gross-error sensitivity at the same constants. Points whose values are not
// finite are left out; at least two must remain. The figure is named
// "efficiency-curve".
func EfficiencyCurveFigure(title, constantName string, constants, efficiency, ges []float64) (Figure, error) {
	if len(constants) != len(efficiency) {
		return Figure{}, fmt.Errorf("efficiency curve: %d constants but %d efficiencies", len(constants), len(efficiency))
	}
	if ges != nil && len(ges) != len(constants) {
		return Figure{}, fmt.Errorf("efficiency curve: %d constants but %d gross-error sensitivities", len(constants), len(ges))
	}
	if constantName == "" {
		constantName = "tuning constant"
	}
	eff := finiteXYs(constants, efficiency)
	if len(eff) < 2 {
		return Figure{}, errors.New("efficiency curve: fewer than two finite points")
	}
	st := styleOf(0)
	left := newPlot()
	left.X.Label.Text = constantName
	left.Y.Label.Text = "asymptotic efficiency at the normal model"
	if err := addCurve(left, eff, st, st.line(seriesLineWidth), len(eff)/8+1, 0); err != nil {
		return Figure{}, err
	}
	caption := fmt.Sprintf("Asymptotic efficiency at the normal model (relative to least squares) against %s, from %s to %s.",
		constantName, fmtG(eff[0].X), fmtG(eff[len(eff)-1].X))
	panels := [][]*plot.Plot{{left}}
	var g plotter.XYs
	if ges != nil {
		g = finiteXYs(constants, ges)
	}
	if len(g) >= 2 {
		right := newPlot()
		right.X.Label.Text = constantName
		right.Y.Label.Text = "gross-error sensitivity (units of σ)"
		st2 := styleOf(1)
		if err := addCurve(right, g, st2, st2.line(seriesLineWidth), len(g)/8+1, 0); err != nil {
			return Figure{}, err
		}
		alignX(left, right)
		panels = [][]*plot.Plot{{left, right}}
		caption += " Right panel: gross-error sensitivity, the largest influence one observation can have, in units of the scale σ; where it is infinite no point is drawn."
	}
	spec := &figureSpec{name: "efficiency-curve", title: title, caption: caption, panels: panels}
	return spec.figure()
}

// SaveFigures writes NAME-<fig.Name>.svg and NAME-<fig.Name>.png into dir
// for each figure, each atomically (see WriteFileAtomic), creating dir if
// needed, and returns the paths written.
func SaveFigures(dir, name string, figs []Figure) ([]string, error) {
	base, err := SafeName(name)
	if err != nil {
		return nil, err
	}
	for _, f := range figs {
		if _, err := SafeName(f.Name); err != nil {
			return nil, fmt.Errorf("figure name %q cannot be used in a file name", f.Name)
		}
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("cannot create output directory: %w", err)
	}
	var paths []string
	for _, f := range figs {
		for _, out := range []struct {
			ext  string
			data []byte
		}{{".svg", f.SVG}, {".png", f.PNG}} {
			if len(out.data) == 0 {
				return paths, fmt.Errorf("figure %s has no %s rendering", f.Name, out.ext)
			}
			p := filepath.Join(dir, base+"-"+f.Name+out.ext)
			if err := WriteFileAtomic(p, out.data); err != nil {
				return paths, err
			}
			paths = append(paths, p)
		}
	}
	return paths, nil
}

// figureContext holds what the figure builders share: the results and a
// stable series index per estimator label, so an estimator keeps its colour,
// marker and dash across every figure of a run.
type figureContext struct {
	r      *Results
	series map[string]int
}

func newFigureContext(r *Results) *figureContext {
	fc := &figureContext{r: r, series: map[string]int{}}
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			fc.index(e.Label)
		}
	}
	return fc
}

// index returns the series index of an estimator label, adding it if new.
func (fc *figureContext) index(label string) int {
	if i, ok := fc.series[label]; ok {
		return i
	}
	i := len(fc.series)
	fc.series[label] = i
	return i
}

func (fc *figureContext) style(label string) seriesStyle { return styleOf(fc.index(label)) }

// sweep is one swept path and its values in order of first appearance.
type sweep struct {
	path   string
	values []string
}

// sweepsOf lists r's swept paths (in the order the cells give them) with
// their values.
func sweepsOf(r *Results) []sweep {
	var out []sweep
	at := map[string]int{}
	for _, c := range r.Cells {
		for _, s := range c.Settings {
			i, ok := at[s.Path]
			if !ok {
				i = len(out)
				at[s.Path] = i
				out = append(out, sweep{path: s.Path})
			}
			if !slices.Contains(out[i].values, s.Value) {
				out[i].values = append(out[i].values, s.Value)
			}
		}
	}
	return out
}

// settingValue returns the value of path in a cell's settings.
func settingValue(settings []Setting, path string) (string, bool) {
	for _, s := range settings {
		if s.Path == path {
			return s.Value, true
		}
	}
	return "", false
}

// settingsText renders settings as "a = 1, b = 2".
func settingsText(settings []Setting) string {
	parts := make([]string, len(settings))
	for i, s := range settings {
		parts[i] = s.Path + " = " + s.Value
	}
	return strings.Join(parts, ", ")
}

// cellNumber names a cell by its index, the number every command takes
// (run --cell, replay --cell) and every file records: "cell 2 (cells 0–3)".
func cellNumber(r *Results, c Cell) string {
	return fmt.Sprintf("cell %d (cells 0–%d)", c.Index, len(r.Cells)-1)
}

// cellName names a cell for titles: "cell 2 (cells 0–3): a = 1, b = 2".
func cellName(r *Results, c Cell) string {
	s := cellNumber(r, c)
	if len(c.Settings) > 0 {
		s += ": " + settingsText(c.Settings)
	}
	return s
}

// parseSettingNumber reads the number a swept value holds; for a list value
// such as "[1.5, 2]" the first element.
func parseSettingNumber(v string) (float64, bool) {
	v = strings.TrimSpace(v)
	if f, err := strconv.ParseFloat(v, 64); err == nil {
		return f, true
	}
	v = strings.TrimLeft(v, "[ ")
	if i := strings.IndexAny(v, ", ]"); i >= 0 {
		v = v[:i]
	}
	f, err := strconv.ParseFloat(v, 64)
	return f, err == nil
}

// firstSlope returns the first coefficient that is not the intercept.
func firstSlope(e Estimator) (Coefficient, bool) {
	for _, k := range e.Coefficients {
		if k.Name != "intercept" {
			return k, true
		}
	}
	return Coefficient{}, false
}

// finite reports whether every value is a finite number.
func finite(vs ...float64) bool {
	for _, v := range vs {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}

// finiteXYs pairs xs and ys, leaving out pairs that are not finite.
func finiteXYs[X, Y ~float64](xs []X, ys []Y) plotter.XYs {
	var out plotter.XYs
	for i := range xs {
		if i < len(ys) && finite(float64(xs[i]), float64(ys[i])) {
			out = append(out, plotter.XY{X: float64(xs[i]), Y: float64(ys[i])})
		}
	}
	return out
}

func fmtG(v float64) string { return strconv.FormatFloat(v, 'g', 4, 64) }

// ---------------------------------------------------------------------------
// Building plots.

// newPlot returns a plot with the house fonts and a light grid.
func newPlot() *plot.Plot { return newPlotGrid(true) }

// newPlotGrid returns a plot with the house fonts and a light grid, with
// or without its vertical lines (a nominal x axis has none).
func newPlotGrid(vertical bool) *plot.Plot {
	p := plot.New()
	p.Title.TextStyle.Font = font.From(sansFace(), 10)
	p.X.Label.TextStyle.Font = font.From(sansFace(), 10)
	p.Y.Label.TextStyle.Font = font.From(sansFace(), 10)
	p.X.Tick.Label.Font = font.From(sansFace(), 8.5)
	p.Y.Tick.Label.Font = font.From(sansFace(), 8.5)
	p.Legend.TextStyle.Font = font.From(sansFace(), 8.5)
	grid := plotter.NewGrid()
	grid.Vertical.Color = color.Gray{Y: 225}
	grid.Horizontal.Color = color.Gray{Y: 225}
	grid.Vertical.Width = vg.Points(0.5)
	grid.Horizontal.Width = vg.Points(0.5)
	if !vertical {
		grid.Vertical.Color = nil
	}
	p.Add(grid)
	return p
}

// newLegend returns an empty legend in the house style, drawn in its own
// column to the right of the panels.
func newLegend() *plot.Legend {
	l := plot.NewLegend()
	l.TextStyle.Font = font.From(sansFace(), 8.5)
	l.Top = true
	l.Left = true
	l.ThumbnailWidth = vg.Points(30)
	l.Padding = vg.Points(3)
	return &l
}

// addCurve adds a line through xys in the given line style with the
// series' marker on every `every`-th point starting at `offset` (on none if
// every ≤ 0); it does not touch the legend.
func addCurve(p *plot.Plot, xys plotter.XYs, st seriesStyle, ls draw.LineStyle, every, offset int) error {
	if len(xys) == 0 {
		return nil
	}
	l, err := plotter.NewLine(xys)
	if err != nil {
		return err
	}
	l.LineStyle = ls
	p.Add(l)
	var marks plotter.XYs
	if every > 0 {
		marks = sparse(xys, every, offset)
	}
	if len(marks) > 0 {
		s, err := plotter.NewScatter(marks)
		if err != nil {
			return err
		}
		s.GlyphStyle = st.glyph(markerRadius)
		p.Add(s)
	}
	return nil
}

// sparse returns every `every`-th point of xys from offset (all if every = 1).
func sparse(xys plotter.XYs, every, offset int) plotter.XYs {
	if every <= 1 {
		return slices.Clone(xys)
	}
	var out plotter.XYs
	for i := offset % every; i < len(xys); i += every {
		out = append(out, xys[i])
	}
	return out
}

// addBand adds a translucent band between lo and hi (same x values).
func addBand(p *plot.Plot, xs, lo, hi []float64, st seriesStyle) error {
	if len(xs) < 2 {
		return nil
	}
	ring := make(plotter.XYs, 0, 2*len(xs))
	for i := range xs {
		ring = append(ring, plotter.XY{X: xs[i], Y: hi[i]})
	}
	for i := len(xs) - 1; i >= 0; i-- {
		ring = append(ring, plotter.XY{X: xs[i], Y: lo[i]})
	}
	poly, err := plotter.NewPolygon(ring)
	if err != nil {
		return err
	}
	poly.Color = st.translucent(0.18)
	poly.LineStyle.Width = 0
	p.Add(poly)
	return nil
}

// addPoints adds markers at xys with vertical bars from y−lo to y+hi.
func addPoints(p *plot.Plot, xys plotter.XYs, lo, hi []float64, st seriesStyle) error {
	if len(xys) == 0 {
		return nil
	}
	errs := make(plotter.YErrors, len(xys))
	for i := range xys {
		errs[i].Low, errs[i].High = lo[i], hi[i]
	}
	bars := &plotter.YErrorBars{XYs: slices.Clone(xys), YErrors: errs, LineStyle: st.solidLine(1.1), CapWidth: vg.Points(5)}
	p.Add(bars)
	s, err := plotter.NewScatter(xys)
	if err != nil {
		return err
	}
	s.GlyphStyle = st.glyph(markerRadius + 0.5)
	p.Add(s)
	return nil
}

// addHLine adds a horizontal reference line across [x0, x1].
func addHLine(p *plot.Plot, y, x0, x1 float64, ls draw.LineStyle) (*plotter.Line, error) {
	l, err := plotter.NewLine(plotter.XYs{{X: x0, Y: y}, {X: x1, Y: y}})
	if err != nil {
		return nil, err
	}
	l.LineStyle = ls
	p.Add(l)
	return l, nil
}

// referenceLine is the style of reference marks (nominal levels, thresholds).
func referenceLine() draw.LineStyle {
	return draw.LineStyle{Color: color.Gray{Y: 60}, Width: vg.Points(1), Dashes: []vg.Length{vg.Points(2), vg.Points(2)}}
}

// legendSeries adds a legend entry showing a series' line and marker.
func legendSeries(l *plot.Legend, name string, st seriesStyle, ls draw.LineStyle) {
	line := &plotter.Line{LineStyle: ls}
	mark := &plotter.Scatter{GlyphStyle: st.glyph(markerRadius)}
	l.Add(name, line, mark)
}

// legendMarker adds a legend entry showing a series' marker with a short
// vertical bar (for point-and-bar series).
func legendMarker(l *plot.Legend, name string, st seriesStyle) {
	mark := &plotter.Scatter{GlyphStyle: st.glyph(markerRadius + 0.5)}
	l.Add(name, mark)
}

// alignX gives two panels the same x range.
func alignX(ps ...*plot.Plot) {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, p := range ps {
		lo = math.Min(lo, p.X.Min)
		hi = math.Max(hi, p.X.Max)
	}
	for _, p := range ps {
		p.X.Min, p.X.Max = lo, hi
	}
}

// dodge returns the horizontal offset of series i of n around a nominal
// position, spreading them over 60% of the slot.
func dodge(i, n int) float64 {
	if n <= 1 {
		return 0
	}
	return -0.3 + 0.6*(float64(i)+0.5)/float64(n)
}

// ---------------------------------------------------------------------------
// Rendering.

// figureSpec is a figure before rendering: a grid of panels, an optional
// legend, a title and subtitle drawn above them, and the caption. The
// legend goes in the first empty (nil) tile of the grid if there is one,
// otherwise in a column to the right.
type figureSpec struct {
	name     string
	title    string
	subtitle string
	caption  string
	panels   [][]*plot.Plot
	legend   *plot.Legend
}

// fullTitle is the title and subtitle as one line of text.
func (s *figureSpec) fullTitle() string {
	if s.subtitle == "" {
		return s.title
	}
	return s.title + ", " + s.subtitle
}

// figure renders the spec to SVG and PNG.
func (s *figureSpec) figure() (f Figure, err error) {
	defer func() {
		// gonum/plot reports some impossible layouts by panicking; turn
		// them into errors so that a bad results file cannot crash a run.
		if v := recover(); v != nil {
			err = fmt.Errorf("drawing %s: %v", s.name, v)
		}
	}()
	sc := vgsvg.New(figureWidth, figureHeight)
	s.paint(draw.New(sc))
	var svg bytes.Buffer
	if _, err := sc.WriteTo(&svg); err != nil {
		return Figure{}, fmt.Errorf("writing SVG: %w", err)
	}
	ic := vgimg.NewWith(vgimg.UseWH(figureWidth, figureHeight), vgimg.UseDPI(figureDPI), vgimg.UseBackgroundColor(color.White))
	s.paint(draw.New(ic))
	var png bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: ic}).WriteTo(&png); err != nil {
		return Figure{}, fmt.Errorf("writing PNG: %w", err)
	}
	return Figure{Name: s.name, Title: s.fullTitle(), Caption: s.caption, SVG: svg.Bytes(), PNG: png.Bytes()}, nil
}

// paint draws the figure on c.
func (s *figureSpec) paint(c draw.Canvas) {
	c.FillPolygon(color.White, []vg.Point{c.Min, {X: c.Max.X, Y: c.Min.Y}, c.Max, {X: c.Min.X, Y: c.Max.Y}})
	pad := vg.Points(6)
	body := draw.Crop(c, pad, -pad, pad, -pad)
	y := body.Max.Y
	for i, t := range []string{s.title, s.subtitle} {
		if t == "" {
			continue
		}
		ts := draw.TextStyle{Color: color.Black, Font: font.From(sansFace(), 11.5), XAlign: draw.XCenter, YAlign: draw.YTop, Handler: plot.DefaultTextHandler}
		if i == 1 {
			ts.Color = color.Gray{Y: 70}
			ts.Font = font.From(sansFace(), 9)
		}
		if ts.Handler == nil {
			ts.Handler = text.Plain{Fonts: font.DefaultCache}
		}
		lh := ts.Height("Mg") * 1.15
		for _, ln := range wrapText(ts, t, body.Max.X-body.Min.X) {
			body.FillText(ts, vg.Point{X: (body.Min.X + body.Max.X) / 2, Y: y}, ln)
			y -= lh
		}
	}
	if y < body.Max.Y {
		body = draw.Crop(body, 0, 0, 0, -(body.Max.Y - y + vg.Points(6)))
	}
	legendTile := false
	for _, row := range s.panels {
		for _, p := range row {
			legendTile = legendTile || p == nil
		}
	}
	if s.legend != nil && !legendTile {
		w := legendWidth(s.legend, body.Max.X-body.Min.X)
		lc := draw.Crop(body, body.Max.X-body.Min.X-w, 0, 0, -vg.Points(8))
		s.legend.Draw(lc)
		body = draw.Crop(body, 0, -(w + vg.Points(4)), 0, 0)
	}
	rows := len(s.panels)
	if rows == 0 {
		return
	}
	cols := len(s.panels[0])
	if rows == 1 && cols == 1 {
		s.panels[0][0].Draw(body)
		return
	}
	t := draw.Tiles{Rows: rows, Cols: cols, PadX: vg.Points(14), PadY: vg.Points(10)}
	canvases := plot.Align(s.panels, t, body)
	legendDrawn := false
	for i := range s.panels {
		for j, p := range s.panels[i] {
			switch {
			case p != nil:
				p.Draw(canvases[i][j])
			case s.legend != nil && !legendDrawn:
				lc := draw.Crop(canvases[i][j], vg.Points(16), 0, 0, -vg.Points(16))
				s.legend.Draw(lc)
				legendDrawn = true
			}
		}
	}
}

// legendWidth is the width of the legend column: its widest entry, at most
// 40% of the figure.
func legendWidth(l *plot.Legend, avail vg.Length) vg.Length {
	r := l.Rectangle(draw.Canvas{Rectangle: vg.Rectangle{Max: vg.Point{X: avail, Y: avail}}})
	w := r.Max.X - r.Min.X + vg.Points(6)
	return min(w, avail*0.4)
}

// wrapText breaks s into lines no wider than width at spaces.
func wrapText(ts draw.TextStyle, s string, width vg.Length) []string {
	words := strings.Fields(s)
	var lines []string
	cur := ""
	for _, w := range words {
		try := w
		if cur != "" {
			try = cur + " " + w
		}
		if cur != "" && ts.Width(try) > width {
			lines = append(lines, cur)
			cur = w
			continue
		}
		cur = try
	}
	if cur != "" {
		lines = append(lines, cur)
	}
	return lines
}

// ---------------------------------------------------------------------------
// 1. Bias curves.

// biasSeries is one estimator's bias curve.
type biasSeries struct {
	label string
	x     []float64
	mean  []Measure
	worst []Measure // nil without worst-case positions
}

// biasCurves draws the slope-bias norm against the contamination fraction,
// from r.Breakdown when present and otherwise from the cells of the only
// swept *.fraction path.
func (fc *figureContext) biasCurves() (*figureSpec, error) {
	r := fc.r
	var (
		series   []*biasSeries
		byLabel  = map[string]*biasSeries{}
		fracPath string
		notes    []string
		worstOf  []string
		group    []Setting // the drawn group's other settings
	)
	get := func(label string) *biasSeries {
		s, ok := byLabel[label]
		if !ok {
			s = &biasSeries{label: label}
			byLabel[label] = s
			series = append(series, s)
		}
		return s
	}
	if bd := r.Breakdown; bd != nil && len(bd.Curve) > 0 {
		fracPath = bd.Fraction
		worstOf = bd.WorstOver
		key := func(pt BiasPoint) string {
			var parts []string
			for _, s := range pt.Settings {
				if s.Path != bd.Fraction {
					parts = append(parts, s.Path+"="+s.Value)
				}
			}
			return strings.Join(parts, "\x00")
		}
		first := key(bd.Curve[0])
		groups := map[string]bool{}
		for _, pt := range bd.Curve {
			groups[key(pt)] = true
		}
		for _, s := range bd.Curve[0].Settings {
			if s.Path != bd.Fraction {
				group = append(group, s)
			}
		}
		for _, pt := range bd.Curve {
			if key(pt) != first {
				continue
			}
			s := get(pt.Estimator)
			s.x = append(s.x, pt.Fraction)
			s.mean = append(s.mean, pt.Bias)
			if len(worstOf) > 0 {
				s.worst = append(s.worst, pt.Worst)
			}
		}
		if len(groups) > 1 {
			notes = append(notes, fmt.Sprintf("Only the first of %d groups of the other sweeps is drawn (%s).", len(groups), settingsText(group)))
		}
	} else {
		sw := sweepsOf(r)
		var others []sweep
		for _, s := range sw {
			if strings.HasSuffix(s.path, ".fraction") {
				if fracPath != "" {
					return nil, nil // more than one swept fraction: no single curve
				}
				fracPath = s.path
			} else {
				others = append(others, s)
			}
		}
		if fracPath == "" || len(r.Cells) == 0 {
			return nil, nil
		}
		for _, o := range others {
			v, _ := settingValue(r.Cells[0].Settings, o.path)
			group = append(group, Setting{Path: o.path, Value: v})
		}
		for _, c := range r.Cells {
			if !hasSettings(c, group) {
				continue
			}
			fv, _ := settingValue(c.Settings, fracPath)
			x, ok := parseSettingNumber(fv)
			if !ok {
				continue
			}
			for _, e := range c.Estimators {
				s := get(e.Label)
				s.x = append(s.x, x)
				s.mean = append(s.mean, e.SlopeBias)
			}
		}
		if len(group) > 0 {
			notes = append(notes, fmt.Sprintf("Other sweeps are held at their first values (%s); cells at other values are not drawn.", settingsText(group)))
		}
	}
	// Keep series with at least two finite points.
	p := newPlot()
	leg := newLegend()
	drawn := 0
	xmin, xmax := math.Inf(1), math.Inf(-1)
	for _, s := range series {
		idx := make([]int, len(s.x))
		for i := range idx {
			idx[i] = i
		}
		slices.SortStableFunc(idx, func(a, b int) int {
			switch {
			case s.x[a] < s.x[b]:
				return -1
			case s.x[a] > s.x[b]:
				return 1
			}
			return 0
		})
		var xs, lo, hi []float64
		var mid plotter.XYs
		var worst plotter.XYs
		for _, i := range idx {
			v, e := float64(s.mean[i].Value), float64(s.mean[i].MCSE)
			if !finite(s.x[i], v) {
				continue
			}
			if !finite(e) {
				e = 0
			}
			xs = append(xs, s.x[i])
			// A norm is not negative; the band is cut at 0.
			lo = append(lo, math.Max(0, v-2*e))
			hi = append(hi, v+2*e)
			mid = append(mid, plotter.XY{X: s.x[i], Y: v})
			if s.worst != nil && finite(float64(s.worst[i].Value)) {
				worst = append(worst, plotter.XY{X: s.x[i], Y: float64(s.worst[i].Value)})
			}
		}
		if len(mid) < 2 {
			continue
		}
		st := fc.style(s.label)
		if err := addBand(p, xs, lo, hi, st); err != nil {
			return nil, err
		}
		ls := st.line(seriesLineWidth)
		if len(worstOf) > 0 {
			// Dash carries mean versus worst here; series differ by colour
			// and marker.
			ls = st.solidLine(seriesLineWidth)
		}
		if err := addCurve(p, mid, st, ls, 1, 0); err != nil {
			return nil, err
		}
		if len(worst) >= 2 {
			wl := st.solidLine(seriesLineWidth)
			wl.Dashes = []vg.Length{vg.Points(6), vg.Points(3)}
			if err := addCurve(p, worst, st, wl, 1, 0); err != nil {
				return nil, err
			}
		}
		legendSeries(leg, s.label, st, ls)
		xmin, xmax = math.Min(xmin, xs[0]), math.Max(xmax, xs[len(xs)-1])
		drawn++
	}
	if drawn == 0 {
		return nil, nil
	}
	caption := "Norm of the bias of the slopes against the contamination fraction, one line per estimator; the band is ±2 MCSE (cut at 0)."
	if len(worstOf) > 0 {
		grey := seriesStyle{colour: color.RGBA{R: 90, G: 90, B: 90, A: 255}, marker: draw.CircleGlyph{}}
		solid := grey.solidLine(seriesLineWidth)
		dashed := grey.solidLine(seriesLineWidth)
		dashed.Dashes = []vg.Length{vg.Points(6), vg.Points(3)}
		leg.Add("mean over positions", &plotter.Line{LineStyle: solid})
		leg.Add("worst case", &plotter.Line{LineStyle: dashed})
		caption = fmt.Sprintf("Norm of the bias of the slopes against the contamination fraction, one colour and marker per estimator. Solid: mean over the swept positions (%s), with a band of ±2 MCSE (cut at 0); dashed: the worst case over them (no band).",
			strings.Join(worstOf, ", "))
	}
	if bd := r.Breakdown; bd != nil && bd.Threshold > 0 {
		l, err := addHLine(p, bd.Threshold, xmin, xmax, referenceLine())
		if err != nil {
			return nil, err
		}
		leg.Add(fmt.Sprintf("breakdown threshold %s", fmtG(bd.Threshold)), l)
		caption += fmt.Sprintf(" The dotted line is the breakdown threshold, %s.", fmtG(bd.Threshold))
	}
	if len(notes) > 0 {
		caption += " " + strings.Join(notes, " ")
	}
	p.X.Label.Text = "nominal contamination fraction (" + fracPath + ")"
	p.Y.Label.Text = "slope-bias norm (units of the slopes)"
	p.Y.Min = math.Min(p.Y.Min, 0)
	subtitle := ""
	if len(group) > 0 {
		subtitle = "cells with " + settingsText(group)
	}
	return &figureSpec{title: r.Scenario.Name + ": slope bias against contamination", subtitle: subtitle, caption: caption, panels: [][]*plot.Plot{{p}}, legend: leg}, nil
}

// ---------------------------------------------------------------------------
// 2. Efficiency against the tuning constant.

// efficiencyVsTuning draws each asymptotic tuning curve with the simulated
// relative efficiency of the first slope in the cells along it.
func (fc *figureContext) efficiencyVsTuning() (*figureSpec, error) {
	r := fc.r
	if len(r.TuningTheory) == 0 || len(r.Cells) == 0 {
		return nil, nil
	}
	// One panel per swept path, in order of appearance.
	var paths []string
	for _, tc := range r.TuningTheory {
		if !slices.Contains(paths, tc.Path) {
			paths = append(paths, tc.Path)
		}
	}
	leg := newLegend()
	var row []*plot.Plot // one panel per swept path, side by side
	var notes []string
	var estimators []string
	slopeNames := map[string]bool{}
	for _, path := range paths {
		// Other sweeps at their first value.
		var fixed []Setting
		for _, s := range sweepsOf(r) {
			if s.path != path {
				fixed = append(fixed, Setting{Path: s.path, Value: s.values[0]})
			}
		}
		p := newPlot()
		drawn := 0
		xmin, xmax := math.Inf(1), math.Inf(-1)
		for _, tc := range r.TuningTheory {
			if tc.Path != path {
				continue
			}
			curve := finiteXYs(tc.Constants, tc.Efficiency)
			if len(curve) < 2 {
				continue
			}
			st := fc.style(tc.Estimator)
			// No markers on the asymptotic line: markers here mean
			// simulated points.
			if err := addCurve(p, curve, st, st.line(seriesLineWidth), 0, 0); err != nil {
				return nil, err
			}
			// The cells along the curve.
			var pts plotter.XYs
			var bars []float64
			for _, c := range r.Cells {
				v, ok := settingValue(c.Settings, path)
				if !ok {
					continue
				}
				if !hasSettings(c, fixed) {
					continue
				}
				x, ok := parseSettingNumber(v)
				if !ok {
					continue
				}
				for _, e := range c.Estimators {
					if e.Label != tc.Estimator {
						continue
					}
					k, ok := firstSlope(e)
					if !ok || !finite(float64(k.RelEff.Value)) {
						continue
					}
					slopeNames[k.Name] = true
					m := float64(k.RelEff.MCSE)
					if !finite(m) {
						m = 0
					}
					pts = append(pts, plotter.XY{X: x, Y: float64(k.RelEff.Value)})
					bars = append(bars, 2*m)
				}
			}
			if err := addPoints(p, pts, bars, bars, st); err != nil {
				return nil, err
			}
			leg.Add(tc.Estimator+": asymptotic", &plotter.Line{LineStyle: st.line(seriesLineWidth)})
			if len(pts) > 0 {
				legendMarker(leg, tc.Estimator+": simulated", st)
			}
			xmin, xmax = math.Min(xmin, curve[0].X), math.Max(xmax, curve[len(curve)-1].X)
			if !slices.Contains(estimators, tc.Estimator) {
				estimators = append(estimators, tc.Estimator)
			}
			drawn++
		}
		if drawn == 0 {
			continue
		}
		if _, err := addHLine(p, 1, xmin, xmax, referenceLine()); err != nil {
			return nil, err
		}
		p.X.Label.Text = "tuning constant (" + path + ")"
		p.Y.Label.Text = "relative efficiency vs " + r.Reference
		if len(fixed) > 0 {
			notes = append(notes, fmt.Sprintf("Simulated points only from cells with %s.", settingsText(fixed)))
			if len(paths) > 1 {
				p.Title.Text = settingsText(fixed)
			}
		}
		row = append(row, p)
	}
	if len(row) == 0 {
		return nil, nil
	}
	var names []string
	for n := range slopeNames {
		names = append(names, n)
	}
	slices.Sort(names)
	slope := "the first slope"
	if len(names) > 0 {
		slope += " (" + strings.Join(names, ", ") + ")"
	}
	caption := fmt.Sprintf("Lines: asymptotic efficiency against %s at the normal model as the tuning constant varies; points: simulated relative efficiency of %s in each cell, with bars of ±2 MCSE. The dotted line marks equal efficiency.",
		r.Reference, slope)
	if len(notes) > 0 {
		caption += " " + strings.Join(notes, " ")
	}
	title := r.Scenario.Name + ": efficiency of " + strings.Join(estimators, ", ") + " against the tuning constant"
	subtitle := ""
	if len(paths) == 1 {
		var fixed []Setting
		for _, s := range sweepsOf(r) {
			if s.path != paths[0] {
				fixed = append(fixed, Setting{Path: s.path, Value: s.values[0]})
			}
		}
		if len(fixed) > 0 {
			subtitle = "cells with " + settingsText(fixed)
		}
	}
	return &figureSpec{title: title, subtitle: subtitle, caption: caption, panels: [][]*plot.Plot{row}, legend: leg}, nil
}

// ---------------------------------------------------------------------------
// 3. Psi, rho and weight functions.

// psiFunctions draws three panels: psi, rho and the weight of each
// M-estimator in r.Functions.
func (fc *figureContext) psiFunctions() (*figureSpec, error) {
	r := fc.r
	type fn struct {
		label string
		st    seriesStyle
		psi   plotter.XYs
		rho   plotter.XYs
		w     plotter.XYs
	}
	var fns []fn
	for _, f := range r.Functions {
		x := fn{label: f.Estimator, st: fc.style(f.Estimator)}
		x.psi = finiteXYs(f.U, f.PsiValues)
		x.rho = finiteXYs(f.U, f.Rho)
		x.w = finiteXYs(f.U, f.Weight)
		if f.Psi != "" && f.Psi != f.Estimator {
			x.label += " (" + f.Psi + ")"
		}
		if len(x.psi) >= 2 || len(x.rho) >= 2 || len(x.w) >= 2 {
			fns = append(fns, x)
		}
	}
	if len(fns) == 0 {
		return nil, nil
	}
	names := []string{"psi(u)", "rho(u)", "weight w(u) = psi(u)/u"}
	panels := make([]*plot.Plot, 3)
	for i := range panels {
		p := newPlot()
		p.X.Label.Text = "standardised residual u"
		p.Y.Label.Text = names[i]
		panels[i] = p
	}
	leg := newLegend()
	for n, f := range fns {
		for i, xys := range []plotter.XYs{f.psi, f.rho, f.w} {
			every := max(1, len(xys)/8)
			if err := addCurve(panels[i], xys, f.st, f.st.line(seriesLineWidth), every, n*every/len(fns)); err != nil {
				return nil, err
			}
		}
		legendSeries(leg, f.label, f.st, f.st.line(seriesLineWidth))
	}
	for _, p := range panels {
		p.Y.Min = math.Min(p.Y.Min, 0)
		p.X.Min = math.Min(p.X.Min, 0)
	}
	cell := "the first cell"
	if len(r.Cells) > 0 {
		cell = cellName(r, r.Cells[0])
	}
	title := r.Scenario.Name + ": psi, rho and weight functions"
	caption := "The psi function, its rho (objective) and the IRLS weight w(u) = psi(u)/u of each M-estimator against the standardised residual u = r/σ, for u ≥ 0 (psi is odd, rho and the weight are even), with the tuning constants of the first cell."
	grid := [][]*plot.Plot{{panels[0], panels[1]}, {panels[2], nil}}
	return &figureSpec{title: title, subtitle: "as configured in " + cell, caption: caption, panels: grid, legend: leg}, nil
}

// ---------------------------------------------------------------------------
// 4. Iterations.

// linearBinLimit is the largest iteration count drawn on a linear axis with
// one bin per count; beyond it bins widen geometrically on a log axis.
const linearBinLimit = 60

// iterations draws the histogram of iterations of each iterative estimator
// in the first cell.
func (fc *figureContext) iterations() (*figureSpec, error) {
	r := fc.r
	if len(r.Cells) == 0 {
		return nil, nil
	}
	c := r.Cells[0]
	type hist struct {
		label string
		h     []int64
		total int64
	}
	var hs []hist
	var skipped []string
	maxK := 0
	for _, e := range c.Estimators {
		h := e.Convergence.IterationHistogram
		var total, beyond int64
		last := 0
		for k, n := range h {
			total += n
			if k > 0 && n > 0 {
				beyond += n
				last = k
			}
		}
		if beyond == 0 || total == 0 {
			skipped = append(skipped, e.Label)
			continue
		}
		hs = append(hs, hist{label: e.Label, h: h, total: total})
		maxK = max(maxK, last)
	}
	if len(hs) == 0 {
		return nil, nil
	}
	edges := iterationEdges(maxK)
	logAxis := maxK > linearBinLimit
	p := newPlot()
	leg := newLegend()
	var zeroNote []string
	for n, h := range hs {
		st := fc.style(h.label)
		share := make([]float64, len(edges)-1)
		for k, cnt := range h.h {
			if cnt == 0 {
				continue
			}
			if k == 0 && logAxis {
				zeroNote = append(zeroNote, fmt.Sprintf("%s %d", h.label, cnt))
				continue
			}
			b, _ := slices.BinarySearch(edges, float64(k)+0.5)
			b-- // edges[b] ≤ k < edges[b+1]
			if b >= 0 && b < len(share) {
				share[b] += float64(cnt) / float64(h.total)
			}
		}
		// Outline: up at the first non-empty bin, across each bin, down at
		// the last.
		first, last := -1, -1
		for b, s := range share {
			if s > 0 {
				if first < 0 {
					first = b
				}
				last = b
			}
		}
		var outline plotter.XYs
		outline = append(outline, plotter.XY{X: edges[first], Y: 0})
		var marks plotter.XYs
		for b := first; b <= last; b++ {
			outline = append(outline, plotter.XY{X: edges[b], Y: share[b]}, plotter.XY{X: edges[b+1], Y: share[b]})
		}
		outline = append(outline, plotter.XY{X: edges[last+1], Y: 0})
		// Markers on a few non-empty bins, staggered between series.
		nonEmpty := 0
		for b := first; b <= last; b++ {
			if share[b] > 0 {
				nonEmpty++
			}
		}
		every := max(1, nonEmpty/5)
		i := 0
		for b := first; b <= last; b++ {
			if share[b] == 0 {
				continue
			}
			if (i+n)%every == 0 {
				mid := (edges[b] + edges[b+1]) / 2
				if logAxis {
					mid = math.Sqrt(edges[b] * edges[b+1])
				}
				marks = append(marks, plotter.XY{X: mid, Y: share[b]})
			}
			i++
		}
		l, err := plotter.NewLine(outline)
		if err != nil {
			return nil, err
		}
		l.LineStyle = st.line(seriesLineWidth)
		p.Add(l)
		if len(marks) > 0 {
			s, err := plotter.NewScatter(marks)
			if err != nil {
				return nil, err
			}
			s.GlyphStyle = st.glyph(markerRadius)
			p.Add(s)
		}
		legendSeries(leg, h.label, st, st.line(seriesLineWidth))
	}
	p.Y.Min = 0
	p.Y.Max *= 1.05 // headroom above the tallest bin
	p.X.Label.Text = "iterations"
	p.Y.Label.Text = "share of fits"
	caption := fmt.Sprintf("Share of the fits in %s that took each number of iterations, one step line per iterative estimator.", cellName(r, c))
	if logAxis {
		p.X.Scale = plot.LogScale{}
		p.X.Tick.Marker = logTicks{}
		p.X.Min = 1
		p.Y.Label.Text = "share of fits (per bin)"
		caption = fmt.Sprintf("Share of the fits in %s by iterations taken, one step line per iterative estimator; bins are single counts up to 10 and widen geometrically beyond, on a log axis.", cellName(r, c))
		if len(zeroNote) > 0 {
			caption += " Fits that took no iteration are not shown: " + strings.Join(zeroNote, ", ") + "."
		}
	}
	if len(skipped) > 0 {
		caption += " Not iterative here: " + strings.Join(skipped, ", ") + "."
	}
	return &figureSpec{title: r.Scenario.Name + ": iterations to convergence", subtitle: cellName(r, c), caption: caption, panels: [][]*plot.Plot{{p}}, legend: leg}, nil
}

// iterationEdges returns bin edges covering 0..maxK: one bin per count up
// to linearBinLimit, otherwise one per count up to 10 and then about ten
// geometric bins per decade (edges rounded to integers).
func iterationEdges(maxK int) []float64 {
	var edges []float64
	if maxK <= linearBinLimit {
		for k := 0; k <= maxK+1; k++ {
			edges = append(edges, float64(k))
		}
		return edges
	}
	for k := 1; k <= 10; k++ {
		edges = append(edges, float64(k))
	}
	for j := 11; ; j++ {
		e := math.Round(math.Pow(10, float64(j)/10))
		if e > edges[len(edges)-1] {
			edges = append(edges, e)
		}
		if e > float64(maxK) {
			break
		}
	}
	// Fits that took no iteration have no place on a log axis: the first
	// edge is 1.
	return edges
}

// logTicks marks 1, 2, 5 × powers of ten.
type logTicks struct{}

// Ticks implements plot.Ticker.
func (logTicks) Ticks(lo, hi float64) []plot.Tick {
	var ticks []plot.Tick
	if lo <= 0 {
		lo = 1
	}
	for d := math.Pow(10, math.Floor(math.Log10(lo))); d <= hi; d *= 10 {
		for _, m := range []float64{1, 2, 5} {
			v := m * d
			if v >= lo && v <= hi {
				ticks = append(ticks, plot.Tick{Value: v, Label: strconv.FormatFloat(v, 'g', -1, 64)})
			}
		}
	}
	return ticks
}

// ---------------------------------------------------------------------------
// 5. Failures.

// failures draws the rate of each failure status per estimator over all
// cells, with Wilson 95% intervals.
func (fc *figureContext) failures() (*figureSpec, error) {
	r := fc.r
	type tally struct {
		label  string
		fits   int64
		counts map[string]int64
	}
	var ts []*tally
	byLabel := map[string]*tally{}
	var statuses []string
	statusTotal := map[string]int64{}
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			t, ok := byLabel[e.Label]
			if !ok {
				t = &tally{label: e.Label, counts: map[string]int64{}}
				byLabel[e.Label] = t
				ts = append(ts, t)
			}
			t.fits += e.Convergence.Fits
			for _, s := range e.Convergence.Statuses {
				if !isFailure(s) || s.Count == 0 {
					continue
				}
				if _, seen := statusTotal[s.Status]; !seen {
					statuses = append(statuses, s.Status)
				}
				t.counts[s.Status] += s.Count
				statusTotal[s.Status] += s.Count
			}
		}
	}
	if len(statuses) == 0 {
		return nil, nil
	}
	// Most frequent status first.
	slices.SortStableFunc(statuses, func(a, b string) int {
		switch {
		case statusTotal[a] > statusTotal[b]:
			return -1
		case statusTotal[a] < statusTotal[b]:
			return 1
		}
		return 0
	})
	var failing []*tally
	var clean []string
	for _, t := range ts {
		n := int64(0)
		for _, c := range t.counts {
			n += c
		}
		if n > 0 && t.fits > 0 {
			failing = append(failing, t)
		} else {
			clean = append(clean, t.label)
		}
	}
	p := newPlotGrid(false)
	leg := newLegend()
	for i, t := range failing {
		st := fc.style(t.label)
		var pts plotter.XYs
		var lo, hi []float64
		for j, s := range statuses {
			w := Wilson(t.counts[s], t.fits)
			v := float64(w.Value)
			pts = append(pts, plotter.XY{X: float64(j) + dodge(i, len(failing)), Y: v})
			lo = append(lo, v-float64(w.Low))
			hi = append(hi, float64(w.High)-v)
		}
		if err := addPoints(p, pts, lo, hi, st); err != nil {
			return nil, err
		}
		legendMarker(leg, fmt.Sprintf("%s (%d fits)", t.label, t.fits), st)
	}
	p.NominalX(statuses...)
	p.X.Min, p.X.Max = -0.5, float64(len(statuses))-0.5
	p.Y.Min = 0
	p.X.Label.Text = "status at the end of the fit"
	p.Y.Label.Text = "share of fits"
	caption := fmt.Sprintf("Share of fits that ended in each failure status, per estimator, summed over all %d cells; bars are Wilson 95%% intervals.", len(r.Cells))
	if len(clean) > 0 {
		caption += " No failed fits (not drawn): " + strings.Join(clean, ", ") + "."
	}
	return &figureSpec{title: r.Scenario.Name + ": failed fits by status", subtitle: fmt.Sprintf("all %d cells", len(r.Cells)), caption: caption, panels: [][]*plot.Plot{{p}}, legend: leg}, nil
}

// ---------------------------------------------------------------------------
// 6. Coverage.

// coverage draws the coverage of the 95% intervals of each estimator and
// coefficient in the first cell.
func (fc *figureContext) coverage() (*figureSpec, error) {
	r := fc.r
	if len(r.Cells) == 0 {
		return nil, nil
	}
	c := r.Cells[0]
	var coefs []string
	var with []Estimator
	var without []string
	for _, e := range c.Estimators {
		has := false
		for _, k := range e.Coefficients {
			if k.Intervals > 0 && finite(float64(k.Coverage.Value)) {
				has = true
				if !slices.Contains(coefs, k.Name) {
					coefs = append(coefs, k.Name)
				}
			}
		}
		if has {
			with = append(with, e)
		} else {
			without = append(without, e.Label)
		}
	}
	if len(with) == 0 {
		return nil, nil
	}
	p := newPlotGrid(false)
	leg := newLegend()
	for i, e := range with {
		st := fc.style(e.Label)
		var pts plotter.XYs
		var lo, hi []float64
		for j, name := range coefs {
			for _, k := range e.Coefficients {
				if k.Name != name || k.Intervals == 0 || !finite(float64(k.Coverage.Value)) {
					continue
				}
				v, m := float64(k.Coverage.Value), float64(k.Coverage.MCSE)
				if !finite(m) {
					m = 0
				}
				pts = append(pts, plotter.XY{X: float64(j) + dodge(i, len(with)), Y: v})
				// Coverage lies in [0, 1]; bars are cut there.
				lo = append(lo, v-math.Max(0, v-2*m))
				hi = append(hi, math.Min(1, v+2*m)-v)
			}
		}
		if err := addPoints(p, pts, lo, hi, st); err != nil {
			return nil, err
		}
		legendMarker(leg, e.Label, st)
	}
	l, err := addHLine(p, 0.95, -0.5, float64(len(coefs))-0.5, referenceLine())
	if err != nil {
		return nil, err
	}
	leg.Add("nominal 0.95", l)
	p.NominalX(coefs...)
	p.X.Min, p.X.Max = -0.5, float64(len(coefs))-0.5
	p.Y.Max = math.Max(p.Y.Max, 1)
	p.X.Label.Text = "coefficient"
	p.Y.Label.Text = "coverage of 95% intervals"
	caption := fmt.Sprintf("Share of the 95%% intervals in %s that contain the true coefficient, per estimator and coefficient, with bars of ±2 MCSE (cut at 0 and 1, so where every interval or none covered the bar is one-sided, its length from the Wilson interval). The dotted line is the nominal 0.95.", cellName(r, c))
	if len(without) > 0 {
		caption += " No intervals: " + strings.Join(without, ", ") + "."
	}
	return &figureSpec{title: r.Scenario.Name + ": coverage of 95% intervals", subtitle: cellName(r, c), caption: caption, panels: [][]*plot.Plot{{p}}, legend: leg}, nil
}

// hasSettings reports whether cell c has every one of the given swept
// values.
func hasSettings(c Cell, want []Setting) bool {
	for _, w := range want {
		if v, _ := settingValue(c.Settings, w.Path); v != w.Value {
			return false
		}
	}
	return true
}

// capitalise upper-cases the first letter of an ASCII sentence.
func capitalise(s string) string {
	if s == "" || s[0] < 'a' || s[0] > 'z' {
		return s
	}
	return string(s[0]-'a'+'A') + s[1:]
}
