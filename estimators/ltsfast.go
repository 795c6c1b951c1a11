package estimators

import (
	"math"

	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/floats"
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
	if cw := lw.sc; cw != nil {
		// Inner products of the subset's mask, which evaluate wrote, with
		// the column products.
		mask := cw.w[:n]
		cw.normal(mask, nil, g, gy)
		for k := range gy {
			gy[k] = floats.Dot(mask, cw.xy[k*n:(k+1)*n])
		}
		return lw.solveNormal(x, y, b)
	}
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
	return lw.solveNormal(x, y, b)
}

// solveNormal solves the normal equations in lw.gram and lw.gy for b, or
// refits by QR when Cholesky refuses them or the solution is not finite.
func (lw *ltsWork) solveNormal(x blas64.General, y, b []float64) bool {
	p := lw.p
	copy(lw.gm, lw.gram[:p*p])
	sol := lw.gz[:p]
	copy(sol, lw.gy[:p])
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

// evaluate computes the squared residuals at b, marks in lw.cur the h rows
// with the smallest (ties to the lower row index) and returns their sum, the
// LTS objective Q(b), added in row order so that it depends only on b. It
// reports false when a residual is NaN or the objective is infinite.
//
// The h-th smallest squared residual t is found by kth; the subset is then
// every row below t and, in row order, as many rows equal to t as fill it to
// h. While starts runs, the residuals come from the column products.
func (lw *ltsWork) evaluate(x blas64.General, y, b []float64) (float64, bool) {
	n, p, h := lw.n, lw.p, lw.h
	r2, sel := lw.r2[:n], lw.sel[:n]
	b = b[:p]
	if cw := lw.sc; cw != nil {
		// The same residuals, by p vector updates in the same order.
		cw.residuals(y, b, r2)
		for i, r := range r2 {
			if r != r {
				return math.NaN(), false
			}
			r2[i] = r * r
		}
	} else {
		for i := range r2 {
			xi := x.Data[i*x.Stride : i*x.Stride+p]
			r := y[i]
			for j, v := range xi {
				r -= v * b[j]
			}
			if r != r {
				return math.NaN(), false
			}
			r2[i] = r * r
		}
	}
	t := lw.kth(r2, sel)
	cur := lw.cur[:n]
	// Usually one row holds t, and the subset is every row at most t: one
	// pass marks it and adds the objective in row order.
	// Written without a data-dependent branch: a row outside adds +0,
	// which leaves the non-negative sum unchanged.
	var q float64
	atMost := 0
	if cw := lw.sc; cw != nil {
		// The same pass, also writing the subset as 0/1 weights for
		// refitNormal, which follows evaluate while starts runs.
		mask := cw.w[:len(r2)]
		for i, v := range r2 {
			in := v <= t
			cur[i] = in
			add, one := 0.0, 0.0
			if in {
				add, one = v, 1
			}
			mask[i] = one
			atMost += int(one)
			q += add
		}
	} else {
		for i, v := range r2 {
			in := v <= t
			cur[i] = in
			add, one := 0.0, 0
			if in {
				add, one = v, 1
			}
			atMost += one
			q += add
		}
	}
	if atMost == h {
		return q, !math.IsInf(q, 0)
	}
	below := 0
	for i, v := range r2 {
		in := v < t
		cur[i] = in
		if in {
			below++
		}
	}
	for i, v := range r2 {
		if below == h {
			break
		}
		if v == t {
			cur[i] = true
			below++
		}
	}
	q = 0
	for i, in := range cur {
		if in {
			q += r2[i]
		}
	}
	lw.markMask()
	return q, !math.IsInf(q, 0)
}

// markMask writes lw.cur as 0/1 weights to the column work's w while
// starts runs (lw.sc set), for refitNormal.
func (lw *ltsWork) markMask() {
	cw := lw.sc
	if cw == nil {
		return
	}
	mask := cw.w[:lw.n]
	for i, in := range lw.cur[:len(mask)] {
		one := 0
		if in {
			one = 1
		}
		mask[i] = float64(one)
	}
}
