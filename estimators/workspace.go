package estimators

import (
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"

	"github.com/rhomark/rhomark/psi"
)

// Workspace holds the buffers of a fit. The zero value is ready to use; it
// grows to the largest shape it has seen and then allocates nothing. A
// Workspace must not be used by two fits at once.
type Workspace struct {
	n, p int

	qa     []float64 // n×p column-major copy for QR
	qy     []float64 // n, right-hand side for QR
	r      []float64 // n, residuals y − Xβ
	q      []float64 // n, XΔ for the line search
	psi    []float64 // n, psi(u_i)
	c      []float64 // n, IRLS weights or psi'(u_i)
	buf    []float64 // n, scratch for the median
	m      []float64 // p×p normal matrix (upper triangle)
	h      []float64 // p, Σ psi(u_i) x_i
	delta  []float64 // p, the step
	trial  []float64 // p, trial coefficients
	rms    []float64 // p, root mean square of each column
	rowMax float64   // the largest Euclidean norm of a row, with rms
	pscale []float64 // p, column scales of a QR factorisation, or scratch
	rdiag  []float64 // p, diagonal of R of a QR factorisation
	base   []float64 // p×p, XᵀX (upper triangle) once baseOK
	baseOK bool      // base holds XᵀX of the current fit
	rmsOK  bool      // rms holds the column RMS of the current fit's design
	nOff   int       // rows whose weight in ws.c differs from 1
	off    []int     // n, the indices of those rows (first nOff entries)

	// Resampling estimators.
	pcg       *rand.PCG  // the workspace's random stream
	rng       *rand.Rand // draws from pcg
	subset    []int      // p, rows of an elemental subset
	cand      []float64  // keep×p, candidate coefficients
	candScale []float64  // keep, candidate scales
	sC, sB    float64    // cached bisquare constant and its consistency b
	jumpPsi   psi.Psi    // the psi whose continuity was last checked
	jumpy     bool       // whether jumpPsi jumps
	lts       ltsWork    // least trimmed squares
	lad       ladWork    // exact least absolute deviations
}

// SeedRandom seeds the workspace's random stream, from which resampling
// estimators (S, MM, LTS) draw their elemental subsets. Seeding it before
// every fit makes that fit's result depend only on the seed; an unseeded
// workspace starts from a fixed seed.
func (ws *Workspace) SeedRandom(s1, s2 uint64) {
	if ws.pcg == nil {
		ws.pcg = rand.NewPCG(s1, s2)
		ws.rng = rand.New(ws.pcg)
		return
	}
	ws.pcg.Seed(s1, s2)
}

// reserveCandidates sizes the candidate buffers.
func (ws *Workspace) reserveCandidates(keep, p int) {
	if cap(ws.cand) < keep*p {
		ws.cand = make([]float64, keep*p)
	}
	if cap(ws.candScale) < keep {
		ws.candScale = make([]float64, keep)
	}
	ws.cand, ws.candScale = ws.cand[:keep*p], ws.candScale[:keep]
}

// grow sets *s to length k, allocating only when its capacity is short of
// k (the contents are then zero; otherwise they are kept).
func grow[T any](s *[]T, k int) {
	if cap(*s) < k {
		*s = make([]T, k)
	}
	*s = (*s)[:k]
}

// reserve sizes the buffers for an n×p problem.
func (ws *Workspace) reserve(n, p int) {
	ws.n, ws.p = n, p
	grow(&ws.qa, n*p)
	for _, s := range []*[]float64{&ws.qy, &ws.r, &ws.q, &ws.psi, &ws.c, &ws.buf} {
		grow(s, n)
	}
	if ws.pcg == nil {
		ws.SeedRandom(0x5eed, 0xfeed)
	}
	grow(&ws.subset, p)
	grow(&ws.off, n)
	grow(&ws.m, p*p)
	grow(&ws.base, p*p)
	ws.baseOK, ws.rmsOK = false, false
	for _, s := range []*[]float64{&ws.h, &ws.delta, &ws.trial, &ws.rms, &ws.pscale, &ws.rdiag} {
		grow(s, p)
	}
}

// row returns row i of x.
func row(x blas64.General, i int) []float64 {
	return x.Data[i*x.Stride : i*x.Stride+x.Cols]
}

// leastSquares writes the least-squares fit of y on x to beta, reporting
// false when x is numerically rank deficient. With refine set it takes one
// step of iterative refinement: the residuals of the first solution are
// computed with compensated (twice-working-precision) dot products and
// regressed on x with the same factorisation, which recovers digits lost to
// ill-conditioning.
func (ws *Workspace) leastSquares(x blas64.General, y, beta []float64, refine bool) bool {
	n, p := ws.n, ws.p
	for i := 0; i < n; i++ {
		for j, v := range row(x, i) {
			ws.qa[j*n+i] = v
		}
	}
	copy(ws.qy, y)
	if !householderSolve(ws.qa, n, p, ws.qy, beta, ws.rdiag, ws.pscale) {
		return false
	}
	if refine {
		for i := 0; i < n; i++ {
			ws.q[i] = residualDot2(row(x, i), beta, y[i])
		}
		qrSolve(ws.qa, n, p, ws.rdiag, ws.pscale, ws.q, ws.delta)
		for j := range beta {
			beta[j] += ws.delta[j]
		}
	}
	return true
}

// residualDot2 returns y − x·b evaluated in about twice the working
// precision (compensated summation of error-free products; Ogita, Rump &
// Oishi (2005), SIAM J. Sci. Comput. 26:1955-1988, algorithm Dot2).
func residualDot2(x, b []float64, y float64) float64 {
	s, c := y, 0.0
	for j, v := range x {
		prod := -v * b[j]
		perr := math.FMA(-v, b[j], -prod)
		t := s + prod
		z := t - s
		c += (s - (t - z)) + (prod - z) + perr
		s = t
	}
	return s + c
}

// residuals sets ws.r = y − Xβ.
func (ws *Workspace) residuals(x blas64.General, y, beta []float64) {
	copy(ws.r, y)
	blas64.Gemv(blas.NoTrans, -1, x, blas64.Vector{N: ws.p, Data: beta, Inc: 1}, 1, blas64.Vector{N: ws.n, Data: ws.r, Inc: 1})
}

// finishLS fills the scale, objective and equation norm of a least-squares
// fit from the residuals.
func (ws *Workspace) finishLS(x blas64.General, res *Result) {
	n, p := ws.n, ws.p
	ss := norm2(ws.r)
	res.Objective = ss * ss / 2
	if n > p {
		res.Scale = ss / math.Sqrt(float64(n-p))
	}
	res.Status = Solved
	ws.columnRMS(x)
	if res.Scale > 0 {
		for i, v := range ws.r {
			ws.psi[i] = v / res.Scale
		}
		res.EquationNorm = ws.equationNorm(x)
	}
}

// inverseGramDiag writes the diagonal of (XᵀX)⁻¹ to d: XᵀX is formed (or
// taken from the fit's cache), equilibrated and factorised by Cholesky, and
// each diagonal element is the squared norm of a row of the inverse factor.
// It reports false when XᵀX is not positive definite.
func (ws *Workspace) inverseGramDiag(x blas64.General, d []float64) bool {
	p := ws.p
	ws.gram(x)
	m := ws.m
	copy(m, ws.base)
	scale := ws.pscale
	if !equilibrate(m, p, scale) || !choleskyUpper(m, p, 0) {
		return false
	}
	// Column by column of V = U⁻¹ (upper triangular), accumulating the
	// squared row norms into d.
	clear(d)
	col := ws.delta
	for j := 0; j < p; j++ {
		// Solve U v = e_j for v (only v[0..j] are non-zero).
		for i := j; i >= 0; i-- {
			var s float64
			if i == j {
				s = 1
			}
			for k := i + 1; k <= j; k++ {
				s -= m[i*p+k] * col[k]
			}
			col[i] = s / m[i*p+i]
		}
		for i := 0; i <= j; i++ {
			d[i] += col[i] * col[i]
		}
	}
	for i := range d {
		d[i] *= scale[i] * scale[i]
	}
	return true
}

// columnRMS sets ws.rms to the root mean square of each column of x and
// ws.rowMax to the largest norm of a row, computed once per fit (the design
// does not change within one).
func (ws *Workspace) columnRMS(x blas64.General) {
	if ws.rmsOK {
		return
	}
	ws.rmsOK = true
	for j := range ws.rms {
		ws.rms[j] = 0
	}
	var rowMax float64
	for i := 0; i < ws.n; i++ {
		var ss float64
		for j, v := range row(x, i) {
			ws.rms[j] += v * v
			ss += v * v
		}
		if ss > rowMax || ss != ss {
			rowMax = ss
		}
	}
	ws.rowMax = math.Sqrt(rowMax)
	for j := range ws.rms {
		ws.rms[j] = math.Sqrt(ws.rms[j] / float64(ws.n))
	}
}

// equationNorm returns max_j |Σ_i psi_i x_ij| / (n rms_j) for the values in
// ws.psi, without touching ws.h.
func (ws *Workspace) equationNorm(x blas64.General) float64 {
	var sums [8]float64
	if ws.p <= len(sums) {
		// The same sums, each over the rows in order, taken row by row:
		// the design is stored by rows.
		s := sums[:ws.p]
		for i, v := range ws.psi[:ws.n] {
			for j, xij := range x.Data[i*x.Stride : i*x.Stride+ws.p] {
				s[j] += v * xij
			}
		}
		var worst float64
		for j, sj := range s {
			if ws.rms[j] > 0 {
				worst = math.Max(worst, math.Abs(sj)/(float64(ws.n)*ws.rms[j]))
			}
		}
		return worst
	}
	var worst float64
	for j := 0; j < ws.p; j++ {
		var s float64
		for i := 0; i < ws.n; i++ {
			s += ws.psi[i] * x.Data[i*x.Stride+j]
		}
		if ws.rms[j] > 0 {
			worst = math.Max(worst, math.Abs(s)/(float64(ws.n)*ws.rms[j]))
		}
	}
	return worst
}

// residualsBracket sets ws.r = y − Xβ with the bits of residuals, and in
// the same pass does madBetweenStats's sorting of |r_i| against [lo, hi]
// into ws.buf, returning the counts madFinishStats takes.
func (ws *Workspace) residualsBracket(x blas64.General, y, beta []float64, lo, hi float64) (below, mid int) {
	n, p := ws.n, ws.p
	if p == 5 {
		return ws.residualsBracket5(x, y, beta, lo, hi)
	}
	r, buf, y := ws.r[:n], ws.buf[:n], y[:n]
	beta = beta[:p]
	for i := range r {
		ri := y[i] - gemvDot(x.Data[i*x.Stride:i*x.Stride+p], beta, i == n-1 && n%2 == 1)
		r[i] = ri
		a := math.Abs(ri)
		buf[mid] = a
		lt, gt := b2i(a < lo), b2i(a > hi)
		below += lt
		mid += 1 - lt - gt
	}
	return below, mid
}

// residualsBracket5 is residualsBracket for five columns.
func (ws *Workspace) residualsBracket5(x blas64.General, y, beta []float64, lo, hi float64) (below, mid int) {
	n := ws.n
	r, buf := ws.r[:n], ws.buf[:n]
	paired := n - n%2 // the rows gonum's kernel takes in blocks
	below, mid = bracketRows5(r[:paired], y, buf, x.Data, x.Stride, (*[5]float64)(beta), lo, hi)
	if paired < n {
		i := n - 1
		ri := y[i] - gemvDot5(x.Data[i*x.Stride:], beta, true)
		r[i] = ri
		a := math.Abs(ri)
		buf[mid] = a
		lt, gt := b2i(a < lo), b2i(a > hi)
		below += lt
		mid += 1 - lt - gt
	}
	return below, mid
}

// bracketRows5 is the loop of residualsBracket5 over the rows gonum's
// kernel takes in blocks, with gemvDot5's sums written out; it is a
// function of its own, with few values live, so that its counters stay
// in registers.
func bracketRows5(r, y, buf, data []float64, stride int, beta *[5]float64, lo, hi float64) (below, mid int) {
	b0, b1, b2, b3, b4 := beta[0], beta[1], beta[2], beta[3], beta[4]
	y = y[:len(r)]
	buf = buf[:len(r)]
	off := 0
	for i := range r {
		xi := data[off : off+5 : off+5]
		off += stride
		var even, odd float64
		even += xi[0] * b0
		odd += xi[1] * b1
		even += xi[2] * b2
		odd += xi[3] * b3
		ri := y[i] - ((even + odd) + xi[4]*b4)
		r[i] = ri
		a := math.Abs(ri)
		buf[mid] = a
		lt, gt := b2i(a < lo), b2i(a > hi)
		below += lt
		mid += 1 - lt - gt
	}
	return below, mid
}

// gemvDot returns a·b summed in the order of gonum's amd64 matrix-vector
// kernel (GemvN), which residuals uses, so that residualsBracket gives the
// same bits: two running sums, of the even and of the odd columns, over
// all but an odd last column; then, for a row the kernel takes in a block
// of two or four (every row but an odd n's last, alone), the two sums are
// added before the last column's product, and for a row taken alone,
// after it is added to the even sum.
func gemvDot(a, b []float64, alone bool) float64 {
	p := len(a)
	b = b[:p]
	var even, odd float64
	c := 0
	for ; c+4 <= p; c += 4 {
		even += a[c] * b[c]
		odd += a[c+1] * b[c+1]
		even += a[c+2] * b[c+2]
		odd += a[c+3] * b[c+3]
	}
	if p&2 != 0 {
		even += a[c] * b[c]
		odd += a[c+1] * b[c+1]
		c += 2
	}
	if p&1 == 0 {
		return even + odd
	}
	if alone {
		return (even + a[c]*b[c]) + odd
	}
	return (even + odd) + a[c]*b[c]
}

// gemvDot5 is gemvDot for five columns.
func gemvDot5(a, b []float64, alone bool) float64 {
	a, b = a[:5:5], b[:5:5]
	var even, odd float64
	even += a[0] * b[0]
	odd += a[1] * b[1]
	even += a[2] * b[2]
	odd += a[3] * b[3]
	if alone {
		return (even + a[4]*b[4]) + odd
	}
	return (even + odd) + a[4]*b[4]
}
