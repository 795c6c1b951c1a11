package report

import (
	"fmt"
	"image/color"
	"math"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"github.com/rhomark/rhomark/results"
)

// fractionPath returns the first swept contamination fraction (a path
// ending in .fraction) with at least two numeric values: the x axis of the
// bias curves. It prefers the breakdown section's fraction.
func fractionPath(r *results.Results) string {
	if bd := r.Breakdown; bd != nil && bd.Fraction != "" && len(bd.Curve) > 0 {
		return bd.Fraction
	}
	for _, s := range results.Sweeps(r) {
		if results.TargetOf(s.Path).Kind != results.SweepFraction {
			continue
		}
		n := 0
		for _, v := range s.Values {
			if _, ok := parseSettingNumber(v); ok {
				n++
			}
		}
		if n >= 2 {
			return s.Path
		}
	}
	return ""
}

// point is one estimate with its ±2 MCSE (or other interval) half-widths.
type point struct {
	x, y, lo, hi float64
}

// seriesPoints collects the points of one estimator in one panel.
type seriesPoints struct {
	label string
	pts   []point
	worst plotter.XYs // worst case over positions (bias curves only)
}

// addSeries draws each series of a panel: a line through the points in the
// series' dash, its markers, and vertical error bars from y−lo to y+hi, the
// series dodged sideways by a small step so that bars do not overlap.
// line false draws points and bars only (a nominal axis).
func (fc *figureContext) addSeries(p *plot.Plot, series []*seriesPoints, step float64, line bool) (int, error) {
	return fc.addSeriesStyled(p, series, step, line, false)
}

// addSeriesStyled is addSeries with the lines solid when solid is set (when
// dashes mean something else in the figure).
func (fc *figureContext) addSeriesStyled(p *plot.Plot, series []*seriesPoints, step float64, line, solid bool) (int, error) {
	var xs []float64
	drawn := 0
	n := len(series)
	for i, s := range series {
		if len(s.pts) == 0 {
			continue
		}
		slices.SortStableFunc(s.pts, func(a, b point) int {
			switch {
			case a.x < b.x:
				return -1
			case a.x > b.x:
				return 1
			}
			return 0
		})
		st := fc.style(s.label)
		off := step * (float64(i) - float64(n-1)/2)
		var xys plotter.XYs
		var lo, hi []float64
		for _, q := range s.pts {
			xys = append(xys, plotter.XY{X: q.x + off, Y: q.y})
			lo = append(lo, q.lo)
			hi = append(hi, q.hi)
		}
		for _, q := range s.pts {
			if !slices.Contains(xs, q.x) {
				xs = append(xs, q.x)
			}
		}
		ls := st.line(seriesLineWidth)
		if solid {
			ls = st.solidLine(seriesLineWidth)
		}
		if line && len(xys) >= 2 {
			if err := addCurve(p, xys, st, ls, 0, 0); err != nil {
				return drawn, err
			}
		}
		if err := addPoints(p, xys, lo, hi, st); err != nil {
			return drawn, err
		}
		if len(s.worst) >= 2 {
			wl := st.solidLine(seriesLineWidth * 0.8)
			wl.Dashes = []vg.Length{vg.Points(6), vg.Points(3)}
			if err := addCurve(p, s.worst, st, wl, 0, 0); err != nil {
				return drawn, err
			}
		}
		drawn++
	}
	if line && len(xs) >= 2 && len(xs) <= 12 {
		slices.Sort(xs)
		p.X.Tick.Marker = valueTicks(xs)
	}
	return drawn, nil
}

// valueTicks marks the x axis at the swept values themselves, so that a
// reader sees which values were simulated (0.75, 1.345, 2.5 rather than
// 0.8, 1.6, 2.4).
type valueTicks []float64

// Ticks implements plot.Ticker. A value closer than 1/25 of the axis to
// the last labelled one keeps its tick mark but not its label, so that
// labels never run into each other.
func (v valueTicks) Ticks(lo, hi float64) []plot.Tick {
	var out []plot.Tick
	last := math.Inf(-1)
	for _, x := range v {
		if x < lo || x > hi {
			continue
		}
		t := plot.Tick{Value: x}
		if x-last >= (hi-lo)/10 {
			t.Label = strconv.FormatFloat(x, 'g', 4, 64)
			last = x
		}
		out = append(out, t)
	}
	return out
}

// niceTicks labels an axis at four to seven round values (steps of 1, 2, 2.5
// or 5 times a power of ten), each with the same number of decimals, the
// fewest that tell them apart, and puts unlabelled ticks half-way.
type niceTicks struct{}

// Ticks implements plot.Ticker.
func (niceTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) || !finite(lo, hi) {
		return []plot.Tick{{Value: lo, Label: strconv.FormatFloat(lo, 'g', 4, 64)}}
	}
	// The smallest round step that gives at most six intervals.
	mag := math.Pow(10, math.Floor(math.Log10((hi-lo)/6)))
	step := 10 * mag
	for _, m := range []float64{1, 2, 2.5, 5} {
		if (hi-lo)/(m*mag) <= 6 {
			step = m * mag
			break
		}
	}
	decimals := max(0, -int(math.Floor(math.Log10(step)+1e-9)))
	if r := step / math.Pow(10, math.Floor(math.Log10(step)+1e-9)); math.Abs(r-2.5) < 1e-9 {
		decimals++
	}
	var out []plot.Tick
	for i := math.Ceil(lo/step - 1e-9); ; i++ {
		v := i * step
		if v > hi+step*1e-9 {
			break
		}
		label := strconv.FormatFloat(v, 'f', decimals, 64)
		if strings.Trim(label, "-0.") == "" {
			label = strings.TrimPrefix(label, "-")
		}
		out = append(out, plot.Tick{Value: v, Label: label})
		if h := v + step/2; h <= hi {
			out = append(out, plot.Tick{Value: h})
		}
	}
	if h := math.Ceil(lo/step-1e-9)*step - step/2; h >= lo {
		out = append(out, plot.Tick{Value: h}) // the half-step below the first label
	}
	return out
}

// seriesOf returns the series of label in ss, adding it if new.
func seriesOf(ss *[]*seriesPoints, label string) *seriesPoints {
	for _, s := range *ss {
		if s.label == label {
			return s
		}
	}
	s := &seriesPoints{label: label}
	*ss = append(*ss, s)
	return s
}

// twoMCSE returns the half-widths of a ±2 MCSE interval (0 when the MCSE is
// null), cut so that the interval stays at or above floor.
func twoMCSE(m results.Measure, floor float64) (lo, hi float64) {
	v, e := float64(m.Value), float64(m.MCSE)
	if !finite(e) {
		e = 0
	}
	lo, hi = 2*e, 2*e
	if v-lo < floor {
		lo = math.Max(0, v-floor)
	}
	return lo, hi
}

// capFacets keeps at most maxFacets groups and says how many were left out.
func capFacets(groups []facetGroup) ([]facetGroup, string) {
	if len(groups) <= maxFacets {
		return groups, ""
	}
	return groups[:maxFacets], fmt.Sprintf(" Only the first %d of %d groups of the other sweeps are drawn; the tables give every cell.", maxFacets, len(groups))
}

// panelTitle names a facet by its settings.
func panelTitle(p *plot.Plot, settings []results.Setting) {
	if len(settings) > 0 {
		p.Title.Text = shortSettings(settings)
	}
}

// legendEstimators adds a legend entry for each series drawn.
func (fc *figureContext) legendEstimators(leg *plot.Legend, labels []string, line bool) {
	fc.legendEstimatorsStyled(leg, labels, line, false)
}

// legendEstimatorsStyled is legendEstimators with solid lines when solid
// is set.
func (fc *figureContext) legendEstimatorsStyled(leg *plot.Legend, labels []string, line, solid bool) {
	for _, l := range labels {
		st := fc.style(l)
		if line && solid {
			legendSeries(leg, l, st, st.solidLine(seriesLineWidth))
		} else if line {
			legendSeries(leg, l, st, st.line(seriesLineWidth))
		} else {
			legendMarker(leg, l, st)
		}
	}
}

// ---------------------------------------------------------------------------
// Slope bias against contamination.

// biasCurves draws the slope-bias norm against the contamination fraction,
// one panel per combination of the other sweeps, from r.Breakdown when
// present (with the worst case over positions) and otherwise from the
// cells.
func (fc *figureContext) biasCurves() (*figureSpec, string, error) {
	r := fc.r
	frac := fractionPath(r)
	if frac == "" {
		return nil, "", nil // coefficient-bias shows bias per cell
	}
	type panel struct {
		settings []results.Setting
		series   []*seriesPoints
	}
	var panels []*panel
	at := map[string]*panel{}
	get := func(settings []results.Setting) *panel {
		k := settingsText(settings)
		if p, ok := at[k]; ok {
			return p
		}
		p := &panel{settings: settings}
		at[k] = p
		panels = append(panels, p)
		return p
	}
	var worstOf []string
	if bd := r.Breakdown; bd != nil && bd.Fraction == frac && len(bd.Curve) > 0 {
		worstOf = bd.WorstOver
		for _, pt := range bd.Curve {
			var others []results.Setting
			for _, s := range pt.Settings {
				if s.Path != frac {
					others = append(others, s)
				}
			}
			v := float64(pt.Bias.Value)
			if !finite(pt.Fraction, v) {
				continue
			}
			s := seriesOf(&get(others).series, pt.Estimator)
			lo, hi := twoMCSE(pt.Bias, 0)
			s.pts = append(s.pts, point{pt.Fraction, v, lo, hi})
			if len(worstOf) > 0 && finite(float64(pt.Worst.Value)) {
				s.worst = append(s.worst, plotter.XY{X: pt.Fraction, Y: float64(pt.Worst.Value)})
			}
		}
	} else {
		for _, g := range facetGroups(r, frac) {
			p := get(g.settings)
			for _, c := range g.cells {
				fv, _ := settingValue(c.Settings, frac)
				x, ok := parseSettingNumber(fv)
				if !ok {
					continue
				}
				for _, e := range c.Estimators {
					v := float64(e.SlopeBias.Value)
					if !finite(v) {
						continue
					}
					lo, hi := twoMCSE(e.SlopeBias, 0)
					s := seriesOf(&p.series, e.Label)
					s.pts = append(s.pts, point{x, v, lo, hi})
				}
			}
		}
	}
	note := ""
	if len(panels) > maxFacets {
		note = fmt.Sprintf(" Only the first %d of %d groups of the other sweeps are drawn; the tables give every cell.", maxFacets, len(panels))
		panels = panels[:maxFacets]
	}
	var plots []*plot.Plot
	var labels []string
	xmin, xmax := math.Inf(1), math.Inf(-1)
	for _, pn := range panels {
		for _, s := range pn.series {
			for _, q := range s.pts {
				xmin, xmax = math.Min(xmin, q.x), math.Max(xmax, q.x)
			}
		}
	}
	step := 0.012 * (xmax - xmin)
	for _, pn := range panels {
		p := newPlot()
		panelTitle(p, pn.settings)
		n, err := fc.addSeriesStyled(p, pn.series, step, true, len(worstOf) > 0)
		if err != nil {
			return nil, "", err
		}
		if n == 0 {
			continue
		}
		for _, s := range pn.series {
			if len(s.pts) > 0 && !slices.Contains(labels, s.label) {
				labels = append(labels, s.label)
			}
		}
		p.X.Label.Text = "contamination fraction"
		p.Y.Label.Text = "slope-bias norm"
		p.Y.Min = math.Min(p.Y.Min, 0)
		plots = append(plots, p)
	}
	if len(plots) == 0 {
		return nil, "Slope bias against contamination: no estimator has a finite slope bias at two fractions.", nil
	}
	leg := newLegend()
	fc.legendEstimatorsStyled(leg, labels, true, len(worstOf) > 0)
	caption := fmt.Sprintf("Norm of the bias of the slopes (debiased for the noise in the mean) against the contamination fraction %s, one panel per combination of the other sweeps, one colour, marker and line pattern per estimator; bars are ±2 MCSE (cut at 0). Points are shifted slightly sideways so that bars do not hide each other.", frac)
	if len(worstOf) > 0 {
		grey := seriesStyle{colour: color.RGBA{R: 90, G: 90, B: 90, A: 255}, marker: draw.CircleGlyph{}}
		dashed := grey.solidLine(seriesLineWidth)
		dashed.Dashes = []vg.Length{vg.Points(6), vg.Points(3)}
		leg.Add("mean over positions", &plotter.Line{LineStyle: grey.solidLine(seriesLineWidth)})
		leg.Add("worst case (no bars)", &plotter.Line{LineStyle: dashed})
		caption += fmt.Sprintf(" Markers and bars: the mean over the swept positions (%s); dashed lines without markers: the worst case over them.", strings.Join(worstOf, ", "))
	}
	if bd := r.Breakdown; bd != nil && bd.Threshold > 0 {
		for _, p := range plots {
			l, err := addHLine(p, bd.Threshold, xmin, xmax, referenceLine())
			if err != nil {
				return nil, "", err
			}
			if p == plots[0] {
				leg.Add(fmt.Sprintf("breakdown threshold %s", fmtG(bd.Threshold)), l)
			}
		}
		caption += fmt.Sprintf(" The dotted line is the breakdown threshold, %s.", fmtG(bd.Threshold))
	}
	caption += note
	grid, h := facets(plots)
	return &figureSpec{title: r.Scenario.Name + ": slope bias against contamination", caption: caption, panels: grid, legend: leg, height: h}, "", nil
}

// ---------------------------------------------------------------------------
// Intercept bias against contamination.

// interceptBias draws the signed bias of the intercept against the
// contamination fraction, one panel per combination of the other sweeps.
func (fc *figureContext) interceptBias() (*figureSpec, string, error) {
	r := fc.r
	frac := fractionPath(r)
	if frac == "" {
		return nil, "", nil
	}
	groups, note := capFacets(facetGroups(r, frac))
	var plots []*plot.Plot
	var labels []string
	for _, g := range groups {
		var series []*seriesPoints
		for _, c := range g.cells {
			fv, _ := settingValue(c.Settings, frac)
			x, ok := parseSettingNumber(fv)
			if !ok {
				continue
			}
			for _, e := range c.Estimators {
				k, ok := coefficientNamed(e, "intercept")
				if !ok || !finite(float64(k.Bias.Value)) {
					continue
				}
				lo, hi := twoMCSE(k.Bias, math.Inf(-1))
				s := seriesOf(&series, e.Label)
				s.pts = append(s.pts, point{x, float64(k.Bias.Value), lo, hi})
			}
		}
		p := newPlot()
		panelTitle(p, g.settings)
		xmin, xmax := math.Inf(1), math.Inf(-1)
		for _, s := range series {
			for _, q := range s.pts {
				xmin, xmax = math.Min(xmin, q.x), math.Max(xmax, q.x)
			}
		}
		n, err := fc.addSeries(p, series, 0.012*(xmax-xmin), true)
		if err != nil {
			return nil, "", err
		}
		if n == 0 {
			continue
		}
		if _, err := addHLine(p, 0, xmin, xmax, referenceLine()); err != nil {
			return nil, "", err
		}
		for _, s := range series {
			if len(s.pts) > 0 && !slices.Contains(labels, s.label) {
				labels = append(labels, s.label)
			}
		}
		p.X.Label.Text = "contamination fraction"
		p.Y.Label.Text = "intercept bias"
		plots = append(plots, p)
	}
	if len(plots) == 0 {
		return nil, "Intercept bias against contamination: no estimator has an intercept with a finite bias.", nil
	}
	leg := newLegend()
	fc.legendEstimators(leg, labels, true)
	caption := fmt.Sprintf("Bias of the intercept (mean estimate minus the true value, in the response's units) against the contamination fraction %s, one panel per combination of the other sweeps; bars are ±2 MCSE, and the dotted line is no bias.", frac) + note
	grid, h := facets(plots)
	return &figureSpec{title: r.Scenario.Name + ": intercept bias against contamination", caption: caption, panels: grid, legend: leg, height: h}, "", nil
}

// coefficientNamed finds e's coefficient called name.
func coefficientNamed(e results.Estimator, name string) (results.Coefficient, bool) {
	for _, k := range e.Coefficients {
		if k.Name == name {
			return k, true
		}
	}
	return results.Coefficient{}, false
}

// ---------------------------------------------------------------------------
// Bias per coefficient, per cell.

// coefficientBias draws, when no contamination fraction is swept, the bias
// of every coefficient (intercept too) per estimator, one panel per cell.
func (fc *figureContext) coefficientBias() (*figureSpec, string, error) {
	r := fc.r
	if fractionPath(r) != "" || len(r.Cells) == 0 {
		return nil, "", nil
	}
	cells := r.Cells
	note := ""
	if len(cells) > maxFacets {
		note = fmt.Sprintf(" Only the first %d of %d cells are drawn; the tables give every cell.", maxFacets, len(cells))
		cells = cells[:maxFacets]
	}
	var plots []*plot.Plot
	var labels []string
	for _, c := range cells {
		var names []string
		for _, e := range c.Estimators {
			for _, k := range e.Coefficients {
				if !slices.Contains(names, k.Name) {
					names = append(names, k.Name)
				}
			}
		}
		var series []*seriesPoints
		for _, e := range c.Estimators {
			for j, name := range names {
				k, ok := coefficientNamed(e, name)
				if !ok || !finite(float64(k.Bias.Value)) {
					continue
				}
				lo, hi := twoMCSE(k.Bias, math.Inf(-1))
				s := seriesOf(&series, e.Label)
				s.pts = append(s.pts, point{float64(j), float64(k.Bias.Value), lo, hi})
			}
		}
		p := newPlotGrid(false)
		if len(r.Cells) > 1 {
			p.Title.Text = fmt.Sprintf("cell %d", c.Index)
			if len(c.Settings) > 0 {
				p.Title.Text += ": " + shortSettings(c.Settings)
			}
		}
		n, err := fc.addSeries(p, series, 0.6/float64(max(1, len(series))), false)
		if err != nil {
			return nil, "", err
		}
		if n == 0 {
			continue
		}
		if _, err := addHLine(p, 0, -0.5, float64(len(names))-0.5, referenceLine()); err != nil {
			return nil, "", err
		}
		for _, s := range series {
			if len(s.pts) > 0 && !slices.Contains(labels, s.label) {
				labels = append(labels, s.label)
			}
		}
		p.NominalX(names...)
		p.X.Min, p.X.Max = -0.5, float64(len(names))-0.5
		p.Y.Label.Text = "bias"
		plots = append(plots, p)
	}
	if len(plots) == 0 {
		return nil, "Bias per coefficient: no finite bias to draw.", nil
	}
	leg := newLegend()
	fc.legendEstimators(leg, labels, false)
	caption := "Bias (mean estimate minus the true value, in each coefficient's units) of every coefficient, the intercept included, per estimator; bars are ±2 MCSE and the dotted line is no bias. No contamination fraction is swept, so there is no bias curve." + note
	title := r.Scenario.Name + ": bias per coefficient"
	if len(r.Cells) > 1 {
		title += ", per cell"
	}
	grid, h := facets(plots)
	return &figureSpec{title: title, caption: caption, panels: grid, legend: leg, height: h}, "", nil
}
