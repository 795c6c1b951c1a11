package estimators

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/rhomark/rhomark/psi"
)

// FitRules says in words how a fit is made, for people reading one fit's
// output.
type FitRules struct {
	// Start says where the fit starts.
	Start string
	// Scale says how its residual scale is found.
	Scale string
	// Weights says what the per-observation weight is.
	Weights string
}

// Rules says in words where a fit of e starts, how its scale is found and
// what its per-observation weight is. psiText names e's psi with its
// constants, and seed is the seed of the random subsets, if e draws any.
func (e Estimator) Rules(psiText string, seed uint64) FitRules {
	s := solverOf(e.Method)
	if s == nil {
		return FitRules{}
	}
	return s.rules(e, psiText, seed)
}

// NoStandardErrorsReason says why a fit of e into res, with n observations
// and p coefficients, has no standard errors (Workspace.StandardErrors
// returned false).
func (e Estimator) NoStandardErrorsReason(res *Result, n, p int) string {
	switch {
	case e.Method.Info().Inference == NoInference:
		return fmt.Sprintf("rhomark has no covariance estimate for %s fits (a run's coverage leaves them out too)", e.Method)
	case !res.Status.Converged():
		return "the fit did not converge (" + res.Status.String() + ")"
	case n <= p:
		return fmt.Sprintf("n = %d rows leave no degrees of freedom for %d coefficients", n, p)
	case e.Method.Info().Inference == Wald && psi.Discontinuous(e.MStepPsi()):
		return "psi jumps: the mean of psi' misses the jumps' share of E[psi'], so the covariance formula would understate the standard errors"
	}
	return "the covariance formula is undefined at this fit (the mean of psi' over the rows is not positive, or the scale is zero)"
}

// Weights writes to w (len(r) values) the final weight of each observation
// after a fit of e with p coefficients, given its residuals r and scale:
// psi(u)/u at u = r/scale for an M-estimator (and the M-step of MM) and
// for S (its S-scale's bisquare), 1 for least squares, 1 or 0 for LTS
// (kept or trimmed), and NaN where the method has no weights (LAD) or the
// scale is not positive and finite.
func (e Estimator) Weights(r []float64, scale float64, p int, w []float64) {
	s := solverOf(e.Method)
	if s == nil {
		for i := range w[:len(r)] {
			w[i] = math.NaN()
		}
		return
	}
	s.weights(e, r, scale, p, w[:len(r)])
}

// Quantile returns the multiplier q of the interval estimate ± q ×
// standard error whose one-sided coverage is prob (0.975 for a two-sided
// 95% interval), for a fit with n observations and p coefficients, and the
// rule in words: Student's t on n−p degrees of freedom for StudentT, the
// normal quantile for Wald; 0 and "" for NoInference.
func (i Inference) Quantile(prob float64, n, p int) (q float64, rule string) {
	switch i {
	case StudentT:
		q = distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(n - p)}.Quantile(prob)
		return q, fmt.Sprintf("Student t on n−p = %d degrees of freedom: estimate ± %.4g × standard error", n-p, q)
	case Wald:
		q = distuv.UnitNormal.Quantile(prob)
		return q, fmt.Sprintf("Wald: estimate ± %.4g × standard error from Huber's covariance with his small-sample correction", q)
	}
	return 0, ""
}
