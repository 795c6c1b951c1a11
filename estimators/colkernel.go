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
// residuals y − Xβ are p vector updates. Up to colMaxP columns and
// NestedMinRows rows the products take n·p(p+1)/2 values; beyond either
// the searches use the row kernels.

// colMaxP is the largest number of columns for which the column products
// are stored. columns stores them for at most NestedMinRows rows (larger
// designs search in nested blocks of that many rows, and the fallbacks to
// a search on all rows take the row kernels), so at p = 32 they take at
// most 1500·528 values (6.3 MB) and the columns 1500·32 (0.4 MB). LTS
// also keeps the same products by rows, with the x_ik y_i, in
// ltsStartWork.prod (1500·560 values, 6.7 MB): about 13.4 MB in all.
// Against the row kernels they make a fit at n = 5000 about 3.5 times
// faster at p = 10 and p = 20 (S and MM; LTS about 2 times), and about 2
// times at p = 50, where the two tables would take 31 MB; 32 keeps the
// memory small and the proofs of the LTS starts tested
// (TestLTSStartStepsExact draws p up to colMaxP).
const colMaxP = 32

// colWork holds the columns of a design and their products.
type colWork struct {
	n, p int
	xt   []float64 // p×n, column k is xt[k*n:(k+1)*n]
	q    int       // p(p+1)/2
	at   []int     // q, the place k·p + l in the p×p normal matrix of the product x_k∘x_l
	prod []float64 // q×n, row kl holds the product x_k∘x_l, the pairs k ≤ l in row-major order of the upper triangle
	w    []float64 // n, weights of a step, or scratch (madCountAbs)
	wr   []float64 // n, weights times residuals, or scratch
}

// columns returns lw.col loaded with the columns of x and their products,
// or nil when x has more than colMaxP columns or more than NestedMinRows
// rows (see colMaxP).
func (lw *ltsWork) columns(x blas64.General) *colWork {
	n, p := x.Rows, x.Cols
	if p > colMaxP || n > NestedMinRows {
		return nil
	}
	if lw.col == nil {
		lw.col = new(colWork)
	}
	cw := lw.col
	q := p * (p + 1) / 2
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
	grow(&cw.at, q)
	kl := 0
	for k := 0; k < p; k++ {
		xk := cw.col(k)
		for l := k; l < p; l++ {
			xl := cw.col(l)[:len(xk)]
			dst := cw.prod[kl*n : (kl+1)*n][:len(xk)]
			for i, v := range xk {
				dst[i] = v * xl[i]
			}
			cw.at[kl] = k*p + l
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
	n, p, q := cw.n, cw.p, cw.q
	w, v = w[:n], v[:n]
	m, g = m[:p*p], g[:p]
	var out [4]float64
	// The products x_k∘x_l against w, in the order of the upper
	// triangle by rows; the last group of four repeats the last product
	// where q is not a multiple of four.
	at := cw.at[:q]
	for kl := 0; kl < q; kl += 4 {
		c1, c2, c3 := min(kl+1, q-1), min(kl+2, q-1), min(kl+3, q-1)
		dot4(w, cw.prod[kl*n:], cw.prod[c1*n:], cw.prod[c2*n:], cw.prod[c3*n:], &out)
		for j := 0; j < 4 && kl+j < q; j++ {
			m[at[kl+j]] = out[j]
		}
	}
	for k := 0; k < p; k += 4 {
		c1, c2, c3 := min(k+1, p-1), min(k+2, p-1), min(k+3, p-1)
		dot4(v, cw.xt[k*n:], cw.xt[c1*n:], cw.xt[c2*n:], cw.xt[c3*n:], &out)
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
