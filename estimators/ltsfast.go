package estimators

import (
	"math"

	"gonum.org/v1/gonum/blas/blas64"
)

// refitStart is the refit of the first C-steps of a start (offerSteps).
// Without the updated normal equations of large n (useGram) it refits by
// normal equations summed afresh (refitNormal): these C-steps only rank
// the starts, and the kept candidates are concentrated by QR refits, so
// the fixed points, and with them the estimate, are the accurate
// least-squares fits of their h-subsets.
func (lw *ltsWork) refitStart(x blas64.General, y, b []float64) bool {
	if lw.useGram {
		return lw.refitGram(x, y, b)
	}
	return lw.refitNormal(x, y, b)
}

// refitNormal writes to b the least-squares fit to the rows marked in
// lw.cur by the normal equations XᵀX b = Xᵀy of those rows, summed in row
// order (so that one h-subset always gives the same bits, and the kept
// list's rule that equal objectives are one candidate still holds) and
// solved by equilibrated Cholesky. When Cholesky refuses them (condition
// above about 1e10) or the solution is not finite it refits by QR
// (refitQR), which also makes the rank decision.
func (lw *ltsWork) refitNormal(x blas64.General, y, b []float64) bool {
	n, p := lw.n, lw.p
	lw.reserveNormal()
	g, gy := lw.gram[:p*p], lw.gy[:p]
	clear(g)
	clear(gy)
	cur := lw.cur[:n]
	y = y[:n]
	// Two rows per pass halve the loads and stores of g.
	i, j := -1, -1
	for k, in := range cur {
		if !in {
			continue
		}
		if i < 0 {
			i = k
			continue
		}
		j = k
		gramAddTwo(g, gy, x, i, j, p, y[i], y[j])
		i = -1
	}
	if i >= 0 {
		gramAddTwo(g, gy, x, i, i, p, y[i], 0)
	}
	copy(lw.gm, g)
	sol := lw.gz[:p]
	copy(sol, gy)
	if !choleskySolve(lw.gm, p, sol, lw.cscale) {
		return lw.refitQR(x, y, b)
	}
	for _, v := range sol {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return lw.refitQR(x, y, b)
		}
	}
	copy(b, sol)
	return true
}

// gramAddTwo adds x_i x_iᵀ + x_j x_jᵀ·[j ≠ i] to the upper triangle of the
// p×p matrix g and x_i y_i + x_j yj to gy; with j = i pass yj = 0 and the
// row is added once.
func gramAddTwo(g, gy []float64, x blas64.General, i, j, p int, yi, yj float64) {
	oi, oj := i*x.Stride, j*x.Stride
	xi := x.Data[oi : oi+p : oi+p]
	xj := x.Data[oj : oj+p : oj+p]
	bj := 1.0
	if i == j {
		bj = 0
	}
	xj = xj[:len(xi)]
	gy = gy[:len(xi)]
	for k, a := range xi {
		c := bj * xj[k]
		gy[k] += a*yi + c*yj
		gk := g[k*p+k : k*p+p]
		vi, vj := xi[k:], xj[k:]
		vj = vj[:len(vi)]
		gk = gk[:len(vi)]
		for l, v := range vi {
			gk[l] += a*v + c*vj[l]
		}
	}
}

// reserveNormal sizes the buffers of refitNormal, which it shares with
// refitGram.
func (lw *ltsWork) reserveNormal() {
	p := lw.p
	if cap(lw.gram) < p*p {
		lw.gram, lw.gm = make([]float64, p*p), make([]float64, p*p)
	}
	if cap(lw.gy) < p {
		lw.gy = make([]float64, p)
	}
	lw.gram, lw.gm, lw.gy = lw.gram[:p*p], lw.gm[:p*p], lw.gy[:p]
}
