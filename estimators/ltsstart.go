package estimators

import (
	"math"

	"gonum.org/v1/gonum/blas/blas64"
)

// The C-steps of the elemental starts by normal equations.
//
// A start's C-steps matter to the result only through the h-subsets they
// select and through the coefficients and objective offered to the kept
// list. startSteps therefore takes the intermediate refits by the normal
// equations of the subset (sums over its rows of stored products x_i x_iᵀ
// and x_i y_i, brought to the next subset by the rows that changed), which
// cost a fraction of a Householder QR, and
// proves after each of them that the subset it selects is the one the QR
// refit would have selected: the gap between the h-th and the (h+1)-th
// smallest |residual| must exceed twice a bound on how far any residual of
// the normal-equation fit can lie from the same residual of the QR fit (a
// first-order error bound for both solutions, Higham (2002), Accuracy and
// Stability of Numerical Algorithms, 2nd ed., SIAM, §20.4 and §19.3, from
// memory, with a safety factor). The last refit is redone by QR, as before,
// when the start can enter the kept list; the bound, with a lower bound on
// the objective that needs no selection (objectiveBound), also proves when
// it cannot. The elemental fit itself is solved by LU or from the Givens
// factor of draw's rank test (luStart, givensSolve) and proved in the same
// way to select the subset of the Householder fit, or solved again by it.
// Whenever a proof fails (ties or near-ties at the boundary, an
// ill-conditioned subset, a refused factorisation, values near overflow)
// the start is redone from its elemental fit by the QR C-steps of
// offerSteps. So the kept list, and with it the fit, is bit-identical to the
// one of offerSteps alone (TestLTSStartStepsExact; TestLTSNormalBound and
// TestLTSElementalBounds check the bounds).

// ltsStartSafety multiplies the first-order error bounds.
const ltsStartSafety = 4

// ltsStartWork holds the buffers of startSteps.
type ltsStartWork struct {
	qp     int       // values of a row of prod: p(p+1)/2 + p, rounded up to a multiple of 4
	prod   []float64 // n×qp, row i holds x_ik x_il (k ≤ l, colWork.prod's), then x_ik y_i, then zeros
	total  []float64 // qp, the sums of prod over all rows
	sums   []float64 // qp, the sums of prod over the rows of the subset of the last refit
	terms  int       // rows added to or taken from sums since they were formed afresh
	list   []int     // n+1, rows of a subset, of its complement, or that changed
	colNrm []float64 // p, ‖x_k‖₂ over all rows
	m      []float64 // p×p, normal matrix, then its factor
	g      []float64 // p, right-hand side, then the solution
	scale  []float64 // p, equilibration scales
	u      []float64 // p, scratch for the inverse of the factor
	b0     []float64 // p, the elemental fit of the start
	colMax []float64 // p, max_i |x_ik|
	yMax   float64   // max_i |y_i|
	yNorm  float64   // ‖y‖₂
	gqy    []float64 // p, Qᵀy of the first p rows of a draw, rotated along by draw
	lu     []float64 // p×p, the LU factors of luStart
	v      []float64 // p, scratch of luStart
	approx bool      // draw solved the start by luStart or givensSolve, not Householder QR
	delta0 float64   // then a bound on the distance of its residuals from the exact start's

	qrOnly bool // take every C-step by QR (offerSteps), for tests
	off    bool // startSteps gave up on this design (giveUp)
	never  bool // never give up, for tests
	// Counts of the starts since the fit began, for tests: redone by QR
	// from the elemental fit, refitted by QR at the end, and solved by
	// luStart or givensSolve and then again by Householder QR.
	redone, refitted, resolved int
}

// loadStart prepares startSteps for the design held in cw and the
// response y.
func (lw *ltsWork) loadStart(cw *colWork, y []float64) {
	n, p := cw.n, cw.p
	sw := &lw.start
	q := p * (p + 1) / 2
	qp := (q + p + 3) &^ 3
	sw.qp = qp
	grow(&sw.prod, n*qp)
	grow(&sw.sums, qp)
	grow(&sw.total, qp)
	grow(&sw.m, p*p)
	grow(&sw.lu, p*p)
	for _, s := range []*[]float64{&sw.g, &sw.scale, &sw.u, &sw.b0, &sw.colMax, &sw.colNrm, &sw.gqy, &sw.v} {
		grow(s, p)
	}
	grow(&sw.list, n+1)
	sw.off = false
	y = y[:n]
	// The products x_ik x_il are cw's, taken row by row.
	for kl := 0; kl < q; kl++ {
		for i, v := range cw.prod[kl*n : (kl+1)*n] {
			sw.prod[i*qp+kl] = v
		}
	}
	for i, yi := range y {
		dst := sw.prod[i*qp : (i+1)*qp]
		for k := 0; k < p; k++ {
			dst[q+k] = cw.xt[k*n+i] * yi
		}
		clear(dst[q+p:])
	}
	clear(sw.total)
	for i := 0; i < n; i++ {
		for j, v := range sw.prod[i*qp : (i+1)*qp] {
			sw.total[j] += v
		}
	}
	for k := 0; k < p; k++ {
		var mx float64
		for _, v := range cw.col(k) {
			mx = math.Max(mx, math.Abs(v))
		}
		sw.colMax[k] = mx
		sw.colNrm[k] = norm2(cw.col(k))
	}
	var ym float64
	for _, v := range y {
		ym = math.Max(ym, math.Abs(v))
	}
	sw.yMax, sw.yNorm = ym, norm2(y)
}

// ltsStartTrial is the number of starts after which startSteps gives up on
// a design when it had to redo most of them by QR.
const ltsStartTrial = 16

// startFast reports whether the starts take startSteps (and draw solves
// them by luStart or givensSolve): while starts runs with the column
// products, unless startSteps gave up on the design.
func (lw *ltsWork) startFast() bool {
	return lw.sc != nil && !lw.start.qrOnly && !lw.start.off
}

// giveUp turns startSteps off for the rest of the starts on this design
// when, after ltsStartTrial of them, more than half had to be redone by QR:
// on designs whose subsets are too ill-conditioned for the normal
// equations (a column far from zero beside the intercept, nearly collinear
// columns), every start would pay for a proof that fails. The choice
// depends only on the data and the draws, so the fit stays deterministic,
// and either path gives the same fit.
func (sw *ltsStartWork) giveUp(starts int) {
	if starts == ltsStartTrial && 2*sw.redone > starts && !sw.never {
		sw.off = true
	}
}

// startSteps is offerSteps for a start with coefficients b (overwritten)
// while starts runs with the column products (lw.sc set). It returns what
// offerSteps returns and leaves the kept list as offerSteps would, unless
// elementalQR refuses the rows of the start (then it drops the start and
// reports it singular).
func (lw *ltsWork) startSteps(x blas64.General, y, b []float64, csteps, keep int) (singular bool) {
	sw := &lw.start
	p, h := lw.p, lw.h
	copy(sw.b0, b[:p])
	exact := func() bool {
		sw.redone++
		if sw.approx && !lw.elementalQR(x, y) {
			return true
		}
		copy(b, sw.b0)
		return lw.offerSteps(x, y, b, csteps, keep)
	}
	// The subset of the elemental fit: the one offerSteps finds, when the
	// start was solved by QR as draw does, or proved to be so.
	gap, ok := lw.markFast(y, b)
	if !ok {
		return exact()
	}
	if sw.approx && !(gap > 2*sw.delta0) {
		if !lw.elementalQR(x, y) {
			return true
		}
		copy(b, sw.b0)
		if _, ok = lw.markFast(y, b); !ok {
			return exact()
		}
	}
	var delta float64
	for k := 0; k < csteps; k++ {
		if delta, ok = lw.normalSolve(b, k == 0); !ok {
			return exact()
		}
		if k == csteps-1 {
			break
		}
		lw.cur, lw.prev = lw.prev, lw.cur
		var gap float64
		if gap, ok = lw.markFast(y, b); !ok || !(gap > 2*delta) {
			return exact()
		}
	}
	// lw.cur holds the subset of the last refit, the one offerSteps refits
	// by QR, and b its normal-equation fit. The objective at the QR fit is
	// at least (√Q(b) − √h·delta)², and Q(b) is at least lb.
	if lw.nKept >= keep {
		worse := func(q float64) bool {
			r := math.Sqrt(q/(1+2*float64(lw.n)*epsilon)) - math.Sqrt(float64(h))*delta
			return r > 0 && r*r*(1-2*float64(h)*epsilon) > lw.candObj[keep-1]
		}
		// A threshold of a few times the mean of the kept list's worst
		// candidate's smallest squared residuals settles most starts
		// without finding the h-th smallest.
		tau := 4 * lw.candObj[keep-1] / float64(h)
		if lb, ok := lw.objectiveBound(y, b, tau); ok && (worse(lb) || worse(lw.smallestSum())) {
			return false
		}
	}
	sw.refitted++
	if !lw.refitQR(x, y, b) {
		return true
	}
	if obj, ok := lw.evaluate(x, y, b); ok {
		lw.offer(obj, b, keep)
	}
	return false
}

// smallestSum returns the sum of the h smallest values of lw.r2, in no
// fixed order: every value below the h-th smallest and as many equal to it
// as fill h.
func (lw *ltsWork) smallestSum() float64 {
	r2 := lw.r2[:lw.n]
	t := lw.kthStart(r2)
	var s0, s1 float64
	below := 0
	i := 0
	for ; i+2 <= len(r2); i += 2 {
		u, v := r2[i], r2[i+1]
		s0 += ltsBelow(u, t)
		s1 += ltsBelow(v, t)
		below += b2i(u < t) + b2i(v < t)
	}
	if i < len(r2) {
		s0 += ltsBelow(r2[i], t)
		below += b2i(r2[i] < t)
	}
	return s0 + s1 + float64(lw.h-below)*t
}

// ltsBelow returns v if v < t and +0 otherwise, for v, t ≥ 0, without a
// branch.
func ltsBelow(v, t float64) float64 {
	vb := math.Float64bits(v)
	var m uint64
	if vb < math.Float64bits(t) {
		m = math.MaxUint64
	}
	return math.Float64frombits(vb & m)
}

// objectiveBound returns a lower bound on the objective Q(b), the sum of the
// h smallest squared residuals at b, without finding them: for any
// threshold tau, with c of the values below it summing to s, Q(b) ≥ s +
// (h − c)·tau (the h − c further values are at least tau, or the c − h
// values dropped are below it). It is exact at tau = the h-th smallest and
// close for a tau near it. It reports false when a residual is NaN.
func (lw *ltsWork) objectiveBound(y, b []float64, tau float64) (float64, bool) {
	r := lw.r2[:lw.n]
	lw.sc.residuals(y, b, r)
	var s0, s1 float64
	c := 0
	i := 0
	for ; i+2 <= len(r); i += 2 {
		u, v := r[i]*r[i], r[i+1]*r[i+1]
		if u != u || v != v {
			return 0, false
		}
		r[i], r[i+1] = u, v
		s0 += ltsBelow(u, tau)
		s1 += ltsBelow(v, tau)
		c += b2i(u < tau) + b2i(v < tau)
	}
	for ; i < len(r); i++ {
		u := r[i] * r[i]
		if u != u {
			return 0, false
		}
		r[i] = u
		if u < tau {
			s0 += u
			c++
		}
	}
	return s0 + s1 + float64(lw.h-c)*tau, true
}

// markFast computes the squared residuals at b from the column products,
// marks in lw.cur the h rows with the smallest, as evaluate does, and
// returns the gap between the (h+1)-th and the h-th smallest |residual|
// (0 on ties, +Inf when h = n). It reports false when a
// residual is NaN, when the objective might overflow, or when the residuals
// are too large for the error bounds of startSteps.
func (lw *ltsWork) markFast(y, b []float64) (gap float64, ok bool) {
	n, h := lw.n, lw.h
	r2 := lw.r2[:n]
	var t float64
	if n < ltsWindowRows {
		// The squares in one vector pass, with the same residuals as
		// colWork.residuals; the h-th smallest by counting (orderPair).
		top, sum := residualsSquares(y, lw.sc.xt, b, r2)
		if math.IsNaN(sum) || math.IsInf(sum, 0) {
			return 0, false // a NaN residual, or squares too large
		}
		t, _ = orderPair(r2, lw.sel[:n], h-1, h-1, top)
	} else {
		lw.sc.residuals(y, b, r2)
		for i, r := range r2 {
			if r != r {
				return 0, false
			}
			r2[i] = r * r
		}
		t = lw.kth(r2, lw.sel[:n])
	}
	if !(t <= math.MaxFloat64/float64(2*h)) || lw.residualBound(b) > 1e300 {
		return 0, false
	}
	cur := lw.cur[:n]
	tb := math.Float64bits(t)
	next := uint64(math.MaxUint64)
	atMost := 0
	// Squares are not negative, so their bits order as they do.
	for i, v := range r2 {
		vb := math.Float64bits(v)
		one := 0
		if vb <= tb {
			one = 1
		}
		cur[i] = one == 1
		atMost += one
		next = min(next, vb|-uint64(one))
	}
	if atMost != h {
		lw.markTies(r2, t)
		next = tb
	}
	switch {
	case h == n:
		gap = math.Inf(1)
	case next == tb:
		gap = 0
	default:
		gap = math.Sqrt(math.Float64frombits(next)) - math.Sqrt(t)
	}
	return gap, true
}

// markTies marks in lw.cur the subset of evaluate and markFast when more
// than one row holds the h-th smallest value t: every row below t, then
// rows equal to t in row order up to h.
func (lw *ltsWork) markTies(r2 []float64, t float64) {
	cur := lw.cur[:lw.n]
	below := 0
	for i, v := range r2 {
		cur[i] = v < t
		if cur[i] {
			below++
		}
	}
	for i, v := range r2 {
		if below == lw.h {
			break
		}
		if v == t {
			cur[i] = true
			below++
		}
	}
}

// residualBound returns max_i |y_i| + Σ_k |b_k| max_i |x_ik|, a bound on
// the terms of every residual at b.
func (lw *ltsWork) residualBound(b []float64) float64 {
	sw := &lw.start
	m := sw.yMax
	for k, v := range b[:lw.p] {
		m += math.Abs(v) * sw.colMax[k]
	}
	return m
}

// ltsStartTerms bounds the rows added to or taken from the sums, in units
// of n, before they are formed afresh; the error bound of normalSolve
// grows with them.
const ltsStartTerms = 4

// normalSums brings the sums of the start work to the rows marked in
// lw.cur. For the first refit of a start (first set) they are formed
// afresh, from the rows of the subset or, when fewer, by taking the other
// rows from the sums over all rows; for the next, the rows that entered
// since lw.prev, the subset of the refit before, are added and those that
// left are taken away.
func (lw *ltsWork) normalSums(first bool) {
	sw := &lw.start
	n, h := lw.n, lw.h
	list := sw.list[:n+1]
	cur, prev := lw.cur[:n], lw.prev[:n]
	if !first && sw.terms+n <= ltsStartTerms*n {
		// The rows that entered from the front of list, those that left
		// from the back.
		e, l := 0, n
		for i, c := range cur {
			ci, pi := b2i(c), b2i(prev[i])
			list[e], list[l] = i, i
			e += ci &^ pi
			l -= pi &^ ci
		}
		ltsAddRows(sw.sums, sw.prod, list[:e], sw.qp, false)
		ltsAddRows(sw.sums, sw.prod, list[l+1:n+1], sw.qp, true)
		sw.terms += e + n - l
		return
	}
	if h <= n-h {
		k := 0
		for i, c := range cur {
			list[k] = i
			k += b2i(c)
		}
		clear(sw.sums)
		ltsAddRows(sw.sums, sw.prod, list[:k], sw.qp, false)
		sw.terms = k
		return
	}
	k := 0
	for i, c := range cur {
		list[k] = i
		k += 1 - b2i(c)
	}
	copy(sw.sums, sw.total)
	ltsAddRows(sw.sums, sw.prod, list[:k], sw.qp, true)
	sw.terms = n + k
}

// ltsAddRows adds (or with sub set, subtracts) the rows listed of the
// n×qp row-major prod to acc (length qp, a multiple of 4), four values and
// two rows at a time.
func ltsAddRows(acc, prod []float64, rows []int, qp int, sub bool) {
	for c := 0; c < qp; c += 4 {
		var a0, a1, a2, a3, b0, b1, b2, b3 float64
		j := 0
		for ; j+2 <= len(rows); j += 2 {
			o, e := rows[j]*qp+c, rows[j+1]*qp+c
			r, s := prod[o:o+4:o+4], prod[e:e+4:e+4]
			a0 += r[0]
			a1 += r[1]
			a2 += r[2]
			a3 += r[3]
			b0 += s[0]
			b1 += s[1]
			b2 += s[2]
			b3 += s[3]
		}
		if j < len(rows) {
			o := rows[j]*qp + c
			r := prod[o : o+4 : o+4]
			a0 += r[0]
			a1 += r[1]
			a2 += r[2]
			a3 += r[3]
		}
		d := acc[c : c+4 : c+4]
		if sub {
			d[0] -= a0 + b0
			d[1] -= a1 + b1
			d[2] -= a2 + b2
			d[3] -= a3 + b3
		} else {
			d[0] += a0 + b0
			d[1] += a1 + b1
			d[2] += a2 + b2
			d[3] += a3 + b3
		}
	}
}

// normalSolve brings the sums to the subset marked in lw.cur (normalSums,
// with first)
// and writes to b the least-squares fit to its rows by the normal
// equations. It returns a bound on the distance of any residual at b from
// the same residual at the Householder QR fit of refitQR, both as computed,
// and reports false when the normal equations are refused or too
// ill-conditioned for the bound.
func (lw *ltsWork) normalSolve(b []float64, first bool) (delta float64, ok bool) {
	p, h := lw.p, lw.h
	sw := &lw.start
	lw.normalSums(first)
	m, g, s := sw.m[:p*p], sw.g[:p], sw.scale[:p]
	q := p * (p + 1) / 2
	kl := 0
	for k := 0; k < p; k++ {
		for l := k; l < p; l++ {
			m[k*p+l] = sw.sums[kl]
			kl++
		}
		g[k] = sw.sums[q+k]
	}
	if !choleskySolve(m, p, g, s) {
		return 0, false
	}
	// m holds U with UᵀU = D M D, D = diag(s). ‖(UᵀU)⁻¹‖₂ ≤ ‖U⁻¹‖²_F.
	for i := 0; i < p; i++ {
		m[i*p+i] = 1 / m[i*p+i]
	}
	inv2 := upperInverseNorm2(m, p, sw.u[:p])
	var zn, xs, rho float64
	for k, v := range g {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return 0, false
		}
		z := v / s[k]
		zn += z * z
		c := s[k] * sw.colMax[k]
		xs += c * c
		c = s[k] * sw.colNrm[k]
		rho += c * c
	}
	zn, xs = math.Sqrt(zn), math.Sqrt(xs)
	fp, fh := float64(p), float64(h)
	// The sums add and take away sw.terms rows: each is within gamma of
	// the sum of the magnitudes over all rows, which is at most
	// ‖x_k‖‖x_l‖ (or ‖x_k‖‖y‖); equilibrated, Σ_k (s_k‖x_k‖)² = rho
	// bounds the Frobenius norm of the error of the matrix, √rho·‖y‖·gamma
	// that of the right-hand side. The factorisation adds (p+1)·eps·p.
	gamma := 1.01 * float64(sw.terms+1) * epsilon
	eta := rho*gamma + fp*(fp+1)*epsilon
	if !(inv2*eta < 0.1) {
		return 0, false
	}
	// Distance of either solution from the exact least-squares solution,
	// in equilibrated coordinates: the normal equations, then Householder
	// QR (κ(XD) ≤ √(p·inv2); ‖residual‖ ≤ ‖y‖).
	dNE := inv2 * (eta*zn + math.Sqrt(rho)*gamma*sw.yNorm) / (1 - inv2*eta)
	kappa := math.Sqrt(fp * inv2)
	dQR := fh * fp * epsilon * (kappa*zn + kappa*kappa*sw.yNorm)
	copy(b, g)
	// Rounding of the residuals themselves, at either fit.
	dr := 2 * 1.01 * (fp + 1) * epsilon * lw.residualBound(b)
	return ltsStartSafety * (xs*(dNE+dQR) + dr), true
}

// elementalQR puts into sw.b0 the fit through the p rows lw.idx[:p] by
// Householder QR, as draw makes it, after luStart or givensSolve solved
// them. It clears sw.approx. It reports false, leaving sw.b0 unchanged,
// when Householder QR refuses the rows; startSteps then drops the start as
// singular.
func (lw *ltsWork) elementalQR(x blas64.General, y []float64) bool {
	p := lw.p
	sw := &lw.start
	a := lw.qa[:p*p]
	for k, i := range lw.idx[:p] {
		for j, v := range row(x, i) {
			a[j*p+k] = v
		}
		lw.qy[k] = y[i]
	}
	// luStart and givensSolve accept only rows that pass the rank test of
	// householderFactor by a wide margin (see there), so this succeeds
	// unless their bounds fail. Should it fail, the search without them
	// would have drawn further rows for this start, which cannot be
	// recovered here; the start is dropped as singular instead.
	ok := householderSolve(a, p, p, lw.qy[:p], sw.b0, lw.rdiag, lw.cscale)
	sw.approx = false
	sw.resolved++
	return ok
}

// givensSolve solves for the start of p rows whose factor draw holds in
// lw.gr and sw.gqy, by back substitution, into lw.trial, and sets
// sw.approx and sw.delta0, a bound on the distance of every residual at it
// from the same residual at the Householder fit through the rows that draw
// would otherwise make, both as computed. It reports false, changing
// nothing, when the rows are too ill-conditioned for the bound.
//
// In coordinates scaled to unit column norms over the rows (R̃ = R·D, D =
// diag(1/√gss)), both factorisations are backward stable: each solution
// solves a problem within γ = 4p²·eps of the true one, relative to ‖X̃‖_F =
// √p and ‖y‖ (Higham (2002), Accuracy and Stability of Numerical
// Algorithms, 2nd ed., SIAM, §19.3 and §19.6, from memory, with a margin),
// so each is within ‖R̃⁻¹‖·γ·(√p‖z‖ + ‖y‖)/(1 − ‖R̃⁻¹‖γ√p) of the exact
// solution. Requiring ‖R̃⁻¹‖_F·γ·√p < 0.1 also keeps the diagonal of the
// Householder factor (at least σ_min of the scaled rows less the
// perturbation, so above 0.8/‖R̃⁻¹‖) far above the n·eps rank threshold of
// householderFactor, so draw would have accepted the rows.
func (lw *ltsWork) givensSolve() bool {
	p := lw.p
	sw := &lw.start
	r, g := lw.gr[:p*p], lw.gss[:p]
	sg := sw.scale[:p]
	for k, v := range g {
		sg[k] = math.Sqrt(v)
	}
	// ‖R̃⁻¹‖²_F, column by column of R̃⁻¹ (R̃_ij = R_ij/√g_j).
	// sw.g holds 1/√g_k, sw.m R̃ with the reciprocals of its diagonal.
	isg, rs := sw.g[:p], sw.m[:p*p]
	for k, v := range sg {
		isg[k] = 1 / v
	}
	for i := 0; i < p; i++ {
		rs[i*p+i] = sg[i] / r[i*p+i]
		for k := i + 1; k < p; k++ {
			rs[i*p+k] = r[i*p+k] * isg[k]
		}
	}
	inv2 := upperInverseNorm2(rs, p, sw.u[:p])
	fp := float64(p)
	gamma := 4.04 * fp * fp * epsilon
	inv := math.Sqrt(inv2)
	if !(inv*gamma*math.Sqrt(fp) < 0.1) {
		return false
	}
	b := lw.trial[:p]
	var yn float64
	for k := p - 1; k >= 0; k-- {
		s := sw.gqy[k]
		yn += s * s
		for j := k + 1; j < p; j++ {
			s -= r[k*p+j] * b[j]
		}
		b[k] = s / r[k*p+k]
	}
	var zn, xs float64
	for k, v := range b {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
		z := v * sg[k]
		zn += z * z
		c := sw.colMax[k] / sg[k]
		xs += c * c
	}
	zn, xs, yn = math.Sqrt(zn), math.Sqrt(xs), math.Sqrt(yn)
	dz := 2 * inv * gamma * (math.Sqrt(fp)*zn + yn) / (1 - inv*gamma*math.Sqrt(fp))
	dr := 2 * 1.01 * (fp + 1) * epsilon * lw.residualBound(b)
	sw.delta0 = ltsStartSafety * (xs*dz + dr)
	sw.approx = true
	return true
}

// luStart solves for the start of the p rows lw.idx[:p] by LU with partial
// pivoting of the rows with columns scaled to unit norm over them (Ã = X·D,
// D = diag(1/√gss)), into lw.trial, and sets sw.approx and sw.delta0 as
// givensSolve does. It reports false, changing nothing else, unless the
// factors prove that the rank test of givensFullRank (and of
// householderFactor) passes for these rows by a wide margin:
//
// Ã + E = LU with ‖E‖_F ≤ γ_LU·‖L‖_F‖U‖_F, γ_LU = (3p+1)·eps (Higham
// (2002), Accuracy and Stability of Numerical Algorithms, 2nd ed., SIAM,
// Thm 9.3, from memory, with the rounding of the scaling), so with
// β = ‖U⁻¹‖_F‖L⁻¹‖_F ≥ ‖(LU)⁻¹‖₂, σ_min(Ã) ≥ 1/β − ‖E‖. The Givens factor
// of the rows is that of Ã plus a perturbation of at most γ√p (γ = 4p²·eps,
// as in givensSolve), so each of its scaled diagonal elements is at least
// σ_min(Ã) − γ√p. Requiring β(γ_LU‖L‖‖U‖ + γ√p) < 0.1 keeps them above
// 0.8/β, far above the rank threshold p·eps·max (the maximum is at most
// about 1, the columns having unit norm). The LU solution is within
// ‖Ã⁻¹‖‖E‖‖z‖ of the exact one, the Householder solution that draw would
// make within ‖Ã⁻¹‖γ(√p‖z‖ + ‖y‖), with ‖Ã⁻¹‖ ≤ β/0.9.
func (lw *ltsWork) luStart(x blas64.General, y []float64) bool {
	p := lw.p
	sw := &lw.start
	a, sc, yv := sw.lu[:p*p], sw.scale[:p], sw.v[:p]
	for k, g := range lw.gss[:p] {
		if !(g > 0) {
			return false
		}
		sc[k] = 1 / math.Sqrt(g)
	}
	for r, i := range lw.idx[:p] {
		for k, v := range row(x, i) {
			a[r*p+k] = v * sc[k]
		}
		yv[r] = y[i]
	}
	// Elimination with row pivoting; L's multipliers below the diagonal.
	for k := 0; k < p; k++ {
		piv, big := k, math.Abs(a[k*p+k])
		for r := k + 1; r < p; r++ {
			if v := math.Abs(a[r*p+k]); v > big {
				piv, big = r, v
			}
		}
		if !(big > 0) {
			return false
		}
		if piv != k {
			for c := 0; c < p; c++ {
				a[k*p+c], a[piv*p+c] = a[piv*p+c], a[k*p+c]
			}
			yv[k], yv[piv] = yv[piv], yv[k]
		}
		inv := 1 / a[k*p+k]
		for r := k + 1; r < p; r++ {
			l := a[r*p+k] * inv
			a[r*p+k] = l
			for c := k + 1; c < p; c++ {
				a[r*p+c] -= l * a[k*p+c]
			}
		}
	}
	// ‖L‖_F, ‖U‖_F, and ‖L⁻¹‖²_F, ‖U⁻¹‖²_F column by column.
	var ln, un, li, ui float64
	u := sw.u[:p]
	for j := 0; j < p; j++ {
		for i := 0; i <= j; i++ {
			un += a[i*p+j] * a[i*p+j]
		}
		ln++
		for i := j + 1; i < p; i++ {
			ln += a[i*p+j] * a[i*p+j]
		}
		// U⁻¹ e_j.
		for i := j; i >= 0; i-- {
			var v float64
			if i == j {
				v = 1
			}
			for k := i + 1; k <= j; k++ {
				v -= a[i*p+k] * u[k]
			}
			u[i] = v / a[i*p+i]
			ui += u[i] * u[i]
		}
		// L⁻¹ e_j (unit diagonal).
		u[j] = 1
		li++
		for i := j + 1; i < p; i++ {
			var v float64
			for k := j; k < i; k++ {
				v -= a[i*p+k] * u[k]
			}
			u[i] = v
			li += v * v
		}
	}
	fp := float64(p)
	gLU := 1.01 * (3*fp + 1) * epsilon
	gamma := 4.04 * fp * fp * epsilon
	nLU := math.Sqrt(ln * un)
	beta := math.Sqrt(li * ui)
	if !(beta*(gLU*nLU+gamma*math.Sqrt(fp)) < 0.1) {
		return false
	}
	// Solve L w = P y, U z = w; b = D z.
	var yn float64
	for i := 0; i < p; i++ {
		yn += yv[i] * yv[i]
		for k := 0; k < i; k++ {
			yv[i] -= a[i*p+k] * yv[k]
		}
	}
	b := lw.trial[:p]
	var zn, xs float64
	for i := p - 1; i >= 0; i-- {
		s := yv[i]
		for k := i + 1; k < p; k++ {
			s -= a[i*p+k] * yv[k]
		}
		yv[i] = s / a[i*p+i]
	}
	for k, z := range yv {
		if math.IsNaN(z) || math.IsInf(z, 0) {
			return false
		}
		zn += z * z
		c := sw.colMax[k] * sc[k]
		xs += c * c
	}
	for k, z := range yv {
		b[k] = z * sc[k]
	}
	zn, xs, yn = math.Sqrt(zn), math.Sqrt(xs), math.Sqrt(yn)
	ainv := beta / 0.9
	dz := ainv * (gLU*nLU*zn + gamma*(math.Sqrt(fp)*zn+yn))
	dr := 2 * 1.01 * (fp + 1) * epsilon * lw.residualBound(b)
	sw.delta0 = ltsStartSafety * (xs*dz + dr)
	sw.approx = true
	return true
}
