package estimators

import (
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/floats"
)

// The resampling searches solve many small weighted least-squares problems
// on one design. Their normal equations are inner products of columns:
// Σ_i w_i x_ik x_il = ⟨w, x_k∘x_l⟩ and Σ_i w_i r_i x_ik = ⟨w∘r, x_k⟩. With
// the columns x_k and their products x_k∘x_l (k ≤ l) stored once per
// search, a step's normal equations are p(p+3)/2 inner products of length
// n, which run as vector instructions (gonum's floats.Dot), and its
// residuals y − Xβ are p vector updates. Below colMaxP columns the products
// take n·p(p+1)/2 values; above it the searches use the row kernels.

// colMaxP is the largest number of columns for which the column products
// are stored.
const colMaxP = 8

// colWork holds the columns of a design and their products.
type colWork struct {
	n, p int
	xt   []float64 // p×n, column k is xt[k*n:(k+1)*n]
	q    int       // p(p+1)/2
	prod []float64 // n×q, row i holds x_ik x_il for k ≤ l in row-major order of the upper triangle
	w    []float64 // n, weights of a step
	wr   []float64 // n, weights times residuals, or scratch
}

// columns returns lw.col loaded with the columns of x and their products,
// or nil when x has more than colMaxP columns.
func (lw *ltsWork) columns(x blas64.General) *colWork {
	n, p := x.Rows, x.Cols
	if p > colMaxP {
		return nil
	}
	if lw.col == nil {
		lw.col = new(colWork)
	}
	cw := lw.col
	q := p * (p + 1) / 2
	grow := func(s *[]float64, k int) {
		if cap(*s) < k {
			*s = make([]float64, k)
		}
		*s = (*s)[:k]
	}
	cw.n, cw.p, cw.q = n, p, q
	grow(&cw.xt, p*n)
	grow(&cw.prod, q*n)
	grow(&cw.w, n)
	grow(&cw.wr, n)
	for i := 0; i < n; i++ {
		for k, v := range row(x, i) {
			cw.xt[k*n+i] = v
		}
	}
	for i := 0; i < n; i++ {
		for k, v := range row(x, i) {
			cw.xt[k*n+i] = v
		}
	}
	kl := 0
	for k := 0; k < p; k++ {
		xk := cw.col(k)
		for l := k; l < p; l++ {
			xl := cw.col(l)[:len(xk)]
			dst := cw.prod[kl*n : (kl+1)*n][:len(xk)]
			for i, v := range xk {
				dst[i] = v * xl[i]
			}
			kl++
		}
	}
	return cw
}

// col returns column k.
func (cw *colWork) col(k int) []float64 { return cw.xt[k*cw.n : (k+1)*cw.n] }

// normal writes the upper triangle of Σ w_i x_i x_iᵀ to m (p×p row-major)
// and Σ v_i x_i to g, for the weights w and the values v, as inner
// products taken four at a time (dot4).
func (cw *colWork) normal(w, v, m, g []float64) {
	n, p := cw.n, cw.p
	w, v = w[:n], v[:n]
	var out [4]float64
	// The products x_k∘x_l, in the order of the upper triangle by rows,
	// against w; a last group of fewer than four repeats its last column.
	q := cw.q
	var at [4]int // m's index of each of the group's products
	k, l := 0, 0
	for kl := 0; kl < q; kl += 4 {
		var c [4][]float64
		for j := range c {
			col := min(kl+j, q-1)
			c[j] = cw.prod[col*n : (col+1)*n]
			if kl+j < q {
				at[j] = k*p + l
				if l++; l == p {
					k++
					l = k
				}
			} else {
				at[j] = -1
			}
		}
		dot4(w, c[0], c[1], c[2], c[3], &out)
		for j, i := range at {
			if i >= 0 {
				m[i] = out[j]
			}
		}
	}
	for k := 0; k < p; k += 4 {
		var c [4][]float64
		for j := range c {
			c[j] = cw.col(min(k+j, p-1))
		}
		dot4(v, c[0], c[1], c[2], c[3], &out)
		for j := 0; j < 4 && k+j < p; j++ {
			g[k+j] = out[j]
		}
	}
}

// residuals sets r = y − Xβ by p vector updates.
func (cw *colWork) residuals(y, beta, r []float64) {
	copy(r, y)
	for k, b := range beta[:cw.p] {
		floats.AddScaled(r, -b, cw.col(k))
	}
}
