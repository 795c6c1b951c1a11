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
// rejection of repeats, so the draw depends only on the stream.
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
		for k, i := range rows {
			for j, v := range row(x, i) {
				ws.qa[j*p+k] = v
			}
			ws.qy[k] = y[i]
		}
		if householderSolve(ws.qa[:p*p], p, p, ws.qy[:p], beta, ws.rdiag, ws.pscale) {
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
