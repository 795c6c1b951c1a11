package report

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"

	"github.com/rhomark/rhomark/results"
)

// tuningPaths lists the swept paths that set an estimator's constant (a
// path estimators.LABEL.tuning or estimators.LABEL.psi....) with numeric
// values, and the estimator each belongs to.
func tuningPaths(r *results.Results) (paths, labels []string) {
	for _, s := range results.Sweeps(r) {
		seg := strings.Split(s.Path, ".")
		if len(seg) < 3 || seg[0] != "estimators" || (seg[2] != "tuning" && seg[2] != "psi") {
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
			labels = append(labels, seg[1])
		}
	}
	return paths, labels
}

// constantName names a tuning path for an axis: "huber tuning constant"
// or "mine psi constant c".
func constantName(path, label string) string {
	seg := strings.Split(path, ".")
	if seg[2] == "tuning" {
		return label + " tuning constant"
	}
	return label + " psi constant " + seg[len(seg)-1]
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
