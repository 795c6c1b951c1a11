package estimators

import (
	"math"

	"gonum.org/v1/gonum/blas/blas64"
)

// Kernels of fast-S specialised to the bisquare. The general IRLS loop
// (iterate.go) evaluates psi and weights into buffers, then forms the
// normal matrix and the right side in further passes; here one pass over
// the rows forms the weighted normal matrix and the right side of a step,
// and one pass forms the new residuals with the sums of rho the scale needs.
// With v = r/(c·s) and t = max(1 − v², 0):
//
//	rho(r/s) = (c²/6)(1 − t³), the IRLS weight is t², and psi(u)·u = c²v²t²
//	with u = r/s,
//
// so nothing but one multiplication per residual depends on s.

// sWeighted forms, for the residuals in ws.r at scale s, the upper triangle
// of Σ w_i x_i x_iᵀ in ws.m and the right side Σ w_i r_i x_i =
// s·Σ psi(u_i) x_i in ws.delta, where w is the IRLS weight t². It returns
// Σ |w_i|.
func (ws *Workspace) sWeighted(x blas64.General, s, c float64) float64 {
	n, p := ws.n, ws.p
	m := ws.m[:p*p]
	g := ws.delta[:p]
	clear(m)
	clear(g)
	inv := 1 / (s * c)
	r := ws.r[:n]
	var wsum float64
	// weight returns the weight w and w·r, the term of the right side.
	weight := func(ri float64) (w, tr float64) {
		v := ri * inv
		t := 1 - v*v
		if t < 0 {
			t = 0
		}
		w = t * t
		return w, w * ri
	}
	i := 0
	for ; i+1 < n; i += 2 {
		wi, ri := weight(r[i])
		wj, rj := weight(r[i+1])
		if wi == 0 && wj == 0 && ri == 0 && rj == 0 {
			continue
		}
		wsum += math.Abs(wi) + math.Abs(wj)
		oi, oj := i*x.Stride, (i+1)*x.Stride
		xi := x.Data[oi : oi+p : oi+p]
		xj := x.Data[oj : oj+p : oj+p]
		xj = xj[:len(xi)]
		g := g[:len(xi)]
		for k, xik := range xi {
			ak, bk := wi*xik, wj*xj[k]
			g[k] += ri*xik + rj*xj[k]
			mk := m[k*p+k : k*p+p]
			mk = mk[:len(xi)-k]
			yi, yj := xi[k:], xj[k:]
			yj = yj[:len(yi)]
			for l, v := range yi {
				mk[l] += ak*v + bk*yj[l]
			}
		}
	}
	if i < n {
		wi, ri := weight(r[i])
		wsum += math.Abs(wi)
		oi := i * x.Stride
		xi := x.Data[oi : oi+p : oi+p]
		for k, xik := range xi {
			ak := wi * xik
			g[k] += ri * xik
			mk := m[k*p+k : k*p+p]
			for l, v := range xi[k:] {
				mk[l] += ak * v
			}
		}
	}
	return wsum
}

// sResiduals sets ws.r = y − Xβ and returns, for the new residuals, Σ (1 −
// t³) and Σ v²t² at scale s, and Σ (1 − t³) at scale sw (0 when sw is +Inf):
// the mean rho is (c²/6)·rho/d, the mean psi(u)·u is c²·psiu/d.
func (ws *Workspace) sResiduals(x blas64.General, y, beta []float64, s, sw, c float64) (rho, psiu, rhoW float64) {
	n, p := ws.n, ws.p
	r := ws.r[:n]
	y = y[:n]
	b := beta[:p]
	inv := 1 / (s * c)
	invW := 1 / (sw * c)
	for i := range r {
		o := i * x.Stride
		xi := x.Data[o : o+p : o+p]
		b := b[:len(xi)]
		var dot float64
		for j, v := range xi {
			dot += v * b[j]
		}
		ri := y[i] - dot
		r[i] = ri
		v := ri * inv
		v2 := v * v
		t := 1 - v2
		if t < 0 {
			t = 0
		}
		t2 := t * t
		rho += 1 - t2*t
		psiu += v2 * t2
		w := ri * invW
		tw := 1 - w*w
		if tw < 0 {
			tw = 0
		}
		rhoW += 1 - tw*tw*tw
	}
	return rho, psiu, rhoW
}

// sRhoSums returns Σ (1 − t³) and Σ v²t² over r at scale s (see
// sResiduals).
func sRhoSums(r []float64, s, c float64) (rho, psiu float64) {
	inv := 1 / (s * c)
	for _, ri := range r {
		v := ri * inv
		v2 := v * v
		t := 1 - v2
		if t < 0 {
			t = 0
		}
		t2 := t * t
		rho += 1 - t2*t
		psiu += v2 * t2
	}
	return rho, psiu
}

// sScaleNewtonTol stops the scale solve when a Newton step changes s by at
// most this fraction; the error left is of the order of its square.
const sScaleNewtonTol = 1e-12

// mScaleFrom solves (1/d) Σ rho(r_i/s) = b for s, the bisquare with
// constant c, starting from s0 > 0 where the sums of sRhoSums are rho0 and
// psiu0. As a function of w = 1/s² the left side is increasing and concave
// (rho(√z) is concave in z for the bisquare), so Newton's method in w, from
// any point left of the root, rises to it monotonically and quadratically,
// and from the right it jumps to the left of the root. Where the Newton
// step is undefined (no residual inside the rejection point, or a step to
// w ≤ 0) it takes a step of the fixed-point iteration s ← s·√(mean rho/b),
// which never crosses the root. It returns 0 if s0 is 0 or the iteration
// reaches 0 (more than a fraction 1 − b/rho(∞) of residuals are 0), and
// NaN for NaN residuals.
func mScaleFrom(r []float64, b, d, c, s0, rho0, psiu0 float64) float64 {
	s := s0
	if s == 0 {
		return 0
	}
	top := c * c / 6
	rho, psiu := rho0, psiu0
	for k := 0; k < scaleMaxSteps; k++ {
		mean := top * rho / d
		f := mean - b
		g := c * c * psiu / d
		var next float64
		newton := false
		if q := 1 - 2*f/g; g > 0 && q > 0 {
			next, newton = s/math.Sqrt(q), true
		} else {
			next = s * math.Sqrt(mean/b)
		}
		if next == 0 || math.IsNaN(next) || math.IsInf(next, 0) {
			return next
		}
		if newton && math.Abs(next-s) <= sScaleNewtonTol*s {
			return next
		}
		if !newton && math.Abs(next-s) <= scaleRelTol*s {
			return next
		}
		s = next
		rho, psiu = sRhoSums(r, s, c)
	}
	return s
}

// sScale is mScaleFrom from s0 without sums at hand.
func sScale(r []float64, b, d, c, s0 float64) float64 {
	if s0 == 0 {
		return 0
	}
	rho, psiu := sRhoSums(r, s0, c)
	return mScaleFrom(r, b, d, c, s0, rho, psiu)
}

// sSolve solves the step system formed by sWeighted or colWork.normal for
// ws.delta, and on success adds it to beta. Normal equations too
// ill-conditioned for the factorisation (ldlSolve) are solved by QR of
// W^½X, as weightedStep does.
func (ws *Workspace) sSolve(x blas64.General, beta []float64, s, c float64) bool {
	p := ws.p
	var solved bool
	if p <= colMaxP {
		solved = ldlSolve(ws.m, p, ws.delta)
	} else {
		solved = choleskySolve(ws.m, p, ws.delta, ws.pscale)
	}
	if !solved {
		if !ws.sWeightedQR(x, s, c) {
			return false
		}
	}
	d := ws.delta[:p]
	for j := range beta[:p] {
		beta[j] += d[j]
	}
	return true
}

// sWeightedQR solves the I-step least squares min ‖W^½(r − XΔ)‖ for
// ws.delta by Householder QR, with the IRLS weights at scale s.
func (ws *Workspace) sWeightedQR(x blas64.General, s, c float64) bool {
	n := ws.n
	inv := 1 / (s * c)
	for i := 0; i < n; i++ {
		v := ws.r[i] * inv
		t := 1 - v*v
		if t < 0 {
			t = 0
		}
		for j, xv := range row(x, i) {
			ws.qa[j*n+i] = t * xv
		}
		ws.qy[i] = t * ws.r[i]
	}
	return householderSolve(ws.qa, n, ws.p, ws.qy, ws.delta, ws.rdiag, ws.pscale)
}

// sStepCols is the I-step of sStep by the column products cw: one pass
// forms the weights t² and t²·r (bisqWeights), the normal equations are
// inner products (colWork.normal), and one pass forms the new residuals
// with their sums of rho (bisqResidualSums, whose rhoW is NaN when sw is
// NaN, as sResiduals's is). When
// every weight is zero the normal matrix is zero and its solve fails, as
// sStep's does.
func (ws *Workspace) sStepCols(cw *colWork, c float64, x blas64.General, y, beta []float64, s, sw float64) (rho, psiu, rhoW float64, ok bool) {
	n, p := ws.n, ws.p
	r := ws.r[:n]
	inv := 1 / (s * c)
	bisqWeights(r, cw.w, cw.wr, inv)
	cw.normal(cw.w[:n], cw.wr[:n], ws.m[:p*p], ws.delta[:p])
	if !ws.sSolve(x, beta, s, c) {
		return 0, 0, 0, false
	}
	rho, psiu, rhoW = bisqResidualSums(y[:n], cw.xt, beta[:p], r, inv, 1/(sw*c))
	return rho, psiu, rhoW, true
}

// ldlSolve solves the symmetric system M·d = g (the upper triangle of the
// p×p row-major m, p ≤ colMaxP; overwritten, as is g with d) by the
// factorisation M = UᵀDU with U unit upper triangular: no square roots,
// and one division per column. It reports false when a pivot d_j is not
// above minCholeskyPivot·m_jj, the test choleskySolve makes after scaling
// the diagonal to 1, so both refuse the same matrices up to rounding. The
// I-steps of the resampling searches use it: their steps are refined
// further, and the scaled Cholesky factorisation with its square roots
// took a sixth of a fast-S fit. Its scratch is on the stack, for at most
// colMaxP columns; it reports false for more (sSolve uses choleskySolve
// there).
func ldlSolve(m []float64, p int, g []float64) bool {
	if p > colMaxP {
		return false
	}
	m, g = m[:p*p], g[:p]
	var dd, dinv, w [colMaxP]float64
	for j := 0; j < p; j++ {
		// w_k = d_k·u_kj for the rows above.
		for k := 0; k < j; k++ {
			w[k] = m[k*p+j] * dd[k]
		}
		orig := m[j*p+j]
		d := orig
		for k := 0; k < j; k++ {
			d -= w[k] * m[k*p+j]
		}
		if !(d > minCholeskyPivot*orig) || math.IsInf(orig, 0) {
			return false
		}
		inv := 1 / d
		dd[j], dinv[j] = d, inv
		row := m[j*p : (j+1)*p]
		for i := j + 1; i < p; i++ {
			v := row[i]
			for k := 0; k < j; k++ {
				v -= w[k] * m[k*p+i]
			}
			row[i] = v * inv
		}
	}
	// Uᵀz = g, then D y = z, then U d = y.
	for i := 0; i < p; i++ {
		v := g[i]
		for k := 0; k < i; k++ {
			v -= m[k*p+i] * g[k]
		}
		g[i] = v
	}
	for i := p - 1; i >= 0; i-- {
		v := g[i] * dinv[i]
		for k := i + 1; k < p; k++ {
			v -= m[i*p+k] * g[k]
		}
		g[i] = v
	}
	return true
}
