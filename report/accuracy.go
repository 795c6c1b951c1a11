package report

import (
	"fmt"
	"image/color"
	"math"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"github.com/rhomark/rhomark/results"
)

// tuningPaths lists the swept paths that set an estimator's constant (a
// path estimators.LABEL.tuning or estimators.LABEL.psi....) with numeric
// values, and the estimator each belongs to.
func tuningPaths(r *results.Results) (paths, labels []string) {
	for _, s := range results.Sweeps(r) {
		t := results.TargetOf(s.Path)
		if k := t.Kind; k != results.SweepTuning && k != results.SweepPsiConstant && k != results.SweepPsi {
			continue
		}
		n := 0
		for _, v := range s.Values {
			if _, ok := parseSettingNumber(v); ok {
				n++
			}
		}
		if n >= 2 {
			paths = append(paths, s.Path)
			labels = append(labels, t.Owner)
		}
	}
	return paths, labels
}

// constantName names a tuning path for an axis: "huber tuning constant"
// or "mine psi constant c".
func constantName(path, label string) string {
	t := results.TargetOf(path)
	if t.Kind == results.SweepTuning {
		return label + " tuning constant"
	}
	return label + " psi constant " + t.Name
}

// noTuning is the note for the accuracy figures of a run that sweeps no
// constant.
const noTuning = "RMSE and efficiency against a tuning constant: no estimator's constant is swept in this scenario; the results tables give each cell's RMSE and efficiency."

// rmseVsTuning draws each estimator's verdict score (its worst
// coefficient's RMSE relative to the reference) against a swept tuning
// constant, one panel per combination of the other sweeps.
func (fc *figureContext) rmseVsTuning() (*figureSpec, string, error) {
	r := fc.r
	paths, owners := tuningPaths(r)
	if len(paths) == 0 {
		return nil, noTuning, nil
	}
	var plots []*plot.Plot
	var labels []string
	var notes []string
	criterion := ""
	excluded := map[string]bool{}
	for pi, path := range paths {
		groups, note := capFacets(facetGroups(r, path))
		if note != "" {
			notes = append(notes, note)
		}
		for _, g := range groups {
			var series []*seriesPoints
			xmin, xmax := math.Inf(1), math.Inf(-1)
			for _, c := range g.cells {
				v, _ := settingValue(c.Settings, path)
				x, ok := parseSettingNumber(v)
				if !ok {
					continue
				}
				xmin, xmax = math.Min(xmin, x), math.Max(xmax, x)
				vd := results.VerdictOf(r, c)
				criterion = vd.Criterion
				for _, x := range vd.NotRecommended {
					excluded[x.Estimator] = true
				}
				for _, k := range vd.Ranking {
					if k.Estimator == r.Reference && strings.HasSuffix(vd.Criterion, " "+r.Reference) {
						continue // 1 by definition: the dotted line
					}
					y := float64(k.Score.Value)
					if !finite(y) {
						continue
					}
					lo, hi := twoMCSE(k.Score, 0)
					s := seriesOf(&series, k.Estimator)
					s.pts = append(s.pts, point{x, y, lo, hi})
				}
			}
			p := newPlot()
			panelTitle(p, g.settings)
			n, err := fc.addSeries(p, series, 0.012*(xmax-xmin), true)
			if err != nil {
				return nil, "", err
			}
			if n == 0 {
				continue
			}
			if strings.HasSuffix(criterion, " "+r.Reference) {
				if _, err := addHLine(p, 1, xmin, xmax, referenceLine()); err != nil {
					return nil, "", err
				}
			}
			for _, s := range series {
				if len(s.pts) > 0 && !slices.Contains(labels, s.label) {
					labels = append(labels, s.label)
				}
			}
			p.X.Label.Text = constantName(path, owners[pi])
			p.Y.Label.Text = "RMSE relative to " + r.Reference
			if !strings.HasSuffix(criterion, " "+r.Reference) {
				p.Y.Label.Text = "RMSE relative to the best"
			}
			plots = append(plots, p)
		}
	}
	if len(plots) == 0 {
		return nil, "RMSE against the tuning constant: no recommended estimator has a score in the swept cells.", nil
	}
	leg := newLegend()
	fc.legendEstimators(leg, labels, true)
	if strings.HasSuffix(criterion, " "+r.Reference) {
		leg.Add(r.Reference+" (reference) = 1", &plotter.Line{LineStyle: referenceLine()})
	}
	caption := fmt.Sprintf("The verdict's score (%s: the RMSE on an estimator's worst coefficient as a multiple of the reference's on the same datasets; lower is better) against the swept constant (%s), one panel per combination of the other sweeps; bars are ±2 MCSE.", criterion, strings.Join(paths, ", "))
	if strings.HasSuffix(criterion, " "+r.Reference) {
		caption += fmt.Sprintf(" The dotted line is %s itself (1 by definition).", r.Reference)
	}
	if len(excluded) > 0 {
		var ex []string
		for l := range excluded {
			ex = append(ex, l)
		}
		slices.Sort(ex)
		caption += " Estimators not recommended in a cell (see the verdict) have no point there: " + strings.Join(ex, ", ") + "."
	}
	caption += strings.Join(notes, "")
	grid, h := facets(plots)
	return &figureSpec{title: r.Scenario.Name + ": RMSE against the tuning constant", caption: caption, panels: grid, legend: leg, height: h}, "", nil
}

// efficiencyVsTuning draws each asymptotic tuning curve with the simulated
// variance efficiency of the first slope in the cells along it, one panel
// per combination of the other sweeps.
func (fc *figureContext) efficiencyVsTuning() (*figureSpec, string, error) {
	r := fc.r
	paths, owners := tuningPaths(r)
	if len(paths) == 0 {
		return nil, "", nil // rmse-vs-tuning says why
	}
	var plots []*plot.Plot
	var labels []string
	var notes []string
	theory := false
	slopes := map[string]bool{}
	for pi, path := range paths {
		groups, note := capFacets(facetGroups(r, path))
		if note != "" {
			notes = append(notes, note)
		}
		for _, g := range groups {
			p := newPlot()
			panelTitle(p, g.settings)
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
				// No markers on the asymptotic line: markers mean
				// simulated points.
				if err := addCurve(p, curve, st, st.line(seriesLineWidth), 0, 0); err != nil {
					return nil, "", err
				}
				xmin, xmax = math.Min(xmin, curve[0].X), math.Max(xmax, curve[len(curve)-1].X)
				theory = true
				drawn++
			}
			var series []*seriesPoints
			for _, c := range g.cells {
				v, _ := settingValue(c.Settings, path)
				x, ok := parseSettingNumber(v)
				if !ok {
					continue
				}
				xmin, xmax = math.Min(xmin, x), math.Max(xmax, x)
				for _, e := range c.Estimators {
					if e.Label != owners[pi] {
						continue
					}
					k, ok := firstSlope(e)
					if !ok || !finite(float64(k.RelEff.Value)) {
						continue
					}
					slopes[k.Name] = true
					lo, hi := twoMCSE(k.RelEff, 0)
					s := seriesOf(&series, e.Label)
					s.pts = append(s.pts, point{x, float64(k.RelEff.Value), lo, hi})
				}
			}
			n, err := fc.addSeries(p, series, 0, false)
			if err != nil {
				return nil, "", err
			}
			var xs []float64
			for _, s := range series {
				for _, q := range s.pts {
					if !slices.Contains(xs, q.x) {
						xs = append(xs, q.x)
					}
				}
			}
			if len(xs) >= 2 && len(xs) <= 12 {
				slices.Sort(xs)
				p.X.Tick.Marker = valueTicks(xs)
			}
			if n+drawn == 0 {
				continue
			}
			if !slices.Contains(labels, owners[pi]) {
				labels = append(labels, owners[pi])
			}
			if _, err := addHLine(p, 1, xmin, xmax, referenceLine()); err != nil {
				return nil, "", err
			}
			p.X.Label.Text = constantName(path, owners[pi])
			p.Y.Label.Text = "variance efficiency vs " + r.Reference
			plots = append(plots, p)
		}
	}
	if len(plots) == 0 {
		return nil, "Efficiency against the tuning constant: no finite efficiency to draw.", nil
	}
	leg := newLegend()
	fc.legendEstimators(leg, labels, theory) // markers only when no curve is drawn
	var names []string
	for n := range slopes {
		names = append(names, n)
	}
	slices.Sort(names)
	caption := fmt.Sprintf("Points: simulated variance efficiency against %s of the first slope (%s) in each cell, with bars of ±2 MCSE; it ignores bias, so read it beside the RMSE figure.", r.Reference, strings.Join(names, ", "))
	if theory {
		caption += " Lines: asymptotic efficiency at the normal model as the constant varies, the same in every panel; it describes the uncontaminated normal model only."
	} else {
		caption += " No asymptotic curve: the theory is computed for built-in psi families only."
	}
	caption += " The dotted line marks equal efficiency." + strings.Join(notes, "")
	grid, h := facets(plots)
	return &figureSpec{title: r.Scenario.Name + ": efficiency against the tuning constant", caption: caption, panels: grid, legend: leg, height: h}, "", nil
}

// ---------------------------------------------------------------------------
// Bias, SE and RMSE per coefficient against a tuning constant.

// maxTuningRows is the most coefficients (rows of panels) a tuning-accuracy
// figure draws; the caption says how many more there were.
const maxTuningRows = 6

// tuningRowHeight is the height of one row of a tuning-accuracy figure, and
// tuningHeader the room for the title and the bottom axis label.
const (
	tuningRowHeight = 2.05 * vg.Inch
	tuningHeader    = 0.75 * vg.Inch
)

// tuningMeasures are the columns of a tuning-accuracy figure: what each
// panel draws of a coefficient, and the floor of its ±2 MCSE bars.
func tuningMeasures() []struct {
	name  string
	of    func(results.TuningCoefficient) results.Measure
	floor float64
} {
	return []struct {
		name  string
		of    func(results.TuningCoefficient) results.Measure
		floor float64
	}{
		{"bias", func(k results.TuningCoefficient) results.Measure { return k.Bias }, math.Inf(-1)},
		{"SE", func(k results.TuningCoefficient) results.Measure { return k.EmpSE }, 0},
		{"RMSE", func(k results.TuningCoefficient) results.Measure { return k.RMSE }, 0},
	}
}

// tuningAccuracy draws, for each tuning study of the run (see
// results.TuningStudy), the bias, SE and RMSE of the tuned estimator's
// every coefficient against the swept constant: one row of panels per
// coefficient, the intercept included, one column per measure, one line
// per level of the other sweeps, with the recommended and the target
// constant marked.
func (fc *figureContext) tuningAccuracy() ([]*figureSpec, []Omission, error) {
	r := fc.r
	rec := results.RecommendationOf(r)
	if rec == nil || len(rec.Studies) == 0 {
		why := "Bias, SE and RMSE per coefficient against a tuning constant: no estimator's tuning constant is swept in this scenario, so there is no tuning study to draw."
		if rec != nil && len(rec.Notes) > 0 {
			why = "Bias, SE and RMSE per coefficient against a tuning constant: no tuning study could be made (" + strings.Join(rec.Notes, "; ") + ")."
		}
		return nil, []Omission{{Name: "tuning-accuracy", Reason: why}}, nil
	}
	var specs []*figureSpec
	var notes []Omission
	for _, ts := range rec.Studies {
		name := "tuning-accuracy"
		if len(rec.Studies) > 1 {
			name += "-" + ts.Estimator
		}
		spec, why, err := fc.tuningStudyFigure(ts, rec.TargetEfficiency)
		if err != nil {
			return nil, nil, fmt.Errorf("%s: %w", name, err)
		}
		if spec == nil {
			notes = append(notes, Omission{Name: name, Reason: why})
			continue
		}
		spec.name = name
		specs = append(specs, spec)
	}
	return specs, notes, nil
}

// tuningCoefficients returns a tuning point's coefficients, with the RMSE
// formed from the cell's MSE where a file from before the RMSE was reported
// lacks it (see withRMSE).
func tuningCoefficients(r *results.Results, pt results.TuningPoint, label string) []results.TuningCoefficient {
	var cell *results.Cell
	for i := range r.Cells {
		if r.Cells[i].Index == pt.Cell {
			cell = &r.Cells[i]
			break
		}
	}
	if cell == nil {
		return pt.Coefficients
	}
	var e *results.Estimator
	fixed := withRMSE(*cell)
	for i := range fixed.Estimators {
		if fixed.Estimators[i].Label == label {
			e = &fixed.Estimators[i]
		}
	}
	if e == nil {
		return pt.Coefficients
	}
	out := slices.Clone(pt.Coefficients)
	for i := range out {
		if k, ok := coefficientNamed(*e, out[i].Name); ok && out[i].RMSE.Value == 0 && out[i].RMSE.MCSE == 0 {
			out[i].RMSE = k.RMSE
		}
	}
	return out
}

// tuningLevelName names a level of a tuning study for the legend, marking
// the clean one.
func tuningLevelName(l results.TuningLevel) string {
	s := shortSettings(l.Settings)
	if s == "" {
		s = "all cells"
	}
	if l.Clean {
		s += " (clean)"
	}
	return s
}

// tuningStudyFigure draws one tuning study (see tuningAccuracy), whose
// target pick aims at the given efficiency, or says why it cannot.
func (fc *figureContext) tuningStudyFigure(ts results.TuningStudy, target float64) (*figureSpec, string, error) {
	r := fc.r
	what := fmt.Sprintf("Bias, SE and RMSE of %s against %s", ts.Estimator, ts.Path)
	var bad []string
	for _, tc := range ts.Constants {
		if !finite(float64(tc.Constant)) {
			bad = append(bad, tc.Value)
		}
	}
	if len(bad) > 0 {
		return nil, fmt.Sprintf("%s: the swept values %s are not numbers, so they have no numeric axis; the tuning study's table gives each value.", what, strings.Join(bad, ", ")), nil
	}
	if len(ts.Constants) < 2 {
		return nil, fmt.Sprintf("%s: only one constant is swept, so there is no curve to draw.", what), nil
	}
	// The coefficients, in the order of their first appearance.
	var coefs []string
	for _, tc := range ts.Constants {
		for _, pt := range tc.Points {
			for _, k := range pt.Coefficients {
				if !slices.Contains(coefs, k.Name) {
					coefs = append(coefs, k.Name)
				}
			}
		}
	}
	if len(coefs) == 0 {
		return nil, what + ": no cell of the study has a fitted coefficient to draw.", nil
	}
	note := ""
	if len(coefs) > maxTuningRows {
		note = fmt.Sprintf(" Only the first %d of %d coefficients are drawn; the tables give every one.", maxTuningRows, len(coefs))
		coefs = coefs[:maxTuningRows]
	}
	xmin := float64(ts.Constants[0].Constant)
	xmax := float64(ts.Constants[len(ts.Constants)-1].Constant)
	step := 0.02 * (xmax - xmin) // the levels dodged sideways, so bars do not overlap
	nl := len(ts.Levels)
	measures := tuningMeasures()
	short := strings.TrimPrefix(constantName(ts.Path, ts.Estimator), ts.Estimator+" ")
	recX, tgtX := float64(ts.Recommended), float64(ts.Target.Constant)

	grid := make([][]*plot.Plot, len(coefs))
	for row, coef := range coefs {
		grid[row] = make([]*plot.Plot, len(measures))
		for col, m := range measures {
			p := newPlot()
			p.Title.Text = coef + ": " + m.name
			// Under the data, so that the marks never hide a bar.
			p.Add(constantMarks{recommended: recX, target: tgtX, labels: row == 0})
			if row == len(coefs)-1 {
				// Short, so that it fits under a third of the width.
				p.X.Label.Text = short
			}
			for l := range ts.Levels {
				st := styleOf(l)
				off := step * (float64(l) - float64(nl-1)/2)
				var xys plotter.XYs
				var lo, hi []float64
				for _, tc := range ts.Constants {
					ks := tuningCoefficients(r, tc.Points[l], ts.Estimator)
					i := slices.IndexFunc(ks, func(k results.TuningCoefficient) bool { return k.Name == coef })
					if i < 0 {
						continue
					}
					v := m.of(ks[i])
					if !finite(float64(v.Value)) {
						continue
					}
					a, b := twoMCSE(v, m.floor)
					xys = append(xys, plotter.XY{X: float64(tc.Constant) + off, Y: float64(v.Value)})
					lo, hi = append(lo, a), append(hi, b)
				}
				if len(xys) >= 2 {
					if err := addCurve(p, xys, st, st.line(seriesLineWidth), 0, 0); err != nil {
						return nil, "", err
					}
				}
				if err := addPoints(p, xys, lo, hi, st); err != nil {
					return nil, "", err
				}
			}
			if col == 0 {
				if _, err := addHLine(p, 0, xmin, xmax, zeroLine()); err != nil {
					return nil, "", err
				}
			}
			p.X.Min, p.X.Max = xmin-(xmax-xmin)*0.03, xmax+(xmax-xmin)*0.03
			grid[row][col] = p
		}
		// SE and RMSE are in the same units: one y range, so that the gap
		// between them (the bias) reads at a glance.
		shareY(grid[row][1], grid[row][2])
	}

	var keys []legendKey
	var levels []string
	for l, lv := range ts.Levels {
		st := styleOf(l)
		keys = append(keys, legendKey{tuningLevelName(lv), []plot.Thumbnailer{&plotter.Line{LineStyle: st.line(seriesLineWidth)}, &plotter.Scatter{GlyphStyle: st.glyph(markerRadius)}}})
		levels = append(levels, tuningLevelName(lv))
	}
	keys = append(keys, legendKey{"no bias", []plot.Thumbnailer{&plotter.Line{LineStyle: zeroLine()}}})
	caption := fmt.Sprintf("Bias (mean estimate minus the true value), SE (standard deviation of the estimates) and RMSE of %s's every coefficient, the intercept included (one row each, in the coefficient's units), against its swept constant %s; one line per level of the other sweeps (%s), the levels dodged sideways a little so that their bars do not overlap. Bars are ±2 MCSE; the dashed line in the bias panels is no bias; the SE and RMSE panels of a row share their y axis, so the gap between them is what the bias adds.",
		ts.Estimator, ts.Path, strings.Join(levels, "; "))
	switch {
	case finite(recX) && finite(tgtX) && recX == tgtX:
		keys = append(keys, legendKey{"recommended = target: " + ts.RecommendedValue, []plot.Thumbnailer{&plotter.Line{LineStyle: recommendedLine()}}})
		caption += fmt.Sprintf(" The dotted vertical line is %s, both %s and %s.", ts.RecommendedValue, recommendedWhy, targetWhy(ts, target))
	default:
		if finite(recX) {
			keys = append(keys, legendKey{"recommended: " + ts.RecommendedValue, []plot.Thumbnailer{&plotter.Line{LineStyle: recommendedLine()}}})
			caption += fmt.Sprintf(" The dotted vertical line is %s, %s.", ts.RecommendedValue, recommendedWhy)
		} else {
			caption += " No constant is recommended (see the tuning study)."
		}
		if finite(tgtX) {
			keys = append(keys, legendKey{fmt.Sprintf("target (%s efficiency ≥ %s): %s", ts.Target.Basis, fmtG(target), ts.Target.Value), []plot.Thumbnailer{&plotter.Line{LineStyle: targetLine()}}})
			caption += fmt.Sprintf(" The dash-dot vertical line is %s, %s.", ts.Target.Value, targetWhy(ts, target))
		} else if ts.Target.Note != "" {
			caption += " No target constant: " + ts.Target.Note + "."
		}
	}
	var excluded []string
	for _, tc := range ts.Constants {
		if tc.Excluded != "" {
			excluded = append(excluded, tc.Value+" ("+tc.Excluded+")")
		}
	}
	if len(excluded) > 0 {
		caption += " Drawn but not eligible for the recommendation: " + strings.Join(excluded, "; ") + "."
	}
	caption += note
	title := fmt.Sprintf("%s: bias, SE and RMSE of %s against its %s", r.Scenario.Name, ts.Estimator, short)
	h := tuningHeader + vg.Length(len(coefs))*tuningRowHeight
	return &figureSpec{title: title, caption: caption, panels: grid, keys: keys, height: h}, "", nil
}

// recommendedWhy says what the recommended constant of a tuning study is.
const recommendedWhy = "the recommended constant (its RMSE on its worst coefficient, as a multiple of the best swept constant's at the same level, has the smallest worst case over the levels)"

// targetWhy says what the target constant of a tuning study is, with its
// efficiency.
func targetWhy(ts results.TuningStudy, target float64) string {
	eff := results.PlusMinus(ts.Target.Efficiency, false)
	if ts.Target.Basis == results.Asymptotic {
		eff = strconv.FormatFloat(float64(ts.Target.Efficiency.Value), 'f', 4, 64)
	}
	return fmt.Sprintf("the target constant (the smallest swept constant whose %s efficiency on clean data reaches %s; it is %s there)", ts.Target.Basis, fmtG(target), eff)
}

// zeroLine is the style of the no-bias line of the tuning-accuracy figure.
func zeroLine() draw.LineStyle {
	return draw.LineStyle{Color: color.Gray{Y: 90}, Width: vg.Points(0.9), Dashes: []vg.Length{vg.Points(5), vg.Points(3)}}
}

// recommendedLine is the style of the mark at the recommended constant.
func recommendedLine() draw.LineStyle {
	return draw.LineStyle{Color: color.Gray{Y: 30}, Width: vg.Points(1.2), Dashes: []vg.Length{vg.Points(1.2), vg.Points(2.4)}}
}

// targetLine is the style of the mark at the target constant.
func targetLine() draw.LineStyle {
	return draw.LineStyle{Color: color.Gray{Y: 30}, Width: vg.Points(1), Dashes: []vg.Length{vg.Points(7), vg.Points(2.5), vg.Points(1.2), vg.Points(2.5)}}
}

// constantMarks draws the recommended and the target constant as vertical
// lines over the whole height of a panel (NaN: no line), labelled at the
// top when labels is set: the recommended constant's label on the top
// line, the target's one line lower, so that two close constants do not
// write over each other, each to the right of its line unless it would
// leave the panel. It has no data range, so it never widens an axis.
type constantMarks struct {
	recommended, target float64
	labels              bool
}

// Plot implements plot.Plotter.
func (m constantMarks) Plot(c draw.Canvas, p *plot.Plot) {
	trX, _ := p.Transforms(&c)
	ts := draw.TextStyle{Color: color.Gray{Y: 30}, Font: font.From(sansFace(), 7.5), YAlign: draw.YTop, Handler: plot.DefaultTextHandler}
	mark := func(x float64, ls draw.LineStyle, label string, line int) {
		if !finite(x) {
			return
		}
		cx := trX(x)
		if cx < c.Min.X || cx > c.Max.X {
			return
		}
		c.StrokeLine2(ls, cx, c.Min.Y, cx, c.Max.Y)
		if !m.labels {
			return
		}
		t := ts
		t.XAlign = draw.XLeft
		at := vg.Point{X: cx + vg.Points(2), Y: c.Max.Y - vg.Points(1) - vg.Length(line)*ts.Height("Mg")}
		if cx+vg.Points(2)+ts.Width(label) > c.Max.X {
			t.XAlign = draw.XRight
			at.X = cx - vg.Points(2)
		}
		c.FillText(t, at, label)
	}
	if m.recommended == m.target {
		mark(m.recommended, recommendedLine(), "recommended = target", 0)
		return
	}
	mark(m.recommended, recommendedLine(), "recommended", 0)
	mark(m.target, targetLine(), "target", 1)
}
