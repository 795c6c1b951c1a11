package report

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

	"github.com/rhomark/rhomark/internal/atomicfile"
	"github.com/rhomark/rhomark/results"
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
	// Name is the file-name stem: "bias-curves", "intercept-bias",
	// "coefficient-bias", "rmse-vs-tuning", "efficiency-vs-tuning",
	// "tuning-accuracy" (with "-LABEL" after it when a run has several
	// tuning studies), "coverage", "failures", "iterations",
	// "psi-functions" or "efficiency-curve".
	Name string
	// Question is the question the figure answers, one of the Question
	// constants; the report groups figures by it.
	Question string
	// Title says the scenario, and the cells the figure shows.
	Title string
	// Caption says in a sentence or two what is drawn and what the bars
	// and bounds are.
	Caption string
	// SVG and PNG are the rendered figure.
	SVG []byte
	PNG []byte // PNG image, figurePixelsX wide, on a white background
}

// The questions figures answer, in the order the report asks them.
const (
	QuestionBias        = "bias"        // bias and breakdown against contamination
	QuestionAccuracy    = "accuracy"    // RMSE and efficiency against a tuning constant
	QuestionCoverage    = "coverage"    // coverage of the intervals
	QuestionConvergence = "convergence" // failed fits and iterations per cell
	QuestionFunctions   = "functions"   // psi, rho and weight
)

// Omission is a figure left out, and why.
type Omission struct {
	Name     string // the figure's name, as in Figure.Name
	Question string // the question it would have answered
	Reason   string // a sentence saying what is not drawn and why
}

// Figure geometry: a figure is figureWidth wide and, with one row of
// panels, figureHeight high (each further row of facets adds facetRowHeight);
// its PNG is rendered at figureDPI, so it is figurePixelsX pixels wide.
const (
	figureWidth    = 7 * vg.Inch
	figureHeight   = 4.5 * vg.Inch
	facetRowHeight = 2.3 * vg.Inch
	figureDPI      = 120
	// figurePixelsX and figurePixelsY are the PNG's size with one row of
	// panels.
	figurePixelsX = 840
	figurePixelsY = 540
	// maxFacets is the most panels a faceted figure draws; the caption
	// says how many more there were.
	maxFacets = 12
)

// Line widths and marker radius.
const (
	seriesLineWidth = 1.6
	markerRadius    = 3
)

// sansFace returns the typeface of every figure text (Liberation Sans, shipped
// with gonum/plot, so no system font is needed).
func sansFace() font.Font { return font.Font{Typeface: "Liberation", Variant: "Sans"} }

// builder draws one figure, or says why it cannot (a nil spec and a
// reason; an empty reason when the figure has no place in this kind of
// run and leaving it out needs no note). A figure drawn once for each of
// several things (each tuning study) has each instead of build: it returns
// the figures, each spec named, and the notes on those left out.
type builder struct {
	name, question string
	build          func() (*figureSpec, string, error)
	each           func() ([]*figureSpec, []Omission, error)
}

// Figures renders every figure that r's contents support, in a fixed
// order, and says which were left out and why.
func Figures(r *results.Results) ([]Figure, []Omission, error) {
	if r == nil {
		return nil, nil, errors.New("figures: no results")
	}
	fc := newFigureContext(r)
	builders := []builder{
		{"bias-curves", QuestionBias, fc.biasCurves, nil},
		{"intercept-bias", QuestionBias, fc.interceptBias, nil},
		{"coefficient-bias", QuestionBias, fc.coefficientBias, nil},
		{"rmse-vs-tuning", QuestionAccuracy, fc.rmseVsTuning, nil},
		{"efficiency-vs-tuning", QuestionAccuracy, fc.efficiencyVsTuning, nil},
		{"tuning-accuracy", QuestionAccuracy, nil, fc.tuningAccuracy},
		{"coverage", QuestionCoverage, fc.coverage, nil},
		{"failures", QuestionConvergence, fc.failures, nil},
		{"iterations", QuestionConvergence, fc.iterations, nil},
		{"iterations-vs-tolerance", QuestionConvergence, fc.toleranceIterations, nil},
		{"error-vs-tolerance", QuestionConvergence, fc.toleranceError, nil},
		{"psi-functions", QuestionFunctions, fc.psiFunctions, nil},
	}
	var figs []Figure
	var omitted []Omission
	for _, b := range builders {
		var specs []*figureSpec
		if b.each != nil {
			ss, notes, err := b.each()
			if err != nil {
				return nil, nil, fmt.Errorf("figure %s: %w", b.name, err)
			}
			for _, o := range notes {
				o.Question = b.question
				omitted = append(omitted, o)
			}
			specs = ss
		} else {
			spec, why, err := b.build()
			if err != nil {
				return nil, nil, fmt.Errorf("figure %s: %w", b.name, err)
			}
			if spec == nil {
				if why != "" {
					omitted = append(omitted, Omission{Name: b.name, Question: b.question, Reason: why})
				}
				continue
			}
			spec.name = b.name
			specs = []*figureSpec{spec}
		}
		for _, spec := range specs {
			f, err := spec.figure()
			if err != nil {
				return nil, nil, fmt.Errorf("figure %s: %w", spec.name, err)
			}
			f.Question = b.question
			figs = append(figs, f)
		}
	}
	return figs, omitted, nil
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
// for each figure, each atomically (see internal/atomicfile), creating dir if
// needed, and returns the paths written.
func SaveFigures(dir, name string, figs []Figure) ([]string, error) {
	base, err := results.SafeName(name)
	if err != nil {
		return nil, err
	}
	for _, f := range figs {
		if _, err := results.SafeName(f.Name); err != nil {
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
			if err := atomicfile.WriteFile(p, out.data); err != nil {
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
	r      *results.Results
	series map[string]int
}

func newFigureContext(r *results.Results) *figureContext {
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

// sweepsOf lists r's swept paths with their values (see results.Sweeps).
func sweepsOf(r *results.Results) []sweep {
	var out []sweep
	for _, s := range results.Sweeps(r) {
		out = append(out, sweep{path: s.Path, values: s.Values})
	}
	return out
}

// settingValue returns the value of path in a cell's settings.
func settingValue(settings []results.Setting, path string) (string, bool) {
	for _, s := range settings {
		if s.Path == path {
			return s.Value, true
		}
	}
	return "", false
}

func settingsText(settings []results.Setting) string { return results.SettingsText(settings) }

// cellName names a cell for titles: "cell 2 (cells 0–3): a = 1, b = 2".
func cellName(r *results.Results, c results.Cell) string {
	s := results.CellNumber(r, c)
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
func firstSlope(e results.Estimator) (results.Coefficient, bool) {
	for _, k := range e.Coefficients {
		if k.Name != "intercept" {
			return k, true
		}
	}
	return results.Coefficient{}, false
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
	p.X.Tick.Label.Font = font.From(sansFace(), 9)
	p.Y.Tick.Label.Font = font.From(sansFace(), 9)
	p.Legend.TextStyle.Font = font.From(sansFace(), 8.5)
	p.X.Tick.Marker = niceTicks{}
	p.Y.Tick.Marker = niceTicks{}
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

// ---------------------------------------------------------------------------
// Rendering.

// figureSpec is a figure before rendering: a grid of panels, an optional
// legend, a title and subtitle drawn above them, and the caption. The
// legend goes in the first empty (nil) tile of the grid if there is one,
// otherwise in a column to the right. A figure whose grid is full and
// whose panels need the whole width (three columns) gives keys instead: a
// legend laid out in rows across the figure, under the title.
type figureSpec struct {
	name     string
	title    string
	subtitle string
	caption  string
	panels   [][]*plot.Plot
	legend   *plot.Legend
	keys     []legendKey
	height   vg.Length // 0: figureHeight
}

// legendKey is one entry of a legend drawn in rows (figureSpec.keys).
type legendKey struct {
	text   string
	thumbs []plot.Thumbnailer
}

// paintKeys draws the keys in rows across the top of c, each row centred,
// and returns the canvas below them.
func (s *figureSpec) paintKeys(c draw.Canvas) draw.Canvas {
	gap := vg.Points(14)
	avail := c.Max.X - c.Min.X
	type placed struct {
		l *plot.Legend
		w vg.Length
	}
	var rows [][]placed
	var widths []vg.Length
	for _, k := range s.keys {
		l := newLegend()
		l.Add(k.text, k.thumbs...)
		r := l.Rectangle(c)
		w := r.Max.X - r.Min.X
		n := len(rows)
		if n == 0 || widths[n-1]+gap+w > avail {
			rows = append(rows, nil)
			widths = append(widths, -gap)
			n++
		}
		rows[n-1] = append(rows[n-1], placed{l, w})
		widths[n-1] += gap + w
	}
	lh := newLegend().TextStyle.Height("Mg") * 1.25
	y := c.Max.Y
	for i, row := range rows {
		x := c.Min.X + (avail-widths[i])/2
		for _, p := range row {
			lc := draw.Canvas{Canvas: c.Canvas, Rectangle: vg.Rectangle{Min: vg.Point{X: x, Y: y - lh}, Max: vg.Point{X: x + p.w, Y: y}}}
			p.l.Draw(lc)
			x += p.w + gap
		}
		y -= lh
	}
	return draw.Crop(c, 0, 0, 0, -(c.Max.Y - y + vg.Points(6)))
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
	height := s.height
	if height <= 0 {
		height = figureHeight
	}
	sc := vgsvg.New(figureWidth, height)
	s.paint(draw.New(sc))
	var svg bytes.Buffer
	if _, err := sc.WriteTo(&svg); err != nil {
		return Figure{}, fmt.Errorf("writing SVG: %w", err)
	}
	ic := vgimg.NewWith(vgimg.UseWH(figureWidth, height), vgimg.UseDPI(figureDPI), vgimg.UseBackgroundColor(color.White))
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
	if len(s.keys) > 0 {
		body = s.paintKeys(body)
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

// facets lays out panels in a grid, one to three columns wide, with the
// empty tiles left nil (the legend takes the first), and returns the grid
// and the figure's height. Every panel gets the same y range, so that
// facets compare at a glance.
func facets(panels []*plot.Plot) ([][]*plot.Plot, vg.Length) {
	shareY(panels...)
	n := len(panels)
	cols := 3
	switch {
	case n == 1:
		return [][]*plot.Plot{{panels[0]}}, figureHeight
	case n <= 4:
		cols = 2
	}
	rows := (n + cols - 1) / cols
	grid := make([][]*plot.Plot, rows)
	for i := range grid {
		grid[i] = make([]*plot.Plot, cols)
		for j := range grid[i] {
			if k := i*cols + j; k < n {
				grid[i][j] = panels[k]
			}
		}
	}
	h := figureHeight
	if rows > 1 {
		h = vg.Inch*0.7 + vg.Length(rows)*facetRowHeight
	}
	return grid, h
}

// shareY gives panels the same y range.
func shareY(ps ...*plot.Plot) {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, p := range ps {
		lo = math.Min(lo, p.Y.Min)
		hi = math.Max(hi, p.Y.Max)
	}
	for _, p := range ps {
		p.Y.Min, p.Y.Max = lo, hi
	}
}

// shortSetting writes a swept value compactly, the path without its first
// segment when it has three or more: "spikes.fraction = 0.1".
func shortSetting(s results.Setting) string {
	return results.ShortPath(s.Path) + " = " + s.Value
}

// shortSettings joins shortSetting of each setting with commas.
func shortSettings(ss []results.Setting) string {
	parts := make([]string, len(ss))
	for i, s := range ss {
		parts[i] = shortSetting(s)
	}
	return strings.Join(parts, ", ")
}

// facetGroups splits r's cells by their values of every sweep but the
// given paths: each group is one facet. Groups keep the order of their
// first cells; within a group, cells keep their order.
func facetGroups(r *results.Results, except ...string) []facetGroup {
	var out []facetGroup
	at := map[string]int{}
	for _, c := range r.Cells {
		var key []results.Setting
		for _, s := range c.Settings {
			if !slices.Contains(except, s.Path) {
				key = append(key, s)
			}
		}
		k := settingsText(key)
		i, ok := at[k]
		if !ok {
			i = len(out)
			at[k] = i
			out = append(out, facetGroup{settings: key})
		}
		out[i].cells = append(out[i].cells, c)
	}
	return out
}

// facetGroup is the cells of one facet and the settings they share.
type facetGroup struct {
	settings []results.Setting
	cells    []results.Cell
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
