package estimators

import (
	"math"

	"gonum.org/v1/gonum/blas/blas64"
)

// This file holds the exact least-absolute-deviations (L1) solver: a descent
// from vertex to vertex of the objective F(β) = Σ|y_i − x_iᵀβ|.
//
// A vertex is given by a basis B of p observations whose rows X_B form a
// non-singular matrix; there β = X_B⁻¹ y_B fits them exactly. Along the edge
// β + t·s·u_k, where u_k = X_B⁻¹ e_k is column k of the inverse and s = ±1,
// the residual of basis observation k moves away from zero while the other
// basis residuals stay zero. F is piecewise linear along the edge with slope
// 1 − Σ_{i∉B} σ_i·s·x_iᵀu_k at t = 0⁺ (σ_i is the sign of r_i), and the exact
// minimiser along it is a weighted median of the breakpoints r_i/(s·x_iᵀu_k).
// Moving there exchanges observation k for the observation of that
// breakpoint. The vertex is optimal when no edge slope is negative: then
// λ_i = σ_i off the basis and λ_B = −X_B⁻ᵀ Σ σ_i x_i, all in [−1, 1], is a
// subgradient certificate Σ λ_i x_i = 0.
//
// Degenerate vertices, where more than p residuals are zero, need care: at
// such a vertex the p edge slopes computed with |x_iᵀu_k| for the extra zero
// residuals (the true directional derivatives along the edges) can all be
// non-negative while a descent direction that keeps some of those residuals
// at zero still exists, so that test alone can stop early. The solver
// therefore gives every zero residual off the basis the sign of its residual
// under an infinitesimal perturbation y + ε·π, with π a fixed pseudo-random
// vector: the sign of ρ_i = π_i − x_iᵀX_B⁻¹π_B. With these signs the slopes
// are linear in the direction and the certificate above is exact; a zero
// residual whose perturbed residual crosses zero is a breakpoint at t = 0⁺
// (ordered by ρ_i/(s·x_iᵀu_k)), and stopping there exchanges the basis
// without moving β. This is the classical perturbation device against
// cycling of the simplex method (common practice): the perturbed objective
// falls at every exchange, so no basis repeats.

// Tolerances of the exact LAD solver. They are relative to scales of the
// data and were chosen, not tuned: each is far above the rounding error of
// the quantity it guards and far below any value that matters to a fit.
const (
	// ladZeroTol: a residual with |r_i| ≤ ladZeroTol·(|y_i| + Σ_j
	// |x_ij β_j|), the size of the terms it is computed from, is treated as
	// zero. The bound is per row: one relative to the largest |y| made
	// every clean residual "zero" once a few responses were 1e10, and the
	// exchanges then cycled among tied vertices.
	ladZeroTol = 1e-12
	// ladSlopeTol: an edge slope D is treated as negative only when
	// D < −ladSlopeTol·(1 + Σ_{i∉B} Σ_j |x_ij u_jk|), the size of its terms.
	ladSlopeTol = 1e-11
	// ladPivotTol: an observation enters the basis only when its pivot
	// |x_iᵀu_k| exceeds ladPivotTol·Σ_j |x_ij u_jk|, the scale of its
	// rounding error, so an exact zero spoilt by rounding (a duplicate of a
	// basis row, say) never makes the basis singular. The same relative
	// tolerance decides independence when the first basis is chosen.
	ladPivotTol = 1e-11
)

// ladWork holds the buffers of the exact LAD solver; its zero value is ready
// and it grows to the largest shape seen. After the first fit of a shape it
// allocates nothing. A ladWork must not be used by two fits at once.
//
// The method is a simplex-type vertex descent; the idea follows Barrodale &
// Roberts (1973), "An improved algorithm for discrete l1 linear
// approximation", SIAM J. Numer. Anal. 10:839-848, and Wesolowsky (1981), "A
// new descent algorithm for the least absolute value regression problem",
// Comm. Statist. B 10:479-491. The basis is refactorised from scratch at
// every step rather than updated.
type ladWork struct {
	// limit, when positive, replaces the iteration cap 50·n + 100.
	limit int

	n, p int

	r     []float64 // n, residuals y − Xβ; exactly 0 on the basis and for zero residuals
	sigma []float64 // n, the sign ±1 given to each observation off the basis
	rho   []float64 // n, perturbed residuals ρ_i of the zero residuals off the basis
	d     []float64 // n, s·x_iᵀu_k along the edge being searched
	key   []float64 // n, heap keys: |r_i|, or breakpoints
	heap  []int     // n, heap of row indices, parallel to key
	pos   []int     // n, position of row i in the basis, or −1

	qa []float64 // n×p, column-major copy of X for the least-squares start
	qy []float64 // n, right-hand side for the least-squares start

	basis  []int     // p, the rows of the basis
	lu     []float64 // p×p, LU factors of X_B (row-major)
	piv    []int     // p, row interchanges of the LU factorisation
	u      []float64 // p, the edge direction X_B⁻¹ e_k being searched
	bpi    []float64 // p, X_B⁻¹ π_B, the perturbation's fit; then X_B⁻ᵀ g
	bmax   []float64 // p, max_k |x_{b_k} j|, column sizes of X_B
	g      []float64 // p, Σ_{i∉B} σ_i x_i
	colMax []float64 // p, max_i |x_ij|
	rdiag  []float64 // p, scratch of the least-squares start
	cscale []float64 // p, scratch of the least-squares start
	red    []float64 // p×p, reduced rows of the rank test for the first basis
	redPiv []int     // p, pivot columns of the reduced rows
	slope  []float64 // 2p, edge slopes: entry 2k+0 for s = +1, 2k+1 for s = −1
	cand   []int     // 2p, edges with a negative slope, most negative first
}

// reserve sizes the buffers for an n×p problem.
func (lw *ladWork) reserve(n, p int) {
	lw.n, lw.p = n, p
	for _, s := range []*[]float64{&lw.r, &lw.sigma, &lw.rho, &lw.d, &lw.key, &lw.qy} {
		*s = ladResize(*s, n)
	}
	lw.heap = ladResize(lw.heap, n)
	lw.pos = ladResize(lw.pos, n)
	lw.qa = ladResize(lw.qa, n*p)
	for _, s := range []*[]float64{&lw.bpi, &lw.bmax, &lw.u, &lw.g, &lw.colMax, &lw.rdiag, &lw.cscale} {
		*s = ladResize(*s, p)
	}
	lw.lu = ladResize(lw.lu, p*p)
	lw.red = ladResize(lw.red, p*p)
	lw.basis = ladResize(lw.basis, p)
	lw.piv = ladResize(lw.piv, p)
	lw.redPiv = ladResize(lw.redPiv, p)
	lw.slope = ladResize(lw.slope, 2*p)
	lw.cand = ladResize(lw.cand, 2*p)
}

// ladResize returns s with length k, reallocating only when its capacity is
// too small.
func ladResize[T any](s []T, k int) []T {
	if cap(s) < k {
		return make([]T, k)
	}
	return s[:k]
}

// fit computes an exact least-absolute-deviations fit of y on x (n×p,
// row-major), writing the coefficients to beta (length p). start, if not
// nil (length p), is the coefficient vector whose smallest absolute
// residuals pick the first basis; nil means the least-squares fit (or zero
// when least squares fails). A good start, such as an IRLS estimate, saves
// most of the iterations.
//
// It returns the number of basis exchanges and a Status: Solved when the
// optimality certificate holds at the returned vertex; SingularDesign when
// no p observations give a non-singular X_B (beta then holds the start) or,
// which the entering test is there to prevent, an exchange leaves X_B
// numerically singular (beta holds the last vertex); IterationLimit when the cap of 50·n + 100 exchanges is reached (beta is
// the last vertex); NonFinite when the data, the start or a vertex is not
// finite.
func (lw *ladWork) fit(x blas64.General, y, beta, start []float64) (iterations int, st Status) {
	n, p := x.Rows, x.Cols
	lw.reserve(n, p)
	if n < p || p == 0 {
		return 0, SingularDesign
	}
	_, ok := lw.columnStats(x, y)
	if !ok {
		return 0, NonFinite
	}
	for _, c := range lw.colMax {
		if c == 0 {
			return 0, SingularDesign
		}
	}
	if start != nil {
		copy(beta, start)
	} else if !lw.leastSquares(x, y, beta) {
		clear(beta)
	}
	if !ladFinite(beta) {
		return 0, NonFinite
	}
	lw.startResiduals(x, y, beta)
	if !lw.firstBasis(x) {
		return 0, SingularDesign
	}

	limit := 50*n + 100
	if lw.limit > 0 {
		limit = lw.limit
	}
	for {
		if !lw.factor(x) {
			return iterations, SingularDesign
		}
		for k, b := range lw.basis {
			beta[k] = y[b]
		}
		ladLUSolve(lw.lu, p, lw.piv, beta)
		if !ladFinite(beta) {
			return iterations, NonFinite
		}
		exact, ok := lw.price(x, y, beta)
		if !ok {
			return iterations, NonFinite
		}
		if exact {
			// Every residual is zero: F = 0 is its least possible value.
			return iterations, Solved
		}
		lw.slopes()
		if lw.numCandidates() == 0 {
			return iterations, Solved
		}
		if iterations >= limit {
			return iterations, IterationLimit
		}
		moved := false
		for _, c := range lw.cand {
			if lw.exchange(x, c/2, float64(1-2*(c%2))) {
				moved = true
				break
			}
		}
		if !moved {
			// Every negative slope was rounding noise when recomputed
			// along its edge: the certificate holds to the tolerance.
			return iterations, Solved
		}
		iterations++
	}
}

// columnStats sets lw.colMax and returns max_i |y_i|, and false when x or y
// holds a value that is not finite (math.Max propagates NaN and +Inf).
func (lw *ladWork) columnStats(x blas64.General, y []float64) (float64, bool) {
	clear(lw.colMax)
	var ymax float64
	for i := 0; i < lw.n; i++ {
		for j, v := range x.Data[i*x.Stride : i*x.Stride+lw.p] {
			lw.colMax[j] = math.Max(lw.colMax[j], math.Abs(v))
		}
		ymax = math.Max(ymax, math.Abs(y[i]))
	}
	return ymax, ladFinite(lw.colMax) && !math.IsInf(ymax, 0) && !math.IsNaN(ymax)
}

// ladFinite reports whether every value of v is finite.
func ladFinite(v []float64) bool {
	for _, b := range v {
		if math.IsInf(b, 0) || math.IsNaN(b) {
			return false
		}
	}
	return true
}

// leastSquares writes the least-squares fit of y on x to beta by Householder
// QR, reporting false when x is numerically rank deficient.
func (lw *ladWork) leastSquares(x blas64.General, y, beta []float64) bool {
	n := lw.n
	for i := 0; i < n; i++ {
		for j, v := range x.Data[i*x.Stride : i*x.Stride+lw.p] {
			lw.qa[j*n+i] = v
		}
	}
	copy(lw.qy, y)
	return householderSolve(lw.qa, n, lw.p, lw.qy, beta, lw.rdiag, lw.cscale)
}

// startResiduals sets lw.r to the residuals of beta.
func (lw *ladWork) startResiduals(x blas64.General, y, beta []float64) {
	for i := 0; i < lw.n; i++ {
		s := y[i]
		for j, v := range x.Data[i*x.Stride : i*x.Stride+lw.p] {
			s -= v * beta[j]
		}
		lw.r[i] = s
	}
}

// firstBasis chooses the first basis: the observations in increasing order of
// |r_i| (ties by index), skipping any whose row depends on the rows already
// taken, until p are taken. It reports false when fewer than p independent
// rows exist.
func (lw *ladWork) firstBasis(x blas64.General) bool {
	n, p := lw.n, lw.p
	for i := 0; i < n; i++ {
		lw.key[i] = math.Abs(lw.r[i])
		lw.heap[i] = i
		lw.pos[i] = -1
	}
	h := ladHeap{key: lw.key[:n], idx: lw.heap[:n]}
	h.init()
	taken := 0
	for taken < p && h.len() > 0 {
		i, _ := h.pop()
		if lw.independent(x, i, taken) {
			lw.basis[taken] = i
			lw.pos[i] = taken
			taken++
		}
	}
	return taken == p
}

// independent reports whether row i of x is independent of the m rows
// already held, reduced, in lw.red, and if so adds it as reduced row m. The
// columns are scaled by their largest absolute value, and the row counts as
// dependent when what is left of it after elimination is below ladPivotTol
// times its largest scaled entry. This is Gaussian elimination with complete
// pivoting over the columns, one row at a time.
func (lw *ladWork) independent(x blas64.General, i, m int) bool {
	p := lw.p
	v := lw.red[m*p : (m+1)*p]
	var size float64
	for j, xv := range x.Data[i*x.Stride : i*x.Stride+p] {
		v[j] = xv / lw.colMax[j]
		size = math.Max(size, math.Abs(v[j]))
	}
	if size == 0 {
		return false
	}
	for a := 0; a < m; a++ {
		f := v[lw.redPiv[a]]
		if f == 0 {
			continue
		}
		for j, rv := range lw.red[a*p : (a+1)*p] {
			v[j] -= f * rv
		}
		v[lw.redPiv[a]] = 0
	}
	best, bj := 0.0, -1
	for j, vj := range v {
		if a := math.Abs(vj); a > best {
			best, bj = a, j
		}
	}
	if !(best > ladPivotTol*size) {
		return false
	}
	inv := 1 / v[bj]
	for j := range v {
		v[j] *= inv
	}
	v[bj] = 1
	lw.redPiv[m] = bj
	return true
}

// factor copies the basis rows into lw.lu and factorises them, reporting
// false when X_B is singular.
func (lw *ladWork) factor(x blas64.General) bool {
	p := lw.p
	clear(lw.bmax)
	for k, b := range lw.basis {
		xb := x.Data[b*x.Stride : b*x.Stride+p]
		copy(lw.lu[k*p:(k+1)*p], xb)
		for j, v := range xb {
			lw.bmax[j] = math.Max(lw.bmax[j], math.Abs(v))
		}
	}
	return ladLUFactor(lw.lu, p, lw.piv, lw.bmax)
}

// price computes, at the vertex beta of the current basis, the residuals
// lw.r, the signs lw.sigma (with the perturbed residuals lw.rho of the zero
// residuals off the basis) and lw.g = Σ_{i∉B} σ_i x_i. It reports exact
// when every residual is zero, and false when a residual is not finite.
func (lw *ladWork) price(x blas64.General, y, beta []float64) (exact, ok bool) {
	n, p := lw.n, lw.p
	// The perturbation's fit, X_B⁻¹ π_B.
	for k, b := range lw.basis {
		lw.bpi[k] = ladPerturbation(b)
	}
	ladLUSolve(lw.lu, p, lw.piv, lw.bpi)
	clear(lw.g)
	// Slices of known length let the compiler drop bounds checks.
	g, bpi, beta := lw.g[:p], lw.bpi[:p], beta[:p]
	r, sigma, rho, pos, y := lw.r[:n], lw.sigma[:n], lw.rho[:n], lw.pos[:n], y[:n]
	data, stride := x.Data, x.Stride
	var total float64
	nonzero := 0
	for i := range r {
		if pos[i] >= 0 {
			r[i] = 0
			continue
		}
		xi := data[i*stride : i*stride+p : i*stride+p]
		s, size := y[i], math.Abs(y[i])
		for j, v := range xi {
			t := v * beta[j]
			s -= t
			size += math.Abs(t)
		}
		total += math.Abs(s)
		sg := 1.0
		if math.Abs(s) > ladZeroTol*size {
			nonzero++
			if s < 0 {
				sg = -1
			}
		} else {
			ri := ladPerturbation(i)
			for j, v := range xi {
				ri -= v * bpi[j]
			}
			rho[i] = ri
			if ri < 0 {
				sg = -1
			}
			s = 0
		}
		r[i] = s
		sigma[i] = sg
		for j, v := range xi {
			g[j] += sg * v
		}
	}
	if math.IsNaN(total) || math.IsInf(total, 0) {
		return false, false
	}
	return nonzero == 0, true
}

// slopes computes the edge slopes D_k^± = 1 ∓ (X_B⁻ᵀg)_k into lw.slope.
// They only rank the edges; exchange recomputes the slope of an edge from
// the rows and judges it against its tolerance.
func (lw *ladWork) slopes() {
	p := lw.p
	v := lw.bpi[:p] // free again: price has used the perturbation's fit
	copy(v, lw.g)
	ladLUSolveT(lw.lu, p, lw.piv, v)
	for k, vk := range v {
		lw.slope[2*k], lw.slope[2*k+1] = 1-vk, 1+vk
	}
}

// numCandidates fills lw.cand with the edges whose slope is negative, most
// negative first, and returns their number (lw.cand is resliced to it).
func (lw *ladWork) numCandidates() int {
	c := lw.cand[:cap(lw.cand)][:0]
	for e, s := range lw.slope {
		if s < 0 {
			c = append(c, e)
		}
	}
	// Insertion sort by slope; there are at most 2p entries.
	for a := 1; a < len(c); a++ {
		e := c[a]
		b := a
		for b > 0 && lw.slope[c[b-1]] > lw.slope[e] {
			c[b] = c[b-1]
			b--
		}
		c[b] = e
	}
	lw.cand = c
	return len(c)
}

// exchange searches the edge β + t·s·u_k, t > 0, exactly and, when its
// slope recomputed from the rows is negative beyond rounding, exchanges
// basis position k for the observation at the minimiser, reporting true. It
// reports false, changing nothing, when the slope is not below
// −ladSlopeTol·(1 + Σ_{i∉B} Σ_j |x_ij u_jk|), a bound on the size of its
// terms.
func (lw *ladWork) exchange(x blas64.General, k int, s float64) bool {
	n, p := lw.n, lw.p
	u := lw.u[:p]
	clear(u)
	u[k] = 1
	ladLUSolve(lw.lu, p, lw.piv, u)
	r, sigma, rho, pos, d := lw.r[:n], lw.sigma[:n], lw.rho[:n], lw.pos[:n], lw.d[:n]
	key, heap := lw.key[:n], lw.heap[:n]
	data, stride := x.Data, x.Stride
	slope := 1.0 // from observation k itself, whose residual becomes −s·t
	size := 1.0
	nd, nr := 0, 0
	for i := range r {
		if pos[i] >= 0 {
			continue
		}
		xi := data[i*stride : i*stride+p : i*stride+p]
		var di, mi float64
		for j, v := range xi {
			t := v * u[j]
			di += t
			mi += math.Abs(t)
		}
		di *= s
		d[i] = di
		size += mi
		slope -= sigma[i] * di
		if !(math.Abs(di) > ladPivotTol*mi) {
			continue // no breakpoint: an exact zero up to rounding
		}
		switch ri := r[i]; {
		case ri == 0 && sigma[i]*di > 0:
			// The perturbed residual ε·ρ_i crosses zero at t = ε·ρ_i/d_i.
			key[nd] = rho[i] / di
			heap[nd] = i
			nd++
		case ri != 0 && ri*di > 0:
			nr++
			key[n-nr] = ri / di
			heap[n-nr] = i
		}
	}
	if !(slope < -ladSlopeTol*size) {
		return false
	}
	// Walk the breakpoints in increasing t, the infinitesimal ones first;
	// each raises the slope by 2|d_i|. Stop where it is no longer negative.
	enter := -1
	for _, h := range []ladHeap{{key: lw.key[:nd], idx: lw.heap[:nd]}, {key: lw.key[n-nr : n], idx: lw.heap[n-nr : n]}} {
		h.init()
		for h.len() > 0 {
			i, _ := h.pop()
			slope += 2 * math.Abs(lw.d[i])
			if slope >= 0 {
				enter = i
				break
			}
		}
		if enter >= 0 {
			break
		}
	}
	if enter < 0 {
		// F cannot fall without bound along an edge of a full-rank design;
		// only rounding in the slope can bring us here.
		return false
	}
	old := lw.basis[k]
	lw.pos[old] = -1
	lw.basis[k] = enter
	lw.pos[enter] = k
	return true
}

// ladPerturbation returns π_i, the perturbation of observation i used to
// break degeneracy: a fixed pseudo-random value in [−1, 1), the splitmix64
// output for i (Steele, Lea & Flood (2014), "Fast splittable pseudorandom
// number generators", OOPSLA). Any values with no exact linear relations
// among them would do.
func ladPerturbation(i int) float64 {
	z := uint64(i+1) * 0x9e3779b97f4a7c15
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	z ^= z >> 31
	return float64(z>>11)*0x1p-52 - 1
}

// ladHeap is a binary min-heap of row indices idx ordered by key; key[t]
// belongs to idx[t]. It works in place on the slices it is given.
type ladHeap struct {
	key []float64
	idx []int
}

// len returns the number of entries left.
func (h *ladHeap) len() int { return len(h.idx) }

// init arranges the entries into a heap.
func (h *ladHeap) init() {
	for t := len(h.idx)/2 - 1; t >= 0; t-- {
		h.down(t)
	}
}

// pop removes and returns the entry with the smallest key (ties in any
// order).
func (h *ladHeap) pop() (int, float64) {
	i, k := h.idx[0], h.key[0]
	last := len(h.idx) - 1
	h.idx[0], h.key[0] = h.idx[last], h.key[last]
	h.idx, h.key = h.idx[:last], h.key[:last]
	h.down(0)
	return i, k
}

// down sifts entry t down to its place.
func (h *ladHeap) down(t int) {
	m := len(h.idx)
	for {
		c := 2*t + 1
		if c >= m {
			return
		}
		if c+1 < m && h.key[c+1] < h.key[c] {
			c++
		}
		if !(h.key[c] < h.key[t]) {
			return
		}
		h.key[c], h.key[t] = h.key[t], h.key[c]
		h.idx[c], h.idx[t] = h.idx[t], h.idx[c]
		t = c
	}
}

// ladLUFactor factorises the p×p row-major matrix a in place as PA = LU by
// Gaussian elimination with partial pivoting: L (unit diagonal) below the
// diagonal, U on and above it, and the row interchanges in piv. colMax[k]
// is the largest absolute entry of column k of A. It reports false when a
// pivot is not finite or not above 4·p·eps·colMax[k] (a numerically
// singular matrix).
func ladLUFactor(a []float64, p int, piv []int, colMax []float64) bool {
	for k := 0; k < p; k++ {
		m, big := k, math.Abs(a[k*p+k])
		for i := k + 1; i < p; i++ {
			if v := math.Abs(a[i*p+k]); v > big {
				m, big = i, v
			}
		}
		piv[k] = m
		if !(big > 4*float64(p)*epsilon*colMax[k]) || math.IsInf(big, 0) {
			return false
		}
		if m != k {
			rk, rm := a[k*p:(k+1)*p], a[m*p:(m+1)*p]
			for j := range rk {
				rk[j], rm[j] = rm[j], rk[j]
			}
		}
		inv := 1 / a[k*p+k]
		rk := a[k*p : (k+1)*p]
		for i := k + 1; i < p; i++ {
			ri := a[i*p : (i+1)*p]
			l := ri[k] * inv
			ri[k] = l
			if l == 0 {
				continue
			}
			for j := k + 1; j < p; j++ {
				ri[j] -= l * rk[j]
			}
		}
	}
	return true
}

// ladLUSolve solves A z = b with the factorisation from ladLUFactor,
// overwriting b with z.
func ladLUSolve(a []float64, p int, piv []int, b []float64) {
	for k := 0; k < p; k++ {
		if m := piv[k]; m != k {
			b[k], b[m] = b[m], b[k]
		}
	}
	for i := 1; i < p; i++ {
		s := b[i]
		for j, l := range a[i*p : i*p+i] {
			s -= l * b[j]
		}
		b[i] = s
	}
	solveUpper(a, p, b)
}

// ladLUSolveT solves Aᵀz = b with the factorisation from ladLUFactor,
// overwriting b with z. With PA = LU, Aᵀ = UᵀLᵀP, so it solves Uᵀ and Lᵀ
// in turn and undoes the interchanges in reverse order.
func ladLUSolveT(a []float64, p int, piv []int, b []float64) {
	solveUpperT(a, p, b)
	for i := p - 2; i >= 0; i-- {
		s := b[i]
		for j := i + 1; j < p; j++ {
			s -= a[j*p+i] * b[j]
		}
		b[i] = s
	}
	for k := p - 1; k >= 0; k-- {
		if m := piv[k]; m != k {
			b[k], b[m] = b[m], b[k]
		}
	}
}
