package estimators

// MethodIRLS is iteratively reweighted least squares.
const MethodIRLS Method = 1

// irlsSolver is an M-estimator by IRLS.
type irlsSolver struct{ mEstimator }

func (irlsSolver) info() MethodInfo {
	return MethodInfo{Name: "irls", TakesPsi: true, Inference: Wald}
}
