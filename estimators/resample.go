package estimators

import (
	"math"

	"gonum.org/v1/gonum/blas/blas64"
)

// ElementalSubsets returns the default number of random elemental subsets
// for p coefficients: the smallest m with 1 − (1 − 2⁻ᵖ)ᵐ ≥ 0.99, so that
// with half the rows contaminated at least one subset is clean with
// probability 0.99 (a p-subset is clean with probability about 2⁻ᵖ; common
// practice), but at least 500, the default of the published fast-S and
// FAST-LTS algorithms (from memory), which covers p ≤ 6, and at most
// 10,000. The cap is reached from p = 12 on (p = 11 needs 9430, p = 12
// needs 18861): there the guarantee falls to about 91%, and to 70% at
// p = 13.
func ElementalSubsets(p int) int {
	if p < 1 {
		return 500
	}
	need := math.Ceil(math.Log(0.01) / math.Log1p(-math.Ldexp(1, -p)))
	switch {
	case !(need <= 10000): // also when 2⁻ᵖ rounds to 0
		return 10000
	case need < 500:
		return 500
	}
	return int(need)
}

// elementalFit draws p distinct rows from ws's random stream and solves the
// exact fit through them into beta, redrawing when the p×p system is
// singular. Every draw takes one from *budget; it reports false when the
// budget runs out without a regular subset. The rows are drawn by
// rejection of repeats, so the draw depends only on the stream. The
// system is solved by elimination (luSolve), and by QR where elimination
// finds it singular.
func (ws *Workspace) elementalFit(x blas64.General, y, beta []float64, budget *int) bool {
	p := ws.p
	rows := ws.subset[:p]
	for ; *budget > 0; *budget-- {
		for k := 0; k < p; {
			i := ws.rng.IntN(ws.n)
			fresh := true
			for _, prev := range rows[:k] {
				fresh = fresh && prev != i
			}
			if fresh {
				rows[k] = i
				k++
			}
		}
		// Column-major p×p system in qa, right-hand side in qy.
		fill := func() {
			for k, i := range rows {
				for j, v := range row(x, i) {
					ws.qa[j*p+k] = v
				}
				ws.qy[k] = y[i]
			}
		}
		fill()
		solved := luSolve(ws.qa[:p*p], p, ws.qy[:p], beta, ws.pscale)
		if !solved {
			// Elimination's rank test is stricter than that of QR on
			// systems singular to rounding (two equal rows, say), whose
			// QR solution still fits the p rows; such subsets were
			// always candidates, and stay so.
			fill()
			solved = householderSolve(ws.qa[:p*p], p, p, ws.qy[:p], beta, ws.rdiag, ws.pscale)
		}
		if solved {
			ok := true
			for _, b := range beta {
				if math.IsNaN(b) || math.IsInf(b, 0) {
					ok = false
				}
			}
			if ok {
				*budget--
				return true
			}
		}
	}
	return false
}

// luSolve solves the p×p system A·b = y (A column-major in a, overwritten,
// as is y) by Gaussian elimination with partial pivoting, the columns first
// scaled to unit largest element so that the rank test does not depend on their
// units. It reports false when a column is zero or not finite, or when a
// pivot is at most p·eps relative to the largest (the system is singular
// to rounding, the test householderFactor makes of R's diagonal); colScale
// (p) is scratch. For the elemental fits of the resampling searches, where
// the solution is only a start that the I-steps then move, it takes a
// third of the operations of a QR factorisation. elementalFit falls back
// to QR where it reports false.
func luSolve(a []float64, p int, y, b, colScale []float64) bool {
	a, y, b, colScale = a[:p*p], y[:p], b[:p], colScale[:p]
	// Magnitudes are compared by their bits, as unsigned integers, which
	// order as the values do (NaN above +Inf): no data-dependent branch,
	// and no floating-point maximum with its NaN rules.
	const noSign = 1<<63 - 1
	for j := range colScale {
		col := a[j*p : (j+1)*p]
		var big uint64
		for _, v := range col {
			big = max(big, math.Float64bits(v)&noSign)
		}
		if big == 0 || big >= 0x7ff0000000000000 { // zero, Inf or NaN
			return false
		}
		inv := 1 / math.Float64frombits(big)
		colScale[j] = inv
		for i := range col {
			col[i] *= inv
		}
	}
	var umaxBits uint64
	for k := 0; k < p; k++ {
		ck := a[k*p : (k+1)*p]
		// The pivot: the largest |a_ik| for i ≥ k.
		piv, big := k, math.Float64bits(ck[k])&noSign
		for i := k + 1; i < p; i++ {
			v := math.Float64bits(ck[i]) & noSign
			piv += (i - piv) * b2i(v > big)
			big = max(big, v)
		}
		if big == 0 || big >= 0x7ff0000000000000 {
			return false
		}
		// The swap is made even when piv = k, which leaves the rows as
		// they are: no branch to mispredict.
		for j := k; j < p; j++ {
			a[j*p+k], a[j*p+piv] = a[j*p+piv], a[j*p+k]
		}
		y[k], y[piv] = y[piv], y[k]
		umaxBits = max(umaxBits, big)
		inv := 1 / ck[k]
		ck[k] = inv // the diagonal is kept as its inverse
		for i := k + 1; i < p; i++ {
			ck[i] *= inv
		}
		for j := k + 1; j < p; j++ {
			cj := a[j*p : (j+1)*p]
			u := cj[k]
			for i := k + 1; i < p; i++ {
				cj[i] -= ck[i] * u
			}
		}
		yk := y[k]
		for i := k + 1; i < p; i++ {
			y[i] -= ck[i] * yk
		}
	}
	// |pivot| > tol, with the pivots held as inverses.
	tol := float64(p) * epsilon * math.Float64frombits(umaxBits)
	for k := p - 1; k >= 0; k-- {
		inv := a[k*p+k]
		if !(math.Abs(inv)*tol < 1) {
			return false
		}
		v := y[k]
		for j := k + 1; j < p; j++ {
			v -= a[j*p+k] * b[j]
		}
		b[k] = v * inv
	}
	for j, inv := range colScale {
		b[j] *= inv
	}
	return true
}
