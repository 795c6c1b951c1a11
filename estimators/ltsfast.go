package estimators

import (
	"math"

	"gonum.org/v1/gonum/blas/blas64"
)

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
	return q, !math.IsInf(q, 0)
}

// householderSolvePairs is householderSolve (same arguments, same
// result bit for bit) with each reflector applied to two columns per pass:
// the two inner products are summed in the same order as
// applyReflector's, but the reflector is loaded once for both. The C-steps
// of FAST-LTS spend most of their time here.
func householderSolvePairs(a []float64, n, p int, y, b, rdiag, colScale []float64) bool {
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
		col[k] -= alpha
		v := col[k:]
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
	qrSolve(a, n, p, rdiag, colScale, y, b)
	return true
}

// applyReflectorTwo is applyReflector applied to c and to d.
func applyReflectorTwo(v, c, d []float64, alpha float64) {
	c = c[:len(v)]
	d = d[:len(v)]
	var s, t float64
	for i, vi := range v {
		s += vi * c[i]
		t += vi * d[i]
	}
	den := math.Abs(alpha) * math.Abs(v[0])
	s /= den
	t /= den
	for i, vi := range v {
		c[i] -= s * vi
		d[i] -= t * vi
	}
}

// subsetRows returns the rows marked in lw.cur, in row order (the first h
// of them: evaluate marks exactly h). Every row is written at the next free
// place, which moves on only past a marked row, so the loop has no
// data-dependent branch; the buffer has room for the write past the end.
func (lw *ltsWork) subsetRows() []int {
	rows := lw.rows[:lw.n+1]
	k := 0
	for i, in := range lw.cur[:lw.n] {
		rows[k] = i
		k += boolInt(in)
	}
	return rows[:min(k, lw.h)]
}

// boolInt returns 1 for true and 0 for false, without a branch.
func boolInt(b bool) int {
	var i int
	if b {
		i = 1
	}
	return i
}
