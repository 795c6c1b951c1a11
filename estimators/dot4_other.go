//go:build !amd64 || purego

package estimators

// dot4 sets out[j] = Σ_i w[i]·c_j[i] for the four columns c_j, each at
// least len(w) long (see dot4Go for the order of the sums).
func dot4(w, c0, c1, c2, c3 []float64, out *[4]float64) {
	dot4Go(w, c0, c1, c2, c3, out)
}

// bisqWeights sets, for the residuals r, w_i = t² and wr_i = t²·r_i with
// t = max(1 − (r_i·inv)², 0) (bisqWeightsGo).
func bisqWeights(r, w, wr []float64, inv float64) { bisqWeightsGo(r, w, wr, inv) }

// bisqResidualSums sets r = y − Xβ from the columns of X and returns the
// sums of the bisquare terms of the new residuals (bisqResidualSumsGo).
func bisqResidualSums(y, xt, beta, r []float64, inv, invW float64) (rho, psiu, rhoW float64) {
	return bisqResidualSumsGo(y, xt, beta, r, inv, invW)
}

// countBelow returns the number of a_i < x; NaN counts as not below.
func countBelow(a []float64, x float64) int { return countBelowGo(a, x) }

// absMaxSum sets a_i = |r_i| and returns the largest and their sum
// (absMaxSumGo).
func absMaxSum(r, a []float64) (top, sum float64) { return absMaxSumGo(r, a) }

// splitAt returns the largest a_i < x and the smallest a_i ≥ x
// (splitAtGo).
func splitAt(a []float64, x float64) (below, above float64) { return splitAtGo(a, x) }

// residualsAbs sets r = y − Xβ and a_i = |r_i| and returns the largest
// a_i and their sum (residualsAbsGo).
func residualsAbs(y, xt, beta, r, a []float64) (top, sum float64) {
	return residualsAbsGo(y, xt, beta, r, a)
}

// residualsSquares sets r2 to the squared residuals y − Xβ and returns the
// largest and their sum (residualsSquaresGo).
func residualsSquares(y, xt, beta, r2 []float64) (top, sum float64) {
	return residualsSquaresGo(y, xt, beta, r2)
}
