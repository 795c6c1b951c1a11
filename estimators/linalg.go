package estimators

import "math"

// This file holds the small dense kernels of a fit. They work on flat slices
// owned by a Workspace and allocate nothing.

// norm2 returns the Euclidean norm of x without overflow or underflow for
// any finite input. The plain sum of squares is used when it is safely inside
// the normal range; otherwise the values are rescaled by a power of two.
func norm2(x []float64) float64 {
	var s float64
	for _, v := range x {
		s += v * v
	}
	if s > 0x1p-900 && s < 0x1p900 {
		return math.Sqrt(s)
	}
	var big float64
	for _, v := range x {
		if a := math.Abs(v); a > big || a != a {
			big = a
		}
	}
	if big == 0 || math.IsInf(big, 0) || math.IsNaN(big) {
		return big
	}
	// Scale by a power of two near 1/big: exact, and a product not a division.
	_, e := math.Frexp(big)
	inv := math.Ldexp(1, -e)
	s = 0
	for _, v := range x {
		t := v * inv
		s += t * t
	}
	return math.Ldexp(math.Sqrt(s), e)
}

// householderSolve solves min ‖A b − y‖₂ by Householder QR. a holds the n×p
// matrix A column by column (column j is a[j*n:(j+1)*n]) and is overwritten
// with the factorisation; y (length n) is overwritten with Qᵀy. rdiag and
// colScale (length p) receive the diagonal of R and the column scales, which
// qrSolve needs to solve again with the same factorisation. It reports
// false, leaving b undefined, when A is numerically rank deficient.
func householderSolve(a []float64, n, p int, y, b, rdiag, colScale []float64) bool {
	if !householderFactor(a, n, p, rdiag, colScale) {
		return false
	}
	qrSolve(a, n, p, rdiag, colScale, y, b)
	return true
}

// householderFactor computes the QR factorisation of A (layout as in
// householderSolve). The columns are first scaled to unit norm, which makes
// the rank test independent of the units of the columns. It reports false
// when a diagonal element of R is below n·eps relative to the largest.
func householderFactor(a []float64, n, p int, rdiag, colScale []float64) bool {
	for j := 0; j < p; j++ {
		col := a[j*n : (j+1)*n]
		s := norm2(col)
		if s == 0 || math.IsInf(s, 0) || math.IsNaN(s) {
			return false
		}
		colScale[j] = s
		inv := 1 / s
		for i := range col {
			col[i] *= inv
		}
	}
	for k := 0; k < p; k++ {
		col := a[k*n : (k+1)*n]
		normx := norm2(col[k:])
		if normx == 0 {
			return false
		}
		alpha := -math.Copysign(normx, col[k])
		col[k] -= alpha // v = x − alpha e_k, stored in place of x
		v := col[k:]
		// Two columns per pass load the reflector once for both; each
		// column's sums are formed in the same order as one at a time.
		j := k + 1
		for ; j+1 < p; j += 2 {
			applyReflectorTwo(v, a[j*n+k:(j+1)*n], a[(j+1)*n+k:(j+2)*n], alpha)
		}
		if j < p {
			applyReflector(v, a[j*n+k:(j+1)*n], alpha)
		}
		rdiag[k] = alpha
	}
	var rmax float64
	for k := 0; k < p; k++ {
		rmax = math.Max(rmax, math.Abs(rdiag[k]))
	}
	tol := float64(n) * epsilon * rmax
	for k := 0; k < p; k++ {
		if !(math.Abs(rdiag[k]) > tol) {
			return false
		}
	}
	return true
}

// applyReflector applies the Householder reflector I − vvᵀ/(|α|·|v₀|) to c, where
// v = x − αe₁ and α = −sign(x₀)‖x‖; then vᵀv/2 = |α|(|α| + |x₀|) = |α|·|v₀|.
func applyReflector(v, c []float64, alpha float64) {
	var s float64
	for i, vi := range v {
		s += vi * c[i]
	}
	s /= math.Abs(alpha) * math.Abs(v[0])
	for i, vi := range v {
		c[i] -= s * vi
	}
}

// qrSolve solves R b = (Qᵀy)[:p] with a factorisation from householderFactor,
// overwriting y with Qᵀy, and undoes the column scaling.
func qrSolve(a []float64, n, p int, rdiag, colScale, y, b []float64) {
	for k := 0; k < p; k++ {
		applyReflector(a[k*n+k:(k+1)*n], y[k:], rdiag[k])
	}
	// Back substitution; R's strict upper part is a[j*n+i], i < j.
	for k := p - 1; k >= 0; k-- {
		s := y[k]
		for j := k + 1; j < p; j++ {
			s -= a[j*n+k] * b[j]
		}
		b[k] = s / rdiag[k]
	}
	for j := 0; j < p; j++ {
		b[j] /= colScale[j]
	}
}

// epsilon is the float64 machine epsilon, 2^-52.
const epsilon = 0x1p-52

// minCholeskyPivot is the smallest squared pivot accepted when factorising a
// unit-diagonal (equilibrated) normal matrix. Below it the condition number
// of the normal equations exceeds about 1e10 and the solve falls back to QR.
const minCholeskyPivot = 1e-10

// equilibrate scales the symmetric p×p matrix whose upper triangle is in m
// to a unit diagonal, writing the scales 1/√M_ii to scale. It reports false
// when a diagonal element is not positive and finite.
func equilibrate(m []float64, p int, scale []float64) bool {
	for i := 0; i < p; i++ {
		d := m[i*p+i]
		if !(d > 0) || math.IsInf(d, 0) {
			return false
		}
		scale[i] = 1 / math.Sqrt(d)
	}
	for i := 0; i < p; i++ {
		for j := i; j < p; j++ {
			m[i*p+j] *= scale[i] * scale[j]
		}
	}
	return true
}

// choleskyUpper factorises the symmetric matrix in m (upper triangle) as
// UᵀU in place. It reports false when a squared pivot is not above
// minPivot.
func choleskyUpper(m []float64, p int, minPivot float64) bool {
	for i := 0; i < p; i++ {
		s := m[i*p+i]
		for k := 0; k < i; k++ {
			s -= m[k*p+i] * m[k*p+i]
		}
		if !(s > minPivot) {
			return false
		}
		uii := math.Sqrt(s)
		m[i*p+i] = uii
		for j := i + 1; j < p; j++ {
			t := m[i*p+j]
			for k := 0; k < i; k++ {
				t -= m[k*p+i] * m[k*p+j]
			}
			m[i*p+j] = t / uii
		}
	}
	return true
}

// choleskySolve solves M d = g for a symmetric p×p matrix M whose upper
// triangle is stored row-major in m (m[i*p+j], j ≥ i); m is overwritten with
// the factor and g with the solution. The system is first equilibrated to a
// unit diagonal with scale (length p, scratch). It reports false when M is
// not positive definite or too ill-conditioned for the normal equations.
func choleskySolve(m []float64, p int, g, scale []float64) bool {
	if p == 5 {
		return choleskySolve5(m, g, scale)
	}
	if !equilibrate(m, p, scale) {
		return false
	}
	for i := 0; i < p; i++ {
		g[i] *= scale[i]
	}
	if !choleskyUpper(m, p, minCholeskyPivot) {
		return false
	}
	// Solve Uᵀz = g, then U d = z.
	solveUpperT(m, p, g)
	solveUpper(m, p, g)
	for i := 0; i < p; i++ {
		g[i] *= scale[i]
	}
	return true
}

// solveUpper overwrites b with the solution x of U x = b, where U is the
// upper triangle (diagonal included) of the p×p row-major matrix u.
func solveUpper(u []float64, p int, b []float64) {
	for i := p - 1; i >= 0; i-- {
		s := b[i]
		for k := i + 1; k < p; k++ {
			s -= u[i*p+k] * b[k]
		}
		b[i] = s / u[i*p+i]
	}
}

// solveUpperT overwrites b with the solution z of Uᵀz = b, U as in
// solveUpper.
func solveUpperT(u []float64, p int, b []float64) {
	for i := 0; i < p; i++ {
		s := b[i]
		for k := 0; k < i; k++ {
			s -= u[k*p+i] * b[k]
		}
		b[i] = s / u[i*p+i]
	}
}

// The rank-two updates of the weighted normal matrix for the most common
// small numbers of columns, unrolled: the same operations as rankTwo's
// loops in the same order (so the same bits), without the loop control,
// whose inner trip counts of p, p − 1, …, 1 the branch predictor misses.

// rankTwo3 is rankTwo for p = 3, unrolled.
func rankTwo3(m, xi, xj []float64, a, b float64) {
	m = m[:9:9]
	xi, xj = xi[:3:3], xj[:3:3]
	ak, bk := a*xi[0], b*xj[0]
	m[0] += ak*xi[0] + bk*xj[0]
	m[1] += ak*xi[1] + bk*xj[1]
	m[2] += ak*xi[2] + bk*xj[2]
	ak, bk = a*xi[1], b*xj[1]
	m[4] += ak*xi[1] + bk*xj[1]
	m[5] += ak*xi[2] + bk*xj[2]
	ak, bk = a*xi[2], b*xj[2]
	m[8] += ak*xi[2] + bk*xj[2]
}

// rankTwo4 is rankTwo for p = 4, unrolled.
func rankTwo4(m, xi, xj []float64, a, b float64) {
	m = m[:16:16]
	xi, xj = xi[:4:4], xj[:4:4]
	ak, bk := a*xi[0], b*xj[0]
	m[0] += ak*xi[0] + bk*xj[0]
	m[1] += ak*xi[1] + bk*xj[1]
	m[2] += ak*xi[2] + bk*xj[2]
	m[3] += ak*xi[3] + bk*xj[3]
	ak, bk = a*xi[1], b*xj[1]
	m[5] += ak*xi[1] + bk*xj[1]
	m[6] += ak*xi[2] + bk*xj[2]
	m[7] += ak*xi[3] + bk*xj[3]
	ak, bk = a*xi[2], b*xj[2]
	m[10] += ak*xi[2] + bk*xj[2]
	m[11] += ak*xi[3] + bk*xj[3]
	ak, bk = a*xi[3], b*xj[3]
	m[15] += ak*xi[3] + bk*xj[3]
}

// rankTwo5 is rankTwo for p = 5, unrolled.
func rankTwo5(m, xi, xj []float64, a, b float64) {
	m = m[:25:25]
	xi, xj = xi[:5:5], xj[:5:5]
	ak, bk := a*xi[0], b*xj[0]
	m[0] += ak*xi[0] + bk*xj[0]
	m[1] += ak*xi[1] + bk*xj[1]
	m[2] += ak*xi[2] + bk*xj[2]
	m[3] += ak*xi[3] + bk*xj[3]
	m[4] += ak*xi[4] + bk*xj[4]
	ak, bk = a*xi[1], b*xj[1]
	m[6] += ak*xi[1] + bk*xj[1]
	m[7] += ak*xi[2] + bk*xj[2]
	m[8] += ak*xi[3] + bk*xj[3]
	m[9] += ak*xi[4] + bk*xj[4]
	ak, bk = a*xi[2], b*xj[2]
	m[12] += ak*xi[2] + bk*xj[2]
	m[13] += ak*xi[3] + bk*xj[3]
	m[14] += ak*xi[4] + bk*xj[4]
	ak, bk = a*xi[3], b*xj[3]
	m[18] += ak*xi[3] + bk*xj[3]
	m[19] += ak*xi[4] + bk*xj[4]
	ak, bk = a*xi[4], b*xj[4]
	m[24] += ak*xi[4] + bk*xj[4]
}

// rankTwo6 is rankTwo for p = 6, unrolled.
func rankTwo6(m, xi, xj []float64, a, b float64) {
	m = m[:36:36]
	xi, xj = xi[:6:6], xj[:6:6]
	ak, bk := a*xi[0], b*xj[0]
	m[0] += ak*xi[0] + bk*xj[0]
	m[1] += ak*xi[1] + bk*xj[1]
	m[2] += ak*xi[2] + bk*xj[2]
	m[3] += ak*xi[3] + bk*xj[3]
	m[4] += ak*xi[4] + bk*xj[4]
	m[5] += ak*xi[5] + bk*xj[5]
	ak, bk = a*xi[1], b*xj[1]
	m[7] += ak*xi[1] + bk*xj[1]
	m[8] += ak*xi[2] + bk*xj[2]
	m[9] += ak*xi[3] + bk*xj[3]
	m[10] += ak*xi[4] + bk*xj[4]
	m[11] += ak*xi[5] + bk*xj[5]
	ak, bk = a*xi[2], b*xj[2]
	m[14] += ak*xi[2] + bk*xj[2]
	m[15] += ak*xi[3] + bk*xj[3]
	m[16] += ak*xi[4] + bk*xj[4]
	m[17] += ak*xi[5] + bk*xj[5]
	ak, bk = a*xi[3], b*xj[3]
	m[21] += ak*xi[3] + bk*xj[3]
	m[22] += ak*xi[4] + bk*xj[4]
	m[23] += ak*xi[5] + bk*xj[5]
	ak, bk = a*xi[4], b*xj[4]
	m[28] += ak*xi[4] + bk*xj[4]
	m[29] += ak*xi[5] + bk*xj[5]
	ak, bk = a*xi[5], b*xj[5]
	m[35] += ak*xi[5] + bk*xj[5]
}

// choleskySolve5 is choleskySolve for p = 5, unrolled: the same operations
// in the same order, so the same bits, on the same failures.
func choleskySolve5(m, g, scale []float64) bool {
	m, g, scale = m[:25:25], g[:5:5], scale[:5:5]
	// equilibrate
	if d := m[0]; !(d > 0) || math.IsInf(d, 0) {
		return false
	} else {
		scale[0] = 1 / math.Sqrt(d)
	}
	if d := m[6]; !(d > 0) || math.IsInf(d, 0) {
		return false
	} else {
		scale[1] = 1 / math.Sqrt(d)
	}
	if d := m[12]; !(d > 0) || math.IsInf(d, 0) {
		return false
	} else {
		scale[2] = 1 / math.Sqrt(d)
	}
	if d := m[18]; !(d > 0) || math.IsInf(d, 0) {
		return false
	} else {
		scale[3] = 1 / math.Sqrt(d)
	}
	if d := m[24]; !(d > 0) || math.IsInf(d, 0) {
		return false
	} else {
		scale[4] = 1 / math.Sqrt(d)
	}
	m[0] *= scale[0] * scale[0]
	m[1] *= scale[0] * scale[1]
	m[2] *= scale[0] * scale[2]
	m[3] *= scale[0] * scale[3]
	m[4] *= scale[0] * scale[4]
	m[6] *= scale[1] * scale[1]
	m[7] *= scale[1] * scale[2]
	m[8] *= scale[1] * scale[3]
	m[9] *= scale[1] * scale[4]
	m[12] *= scale[2] * scale[2]
	m[13] *= scale[2] * scale[3]
	m[14] *= scale[2] * scale[4]
	m[18] *= scale[3] * scale[3]
	m[19] *= scale[3] * scale[4]
	m[24] *= scale[4] * scale[4]
	g[0] *= scale[0]
	g[1] *= scale[1]
	g[2] *= scale[2]
	g[3] *= scale[3]
	g[4] *= scale[4]
	// choleskyUpper
	var s, t, uii float64
	s = m[0]
	if !(s > minCholeskyPivot) {
		return false
	}
	uii = math.Sqrt(s)
	m[0] = uii
	t = m[1]
	m[1] = t / uii
	t = m[2]
	m[2] = t / uii
	t = m[3]
	m[3] = t / uii
	t = m[4]
	m[4] = t / uii
	s = m[6]
	s -= m[1] * m[1]
	if !(s > minCholeskyPivot) {
		return false
	}
	uii = math.Sqrt(s)
	m[6] = uii
	t = m[7]
	t -= m[1] * m[2]
	m[7] = t / uii
	t = m[8]
	t -= m[1] * m[3]
	m[8] = t / uii
	t = m[9]
	t -= m[1] * m[4]
	m[9] = t / uii
	s = m[12]
	s -= m[2] * m[2]
	s -= m[7] * m[7]
	if !(s > minCholeskyPivot) {
		return false
	}
	uii = math.Sqrt(s)
	m[12] = uii
	t = m[13]
	t -= m[2] * m[3]
	t -= m[7] * m[8]
	m[13] = t / uii
	t = m[14]
	t -= m[2] * m[4]
	t -= m[7] * m[9]
	m[14] = t / uii
	s = m[18]
	s -= m[3] * m[3]
	s -= m[8] * m[8]
	s -= m[13] * m[13]
	if !(s > minCholeskyPivot) {
		return false
	}
	uii = math.Sqrt(s)
	m[18] = uii
	t = m[19]
	t -= m[3] * m[4]
	t -= m[8] * m[9]
	t -= m[13] * m[14]
	m[19] = t / uii
	s = m[24]
	s -= m[4] * m[4]
	s -= m[9] * m[9]
	s -= m[14] * m[14]
	s -= m[19] * m[19]
	if !(s > minCholeskyPivot) {
		return false
	}
	uii = math.Sqrt(s)
	m[24] = uii
	// solveUpperT
	s = g[0]
	g[0] = s / m[0]
	s = g[1]
	s -= m[1] * g[0]
	g[1] = s / m[6]
	s = g[2]
	s -= m[2] * g[0]
	s -= m[7] * g[1]
	g[2] = s / m[12]
	s = g[3]
	s -= m[3] * g[0]
	s -= m[8] * g[1]
	s -= m[13] * g[2]
	g[3] = s / m[18]
	s = g[4]
	s -= m[4] * g[0]
	s -= m[9] * g[1]
	s -= m[14] * g[2]
	s -= m[19] * g[3]
	g[4] = s / m[24]
	// solveUpper
	s = g[4]
	g[4] = s / m[24]
	s = g[3]
	s -= m[19] * g[4]
	g[3] = s / m[18]
	s = g[2]
	s -= m[13] * g[3]
	s -= m[14] * g[4]
	g[2] = s / m[12]
	s = g[1]
	s -= m[7] * g[2]
	s -= m[8] * g[3]
	s -= m[9] * g[4]
	g[1] = s / m[6]
	s = g[0]
	s -= m[1] * g[1]
	s -= m[2] * g[2]
	s -= m[3] * g[3]
	s -= m[4] * g[4]
	g[0] = s / m[0]
	g[0] *= scale[0]
	g[1] *= scale[1]
	g[2] *= scale[2]
	g[3] *= scale[3]
	g[4] *= scale[4]
	return true
}

// upperInverseNorm2 returns ‖U⁻¹‖²_F for the upper triangular p×p U held
// row-major in t with each diagonal element replaced by its reciprocal,
// finding U⁻¹ column by column (U u = e_j, u_i = 0 for i > j); u (p) is
// scratch.
func upperInverseNorm2(t []float64, p int, u []float64) float64 {
	var s float64
	for j := 0; j < p; j++ {
		for i := j; i >= 0; i-- {
			var v float64
			if i == j {
				v = 1
			}
			for k := i + 1; k <= j; k++ {
				v -= t[i*p+k] * u[k]
			}
			u[i] = v * t[i*p+i]
			s += u[i] * u[i]
		}
	}
	return s
}
