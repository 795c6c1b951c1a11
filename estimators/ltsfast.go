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
	// Written without a data-dependent branch: a row outside adds +0 (the
	// bits of its square masked off), which leaves the non-negative sum
	// unchanged.
	var q float64
	atMost := 0
	for i, v := range r2 {
		in := v <= t
		cur[i] = in
		one := b2i(in)
		atMost += one
		q += math.Float64frombits(math.Float64bits(v) & -uint64(one))
	}
	if atMost == h {
		return q, !math.IsInf(q, 0)
	}
	lw.markTies(r2, t)
	q = 0
	for i, in := range cur {
		if in {
			q += r2[i]
		}
	}
	return q, !math.IsInf(q, 0)
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
		k += b2i(in)
	}
	return rows[:min(k, lw.h)]
}
