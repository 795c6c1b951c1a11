package report

import (
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"

	"github.com/rhomark/rhomark/results"
)

// functionMarkers is about how many markers a function curve carries: the
// curve itself is drawn through every grid point (hundreds), the markers
// only tell the series apart.
const functionMarkers = 10

// psiFunctions draws three panels: psi, rho and the weight of each
// M-estimator in r.Functions.
func (fc *figureContext) psiFunctions() (*figureSpec, string, error) {
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
		x := fn{label: f.Estimator + " (" + functionDesc(r, f) + ")", st: fc.style(f.Estimator)}
		x.psi = finiteXYs(f.U, f.PsiValues)
		x.rho = finiteXYs(f.U, f.Rho)
		x.w = finiteXYs(f.U, f.Weight)
		if len(x.psi) >= 2 || len(x.rho) >= 2 || len(x.w) >= 2 {
			fns = append(fns, x)
		}
	}
	if len(fns) == 0 {
		if len(r.Cells) == 0 {
			return nil, "", nil
		}
		return nil, "Psi, rho and weight: no M-estimator in this run (or a results file written without the sampled functions).", nil
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
			every := max(1, len(xys)/functionMarkers)
			if err := addCurve(panels[i], xys, f.st, f.st.line(seriesLineWidth), every, every/2+n*every/len(fns)); err != nil {
				return nil, "", err
			}
		}
		legendSeries(leg, f.label, f.st, f.st.line(seriesLineWidth))
	}
	for _, p := range panels {
		p.Y.Min = math.Min(p.Y.Min, 0)
		p.X.Min = math.Min(p.X.Min, 0)
	}
	title := r.Scenario.Name + ": psi, rho and weight functions"
	subtitle := ""
	if len(r.Cells) > 0 {
		subtitle = "as configured in " + cellName(r, r.Cells[0])
	}
	caption := "The psi function, its rho (objective) and the IRLS weight w(u) = psi(u)/u of each M-estimator against the standardised residual u = r/σ, for u ≥ 0 (psi is odd, rho and the weight are even), drawn through hundreds of points with every kink included exactly; markers only tell the estimators apart. Constants are those of the first cell; where a constant is swept, the other cells differ."
	grid := [][]*plot.Plot{{panels[0], panels[1]}, {panels[2], nil}}
	return &figureSpec{title: title, subtitle: subtitle, caption: caption, panels: grid, legend: leg}, "", nil
}

// functionDesc describes the psi drawn for f: what the harness recorded,
// with a custom psi's constants from the scenario added.
func functionDesc(r *results.Results, f results.FunctionCurve) string {
	if len(r.Cells) > 0 {
		c := r.Cells[0]
		for i, e := range c.Estimators {
			if e.Label != f.Estimator || e.Psi != "custom" {
				continue
			}
			desc := results.EstimatorDesc(r, e)
			// Where the constants are swept, the description leaves them
			// out; the curve is drawn at the first cell's.
			for _, s := range c.Settings {
				if t := s.Target(); t.Kind == results.SweepPsiConstant && t.Owns(e.Label, i) {
					desc += " " + t.Name + " = " + s.Value
				}
			}
			return desc
		}
	}
	if f.Psi == "" {
		return "psi"
	}
	return f.Psi
}
