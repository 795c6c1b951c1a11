package estimators

import (
	"gonum.org/v1/gonum/blas/blas64"

	"github.com/rhomark/rhomark/psi"
)

// MethodLS is ordinary least squares by Householder QR.
const MethodLS Method = 0

// lsSolver is least squares.
type lsSolver struct{}

func (lsSolver) info() MethodInfo {
	return MethodInfo{Name: "ls", Direct: true, Inference: StudentT}
}

// fit solves by QR, with a step of iterative refinement when least squares
// is the estimate itself rather than a start.
func (lsSolver) fit(ws *Workspace, e Estimator, x blas64.General, y []float64, res *Result) {
	beta := res.Coefficients
	if !ws.leastSquares(x, y, beta, e.Method == MethodLS) {
		res.Status = SingularDesign
		return
	}
	ws.residuals(x, y, beta)
	ws.finishLS(x, res)
}

func (lsSolver) efficiency(Estimator, float64, int, int) float64 { return 1 }

// covariance is s² = RSS/(n−p), the classical √(s² [(XᵀX)⁻¹]_jj) standard
// errors.
func (lsSolver) covariance(_ *Workspace, _ Estimator, res *Result, _, _ int) (float64, bool) {
	return res.Scale * res.Scale, true
}

func (lsSolver) curve(e Estimator) (psi.Psi, string) { return e.Psi, "" }

func (lsSolver) rules(Estimator, string, uint64) FitRules {
	return FitRules{Start: "none (solved directly by QR)", Scale: "√(RSS/(n−p))", Weights: "1 for every row (least squares)"}
}

func (lsSolver) weights(_ Estimator, _ []float64, _ float64, _ int, w []float64) {
	for i := range w {
		w[i] = 1
	}
}
