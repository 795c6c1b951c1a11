package estimators

import (
	"gonum.org/v1/gonum/blas/blas64"

	"github.com/rhomark/rhomark/psi"
)

// MethodMM is the MM-estimator (Yohai (1987), Ann. Statist. 15:642-656):
// an S-estimate and its scale, then an M-step by IRLS from the S-estimate
// with the scale held fixed; the default psi is the bisquare with c =
// 4.6850649… (95% efficiency).
const MethodMM Method = 4

// mmSolver is the MM-estimator.
type mmSolver struct{}

func (mmSolver) info() MethodInfo {
	return MethodInfo{Name: "mm-estimate", Direct: true, TakesPsi: true, OwnStart: "the S-estimate's", OwnScale: MethodS.String(),
		DefaultPsi: psi.Bisquare{C: DefaultMMTuning}, DefaultFamily: "bisquare", SScale: true, Inference: Wald}
}

// fit runs the S-estimate, then the M-step.
func (mmSolver) fit(ws *Workspace, e Estimator, x blas64.General, y []float64, res *Result) {
	ws.mmStep(e, x, y, res, ws.sFit(x, y, res.Coefficients, e.Resampling))
}

// mmStep completes an MM fit from the S outcome out, whose coefficients are
// in res.Coefficients and residuals in ws.r: the M-step by IRLS with the
// MM psi at the S-scale. A refinement stopped at its cap still leaves a
// valid S-scale and the best candidate's coefficients, so the M-step starts
// from them, and res.SRefinement says so.
func (ws *Workspace) mmStep(e Estimator, x blas64.General, y []float64, res *Result, out sOutcome) {
	if !out.status.Converged() && out.status != IterationLimit {
		res.Status, res.Iterations = out.status, out.steps
		return
	}
	out.note(res)
	if out.scale == 0 {
		res.Status, res.Scale = ExactFit, 0
		return
	}
	mm := e
	if e.Method != MethodMM {
		// The MM-estimate as the start of another fit: its own psi (the
		// default bisquare), and not the caller's trace.
		mm = Estimator{Method: MethodMM, Settings: e.Settings, Resampling: e.Resampling}
	}
	mm.Psi = mm.MStepPsi()
	mm.Scale = Scale{Rule: ScaleFixed, Value: out.scale}
	mm.Method = MethodIRLS
	ws.iterate(mm, x, y, res)
}

// efficiency is that of the M-step's psi: the S-scale is consistent.
func (mmSolver) efficiency(e Estimator, _ float64, _, _ int) float64 {
	return psiEfficiency(e.MStepPsi(), 1)
}

func (mmSolver) covariance(ws *Workspace, e Estimator, res *Result, n, p int) (float64, bool) {
	return ws.huberCovariance(e.MStepPsi(), res.Scale, n, p)
}

func (mmSolver) curve(e Estimator) (psi.Psi, string) {
	if e.Psi == nil {
		return e.MStepPsi(), "bisquare"
	}
	return e.Psi, ""
}

func (mmSolver) rules(e Estimator, psiText string, seed uint64) FitRules {
	return FitRules{Start: "S-estimate from " + randomSubsets(seed),
		Scale:   "the S-estimate's scale, held fixed (" + sScaleText(e.Resampling) + ")",
		Weights: "psi(u)/u of " + psiText}
}

func (mmSolver) weights(e Estimator, r []float64, scale float64, _ int, w []float64) {
	psiWeights(e.MStepPsi(), r, scale, w)
}
