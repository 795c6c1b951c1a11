package estimators

import "math"

// kthStart returns the h-th smallest of the squared residuals r2 (all ≥ 0
// and not NaN), the value kth returns: by counting (orderPair) for n below
// ltsWindowRows, and by kth above.
func (lw *ltsWork) kthStart(r2 []float64) float64 {
	n := len(r2)
	if n >= ltsWindowRows {
		return lw.kth(r2, lw.sel[:n])
	}
	top, sum := absMaxSum(r2, r2) // the values are their own magnitudes
	if math.IsInf(sum, 0) {
		return lw.kth(r2, lw.sel[:n]) // squares too large to count by
	}
	t, _ := orderPair(r2, lw.sel[:n], lw.h-1, lw.h-1, top)
	return t
}
