//go:build !purego

package estimators

import (
	"math"

	"golang.org/x/sys/cpu"
)

// useAVX reports whether the processor and the operating system support
// AVX; it is read once, when the package is loaded, and never changed.
var useAVX = cpu.X86.HasAVX

// dot4AVX is dot4 by AVX instructions (dot4_amd64.s).
//
//go:noescape
func dot4AVX(w, c0, c1, c2, c3 *float64, n int, out *[4]float64)

// dot4 sets out[j] = Σ_i w[i]·c_j[i] for the four columns c_j, each at
// least len(w) long, summing each in four lanes by rows (row i into lane
// i mod 4, the last len(w) mod 4 rows into lane 0) and adding the lanes as
// (l0 + l1) + (l2 + l3): the same value by AVX or by dot4Go.
func dot4(w, c0, c1, c2, c3 []float64, out *[4]float64) {
	n := len(w)
	if n == 0 {
		*out = [4]float64{}
		return
	}
	_, _, _, _ = c0[n-1], c1[n-1], c2[n-1], c3[n-1]
	if useAVX {
		dot4AVX(&w[0], &c0[0], &c1[0], &c2[0], &c3[0], n, out)
		return
	}
	dot4Go(w, c0, c1, c2, c3, out)
}

// bisqWeightsAVX is bisqWeights by AVX instructions (bisq_amd64.s).
//
//go:noescape
func bisqWeightsAVX(r, w, wr *float64, n int, inv float64)

// bisqResidualSumsAVX is bisqResidualSums by AVX instructions
// (bisq_amd64.s).
//
//go:noescape
func bisqResidualSumsAVX(y, xt, beta *float64, p, n int, r *float64, inv, invW float64, sums *[3]float64)

// bisqWeights sets, for the residuals r, w_i = t² and wr_i = t²·r_i with
// t = max(1 − (r_i·inv)², 0): the bisquare's IRLS weights and the terms of
// the step's right side, inv being 1/(c·s). w and wr are at least len(r)
// long.
func bisqWeights(r, w, wr []float64, inv float64) {
	n := len(r)
	if n == 0 {
		return
	}
	_, _ = w[n-1], wr[n-1]
	if useAVX {
		bisqWeightsAVX(&r[0], &w[0], &wr[0], n, inv)
		return
	}
	bisqWeightsGo(r, w, wr, inv)
}

// bisqResidualSums sets r = y − Xβ from the columns of X (xt, column k at
// xt[k·n:(k+1)·n] with n = len(r)) and returns the sums of the bisquare
// terms of the new residuals (see bisqResidualSumsGo).
func bisqResidualSums(y, xt, beta, r []float64, inv, invW float64) (rho, psiu, rhoW float64) {
	n, p := len(r), len(beta)
	if n == 0 || p == 0 {
		return bisqResidualSumsGo(y, xt, beta, r, inv, invW)
	}
	_, _ = y[n-1], xt[p*n-1]
	if useAVX {
		var s [3]float64
		bisqResidualSumsAVX(&y[0], &xt[0], &beta[0], p, n, &r[0], inv, invW, &s)
		return s[0], s[1], s[2]
	}
	return bisqResidualSumsGo(y, xt, beta, r, inv, invW)
}

// countBelowAVX is countBelow by AVX instructions (bisq_amd64.s).
//
//go:noescape
func countBelowAVX(a *float64, n int, x float64) int

// countBelow returns the number of a_i < x; NaN counts as not below.
func countBelow(a []float64, x float64) int {
	if len(a) == 0 {
		return 0
	}
	if useAVX {
		return countBelowAVX(&a[0], len(a), x)
	}
	return countBelowGo(a, x)
}

// absMaxSumAVX is absMaxSum by AVX instructions (bisq_amd64.s).
//
//go:noescape
func absMaxSumAVX(r, a *float64, n int) (top, sum float64)

// splitAtAVX is splitAt by AVX instructions (bisq_amd64.s).
//
//go:noescape
func splitAtAVX(a *float64, n int, x float64) (below, above float64)

// absMaxSum sets a_i = |r_i| (a at least len(r) long) and returns the
// largest a_i and, in an order of its own, their sum: NaN and Inf in r
// make the sum NaN or Inf, which the largest may not show.
func absMaxSum(r, a []float64) (top, sum float64) {
	if len(r) == 0 {
		return 0, 0
	}
	_ = a[len(r)-1]
	if useAVX {
		return absMaxSumAVX(&r[0], &a[0], len(r))
	}
	return absMaxSumGo(r, a)
}

// splitAt returns the largest a_i < x (0 if none) and the smallest a_i ≥ x
// (+Inf if none), for values a_i ≥ 0, none NaN.
func splitAt(a []float64, x float64) (below, above float64) {
	if len(a) == 0 {
		return 0, math.Inf(1)
	}
	if useAVX {
		return splitAtAVX(&a[0], len(a), x)
	}
	return splitAtGo(a, x)
}

// residualsAbsAVX is residualsAbs by AVX instructions (bisq_amd64.s).
//
//go:noescape
func residualsAbsAVX(y, xt, beta *float64, p, n int, r, a *float64, square int) (top, sum float64)

// residualsAbs sets r = y − Xβ from the columns of X (xt, as for
// bisqResidualSums) and a_i = |r_i|, and returns the largest a_i and their
// sum (see absMaxSum): the residuals of an elemental fit and what
// madCountAbs needs of them, in one pass.
func residualsAbs(y, xt, beta, r, a []float64) (top, sum float64) {
	n, p := len(r), len(beta)
	if n == 0 || p == 0 {
		return residualsAbsGo(y, xt, beta, r, a)
	}
	_, _, _ = y[n-1], xt[p*n-1], a[n-1]
	if useAVX {
		return residualsAbsAVX(&y[0], &xt[0], &beta[0], p, n, &r[0], &a[0], 0)
	}
	return residualsAbsGo(y, xt, beta, r, a)
}

// residualsSquares sets r2 to the squares of the residuals y − Xβ, formed
// as residualsAbs forms them (the same bits as colWork.residuals), and
// returns the largest square and the squares' sum, NaN or Inf when a
// residual is NaN or a square overflows.
func residualsSquares(y, xt, beta, r2 []float64) (top, sum float64) {
	n, p := len(r2), len(beta)
	if n == 0 || p == 0 {
		return residualsSquaresGo(y, xt, beta, r2)
	}
	_, _ = y[n-1], xt[p*n-1]
	if useAVX {
		return residualsAbsAVX(&y[0], &xt[0], &beta[0], p, n, &r2[0], &r2[0], 1)
	}
	return residualsSquaresGo(y, xt, beta, r2)
}
