package estimators

import (
	"math"

	"gonum.org/v1/gonum/blas/blas64"

	"github.com/rhomark/rhomark/psi"
)

// MethodLAD is least absolute deviations solved exactly by a simplex-type
// vertex descent.
const MethodLAD Method = 6

// ladSolver is exact least absolute deviations.
type ladSolver struct{}

func (ladSolver) info() MethodInfo { return MethodInfo{Name: "lad", Direct: true} }

// fit descends to an optimal vertex; the objective is Σ|r_i| and the
// scale the MAD of the residuals.
func (ladSolver) fit(ws *Workspace, _ Estimator, x blas64.General, y []float64, res *Result) {
	beta := res.Coefficients
	res.Iterations, res.Status = ws.lad.fit(x, y, beta, nil)
	ws.residuals(x, y, beta)
	var sum float64
	for _, r := range ws.r {
		sum += math.Abs(r)
	}
	res.Objective = sum
	res.Scale = MAD(ws.r, ws.buf)
}

// efficiency is the median's, 2/π (common practice).
func (ladSolver) efficiency(Estimator, float64, int, int) float64 { return 2 / math.Pi }

func (ladSolver) covariance(*Workspace, Estimator, *Result, int, int) (float64, bool) {
	return 0, false
}

func (ladSolver) curve(e Estimator) (psi.Psi, string) { return e.Psi, "" }

func (ladSolver) rules(Estimator, string, uint64) FitRules {
	return FitRules{Start: "none (exact vertex descent)", Scale: "MAD of the residuals (only to scale them)",
		Weights: "none (least absolute deviations has no weights)"}
}

func (ladSolver) weights(_ Estimator, _ []float64, _ float64, _ int, w []float64) {
	for i := range w {
		w[i] = math.NaN()
	}
}
