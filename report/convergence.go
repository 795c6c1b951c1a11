package report

import (
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/plot"

	"github.com/rhomark/rhomark/results"
)

// cellTicks returns the cell numbers as nominal tick labels.
func cellTicks(r *results.Results) []string {
	out := make([]string, len(r.Cells))
	for i, c := range r.Cells {
		out[i] = strconv.Itoa(c.Index)
	}
	return out
}

// cellAxis sets a nominal x axis of cells on p.
func cellAxis(p *plot.Plot, r *results.Results) {
	p.NominalX(cellTicks(r)...)
	p.X.Min, p.X.Max = -0.5, float64(len(r.Cells))-0.5
	p.X.Label.Text = "cell (see the results tables for its settings)"
}

// dodgeStep is the sideways step between series on a nominal axis.
func dodgeStep(n int) float64 { return 0.6 / float64(max(1, n)) }

// ---------------------------------------------------------------------------
// Coverage.

// coverage draws the coverage of the 95% intervals per cell, one panel per
// coefficient.
func (fc *figureContext) coverage() (*figureSpec, string, error) {
	r := fc.r
	if len(r.Cells) == 0 {
		return nil, "", nil
	}
	var names []string
	var without []string
	has := map[string]bool{}
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			for _, k := range e.Coefficients {
				if !slices.Contains(names, k.Name) {
					names = append(names, k.Name)
				}
				if k.Intervals > 0 && finite(float64(k.Coverage.Value)) {
					has[e.Label] = true
				}
			}
		}
	}
	for l := range fc.series {
		if !has[l] {
			without = append(without, l)
		}
	}
	slices.Sort(without)
	if len(has) == 0 {
		return nil, "Coverage: no estimator in this run gives confidence intervals.", nil
	}
	var plots []*plot.Plot
	var labels []string
	for _, name := range names {
		var series []*seriesPoints
		for i, c := range r.Cells {
			for _, e := range c.Estimators {
				k, ok := coefficientNamed(e, name)
				if !ok || k.Intervals == 0 || !finite(float64(k.Coverage.Value)) {
					continue
				}
				v := float64(k.Coverage.Value)
				lo, hi := twoMCSE(k.Coverage, 0)
				hi = math.Min(hi, 1-v) // coverage lies in [0, 1]
				s := seriesOf(&series, e.Label)
				s.pts = append(s.pts, point{float64(i), v, lo, hi})
			}
		}
		p := newPlotGrid(false)
		p.Title.Text = name
		n, err := fc.addSeries(p, series, dodgeStep(len(series)), false)
		if err != nil {
			return nil, "", err
		}
		if n == 0 {
			continue
		}
		if _, err := addHLine(p, 0.95, -0.5, float64(len(r.Cells))-0.5, referenceLine()); err != nil {
			return nil, "", err
		}
		for _, s := range series {
			if !slices.Contains(labels, s.label) {
				labels = append(labels, s.label)
			}
		}
		cellAxis(p, r)
		p.Y.Label.Text = "coverage of 95% intervals"
		p.Y.Max = math.Max(p.Y.Max, 1)
		plots = append(plots, p)
	}
	leg := newLegend()
	fc.legendEstimators(leg, labels, false)
	caption := "Share of the 95% intervals that contain the true coefficient, per cell and estimator, one panel per coefficient; bars are ±2 MCSE (cut at 0 and 1). The dotted line is the nominal 0.95."
	if len(without) > 0 {
		caption += " No intervals: " + strings.Join(without, ", ") + "."
	}
	grid, h := facets(plots)
	return &figureSpec{title: r.Scenario.Name + ": coverage of 95% intervals per cell", caption: caption, panels: grid, legend: leg, height: h}, "", nil
}

// ---------------------------------------------------------------------------
// Failures.

// failures draws the rate of failed fits per cell and estimator, with
// Wilson 95% intervals.
func (fc *figureContext) failures() (*figureSpec, string, error) {
	r := fc.r
	failing := labelsWhere(r, func(e results.Estimator) bool { return e.Convergence.Converged < e.Convergence.Fits })
	if len(failing) == 0 {
		if len(r.Cells) == 0 {
			return nil, "", nil
		}
		return nil, "Failed fits: none; every fit in every cell ended with a usable solution.", nil
	}
	var series []*seriesPoints
	var clean []string
	for _, l := range estimatorOrder(fc) {
		if !failing[l] {
			clean = append(clean, l)
			continue
		}
		s := seriesOf(&series, l)
		for i, c := range r.Cells {
			for _, e := range c.Estimators {
				cv := e.Convergence
				if e.Label != l || cv.Fits == 0 {
					continue
				}
				w := results.Wilson(cv.Fits-cv.Converged, cv.Fits)
				v := float64(w.Value)
				s.pts = append(s.pts, point{float64(i), v, v - float64(w.Low), float64(w.High) - v})
			}
		}
	}
	p := newPlotGrid(false)
	if _, err := fc.addSeries(p, series, dodgeStep(len(series)), false); err != nil {
		return nil, "", err
	}
	cellAxis(p, r)
	p.Y.Min = 0
	p.Y.Label.Text = "share of fits that failed"
	leg := newLegend()
	fc.legendEstimators(leg, labelsOf(series), false)
	caption := "Share of fits that ended without a usable solution, per cell and estimator (not pooled over cells); bars are Wilson 95% intervals. The convergence table says which statuses they ended in."
	if len(clean) > 0 {
		caption += " No failed fit in any cell (not drawn): " + strings.Join(clean, ", ") + "."
	}
	return &figureSpec{title: r.Scenario.Name + ": failed fits per cell", caption: caption, panels: [][]*plot.Plot{{p}}, legend: leg}, "", nil
}

// estimatorOrder lists the estimators in their series order.
func estimatorOrder(fc *figureContext) []string {
	out := make([]string, len(fc.series))
	for l, i := range fc.series {
		out[i] = l
	}
	return out
}

func labelsOf(series []*seriesPoints) []string {
	var out []string
	for _, s := range series {
		if len(s.pts) > 0 {
			out = append(out, s.label)
		}
	}
	return out
}

// ---------------------------------------------------------------------------
// Iterations.

// iterations draws the mean iterations per cell of each iterative
// estimator, with ±2 MCSE bars, and the most any fit took as a small mark.
func (fc *figureContext) iterations() (*figureSpec, string, error) {
	r := fc.r
	iterative := labelsWhere(r, func(e results.Estimator) bool { return e.Convergence.MaxIterations > 0 })
	if len(iterative) == 0 {
		if len(r.Cells) == 0 {
			return nil, "", nil
		}
		return nil, "Iterations: no estimator in this run iterates.", nil
	}
	var series []*seriesPoints
	var direct []string
	maxIt := int64(0)
	for _, l := range estimatorOrder(fc) {
		if !iterative[l] {
			direct = append(direct, l)
			continue
		}
		s := seriesOf(&series, l)
		for i, c := range r.Cells {
			for _, e := range c.Estimators {
				cv := e.Convergence
				if e.Label != l || cv.MaxIterations == 0 || !finite(float64(cv.MeanIterations.Value)) {
					continue
				}
				lo, hi := twoMCSE(cv.MeanIterations, 0)
				s.pts = append(s.pts, point{float64(i), float64(cv.MeanIterations.Value), lo, hi})
				maxIt = max(maxIt, cv.MaxIterations)
			}
		}
	}
	p := newPlotGrid(false)
	if _, err := fc.addSeries(p, series, dodgeStep(len(series)), false); err != nil {
		return nil, "", err
	}
	cellAxis(p, r)
	p.Y.Min = 0
	p.Y.Label.Text = "mean iterations per fit"
	leg := newLegend()
	fc.legendEstimators(leg, labelsOf(series), false)
	caption := fmt.Sprintf("Mean iterations per fit, per cell and iterative estimator, with bars of ±2 MCSE; the most any fit took was %d (the convergence table gives the median and maximum per cell).", maxIt)
	if len(direct) > 0 {
		caption += " Not iterative: " + strings.Join(direct, ", ") + "."
	}
	return &figureSpec{title: r.Scenario.Name + ": iterations per cell", caption: caption, panels: [][]*plot.Plot{{p}}, legend: leg}, "", nil
}

// labelsWhere returns the labels of the estimators for which has holds in
// at least one cell.
func labelsWhere(r *results.Results, has func(results.Estimator) bool) map[string]bool {
	out := map[string]bool{}
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			if has(e) {
				out[e.Label] = true
			}
		}
	}
	return out
}
