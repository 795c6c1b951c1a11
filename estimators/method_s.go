package estimators

import (
	"strconv"

	"gonum.org/v1/gonum/blas/blas64"

	"github.com/rhomark/rhomark/psi"
)

// MethodS is the S-estimator: the coefficients minimising an M-scale of
// the residuals built on the bisquare rho, by random elemental subsets and
// refinement steps (fast-S, Salibian-Barrera & Yohai (2006), J. Comput.
// Graph. Statist. 15:414-427). With the default c = 1.5476449809… its
// breakdown point is 50%.
const MethodS Method = 3

// sSolver is the S-estimator.
type sSolver struct{}

func (sSolver) info() MethodInfo {
	return MethodInfo{Name: "s-estimate", Direct: true, SScale: true}
}

// fit runs fast-S (sest.go); the objective is the S-scale itself.
func (sSolver) fit(ws *Workspace, e Estimator, x blas64.General, y []float64, res *Result) {
	out := ws.sFit(x, y, res.Coefficients, e.Resampling)
	res.Scale, res.Iterations, res.Status = out.scale, out.steps, out.status
	res.Objective = res.Scale
	out.note(res)
}

// efficiency is that of the M-estimator of the S-scale's bisquare.
func (sSolver) efficiency(e Estimator, _ float64, _, _ int) float64 {
	return psiEfficiency(e.Resampling.SScale(), 1)
}

func (sSolver) covariance(*Workspace, Estimator, *Result, int, int) (float64, bool) {
	return 0, false
}

func (sSolver) curve(e Estimator) (psi.Psi, string) {
	b := e.Resampling.SScale()
	return b, "S-scale bisquare " + strconv.FormatFloat(b.C, 'g', -1, 64)
}

func (sSolver) rules(e Estimator, _ string, seed uint64) FitRules {
	return FitRules{Start: randomSubsets(seed) + ", the best refined by IRLS", Scale: sScaleText(e.Resampling),
		Weights: "psi(u)/u of the S-scale's bisquare"}
}

func (sSolver) weights(e Estimator, r []float64, scale float64, _ int, w []float64) {
	b := e.Resampling.SScale()
	for i, v := range r {
		w[i] = b.Weight(scaledResidual(v, scale))
	}
}

// sScaleText describes the S-scale of rs.
func sScaleText(rs Resampling) string {
	return "S-scale of the bisquare rho with c = " + strconv.FormatFloat(rs.SScale().C, 'g', 5, 64) +
		", divisor " + rs.SDivisor.String()
}
