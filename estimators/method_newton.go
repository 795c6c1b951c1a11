package estimators

// MethodNewton is Newton's method on the estimating equations, with step
// halving and IRLS steps as safeguards; after five iterations in a row
// without progress it hands the fit over to IRLS.
const MethodNewton Method = 2

// newtonSolver is an M-estimator by Newton's method (iterate.go tells it
// from IRLS by e.Method).
type newtonSolver struct{ mEstimator }

func (newtonSolver) info() MethodInfo {
	return MethodInfo{Name: "newton", TakesPsi: true, Inference: Wald}
}
