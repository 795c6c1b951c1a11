package report

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/plot"

	"github.com/rhomark/rhomark/results"
)

// The solver audit in the report: a section with the audit's answer per
// cell and the stopping rules side by side, and two figures drawn from the
// audit's tolerance table (iterations needed, and error left, against the
// change tolerance). Nothing is drawn or written for a run without an
// audit.

// solverAuditView is the report's section on the solver audit.
type solverAuditView struct {
	Overall []string // the answer over all cells (results.ScenarioStopLines)
	Cells   []solverAuditCell
	Notes   []string
}

// solverAuditCell is one cell's audit: the answer lines and the table.
type solverAuditCell struct {
	Heading string
	Lines   []string
	Rows    []solverAuditRow
}

// solverAuditRow is one audited estimator of a cell.
type solverAuditRow struct {
	Label, Rule, Iterations, Median, Max, Over, Rate string
	OverFlag                                         bool
}

// solverAudit builds the section, or nil when r has no solver study.
func solverAudit(r *results.Results) *solverAuditView {
	if !results.HasSolverStudy(r) {
		return nil
	}
	v := &solverAuditView{Overall: results.ScenarioStopLines(r)}
	notes := map[string]bool{}
	for _, c := range r.Cells {
		sc := solverAuditCell{Heading: fmt.Sprintf("Cell %d", c.Index)}
		if len(c.Settings) > 0 {
			sc.Heading += " (" + results.SettingsText(c.Settings) + ")"
		}
		sc.Lines = results.SolverStudyLines(r, c)
		for _, w := range results.RuleRows(r, c) {
			row := solverAuditRow{Label: w.Label, Rule: w.Rule, Iterations: w.Iterations, Median: w.Median, Max: w.Max, Over: w.Over, Rate: "—", OverFlag: w.OverFlag}
			if w.RateKind != "" {
				row.Rate = w.RateMedian + " (" + w.RateKind + ")"
				if w.RateNote != "" && !notes[w.RateNote] {
					notes[w.RateNote] = true
					v.Notes = append(v.Notes, w.Label+": "+w.RateNote+".")
				}
			}
			sc.Rows = append(sc.Rows, row)
		}
		if len(sc.Lines) > 0 {
			v.Cells = append(v.Cells, sc)
		}
	}
	return v
}

// auditedSeries collects, per cell, one series per audited iterative
// estimator of y(row) against the number of digits of the change
// tolerance (2 for 1e-2 … 14 for 1e-14), leaving out rows where y is not
// finite.
func (fc *figureContext) auditedSeries(y func(results.ToleranceCost) float64) ([]*plot.Plot, [][]*seriesPoints) {
	var plots []*plot.Plot
	var all [][]*seriesPoints
	for _, c := range fc.r.Cells {
		var series []*seriesPoints
		for _, e := range c.Estimators {
			if len(e.Convergence.Tolerances) == 0 {
				continue
			}
			s := seriesOf(&series, e.Label)
			for _, row := range e.Convergence.Tolerances {
				if v := y(row); row.Reached > 0 && finite(v) {
					s.pts = append(s.pts, point{-math.Log10(row.Tolerance), v, 0, 0})
				}
			}
		}
		if len(series) == 0 {
			continue
		}
		p := newPlotGrid(false)
		p.Title.Text = fmt.Sprintf("cell %d", c.Index)
		p.X.Label.Text = "change tolerance 10^-x: x"
		plots = append(plots, p)
		all = append(all, series)
	}
	return plots, all
}

// toleranceFigure draws y(row) against the change tolerance for every
// audited iterative estimator, a panel per cell; decorate finishes each
// panel (axis, reference lines). nil when no estimator was audited.
func (fc *figureContext) toleranceFigure(y func(results.ToleranceCost) float64, decorate func(*plot.Plot) error, title, caption string) (*figureSpec, string, error) {
	plots, all := fc.auditedSeries(y)
	if len(plots) == 0 {
		return nil, "", nil
	}
	var labels []string
	for i, p := range plots {
		if _, err := fc.addSeries(p, all[i], 0, true); err != nil {
			return nil, "", err
		}
		if err := decorate(p); err != nil {
			return nil, "", err
		}
		for _, s := range all[i] {
			if len(s.pts) > 0 && !slices.Contains(labels, s.label) {
				labels = append(labels, s.label)
			}
		}
	}
	leg := newLegend()
	fc.legendEstimators(leg, labels, true)
	grid, h := facets(plots)
	return &figureSpec{title: fc.r.Scenario.Name + ": " + title, caption: caption, panels: grid, legend: leg, height: h}, "", nil
}

// toleranceIterations draws the median iterations each change tolerance
// needs, per cell and audited estimator.
func (fc *figureContext) toleranceIterations() (*figureSpec, string, error) {
	return fc.toleranceFigure(func(row results.ToleranceCost) float64 { return float64(row.MedianIterations) },
		func(p *plot.Plot) error {
			p.Y.Min = 0
			p.Y.Label.Text = "median iterations"
			return nil
		},
		"iterations needed against the change tolerance",
		"Iterations needed against the stopping tolerance: for each audited fit, the first iteration whose relative change ‖Δβ‖/‖β‖ is at most 10^-x, counted along the fit's own iterations continued to the fixed point; the median over fits, per cell and estimator. Read it with the next figure to pick the loosest tolerance that leaves the estimate close enough.")
}

// toleranceError draws the largest stopping-rule error each change
// tolerance leaves, in standard errors (log10), with the 0.01 SE line.
func (fc *figureContext) toleranceError() (*figureSpec, string, error) {
	return fc.toleranceFigure(func(row results.ToleranceCost) float64 {
		if !(row.MaxErrorSE > 0) {
			return math.NaN()
		}
		return math.Log10(float64(row.MaxErrorSE))
	},
		func(p *plot.Plot) error {
			if _, err := addHLine(p, math.Log10(results.StopErrorThreshold), 2, 14, referenceLine()); err != nil {
				return err
			}
			p.Y.Label.Text = "log10 largest error (SE)"
			return nil
		},
		"stopping-rule error against the change tolerance",
		"Error left against the stopping tolerance: the largest distance over fits (worst coefficient) from the fixed point, in the coefficient's standard errors, on a log10 scale, if each fit had stopped at change tolerance 10^-x. The dotted line is 0.01 SE; a tolerance whose point lies below it leaves every fit within a hundredth of its standard error. A point is missing where no fit reached that tolerance, or where the error there was exactly 0.")
}
