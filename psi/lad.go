package psi

import "math"

// LAD is the psi of least absolute deviations (median regression),
// smoothed only in a band of half-width Eps around zero:
//
//	rho(u) = |u| - Eps/2   for |u| > Eps,   u²/(2 Eps) for |u| ≤ Eps,
//	psi(u) = sign(u)       for |u| > Eps,   u/Eps      for |u| ≤ Eps,
//	psi'(u) = 0            for |u| > Eps,   1/Eps      for |u| ≤ Eps,
//	w(u)   = 1/max(|u|, Eps).
//
// The IRLS weight 1/|u| of exact least absolute deviations is infinite at a
// zero residual, so it is capped at 1/Eps. The fixed point IRLS reaches is
// then the minimiser of this smoothed rho (Huber's rho with k = Eps, divided
// by Eps), which differs from an exact least-absolute-deviations fit by at
// most a term of order Eps times the scale. estimators.MethodLAD computes
// the exact least-absolute-deviations fit instead. IRLS converges only
// linearly for this psi, and very slowly where the LAD fit is nearly not
// unique, so fits often need far more iterations than the default cap.
//
// The default Eps = 1e-6 only caps the weight. Median regression has
// asymptotic efficiency 2/π ≈ 63.7% at the normal model (common practice).
type LAD struct {
	// Eps is the half-width of the smoothed band, Eps > 0.
	Eps float64
}

// Rho returns |u| - Eps/2 outside [-Eps, Eps] and u²/(2 Eps) inside.
func (l LAD) Rho(u float64) float64 {
	a := math.Abs(u)
	if a > l.Eps {
		return a - l.Eps/2
	}
	return u * u / (2 * l.Eps)
}

// Psi returns sign(u) outside [-Eps, Eps] and u/Eps inside.
func (l LAD) Psi(u float64) float64 {
	switch {
	case u > l.Eps:
		return 1
	case u < -l.Eps:
		return -1
	}
	return u / l.Eps
}

// Deriv returns 1/Eps inside [-Eps, Eps] and 0 outside.
func (l LAD) Deriv(u float64) float64 {
	if math.Abs(u) <= l.Eps {
		return 1 / l.Eps
	}
	return 0
}

// Weight returns 1/max(|u|, Eps).
func (l LAD) Weight(u float64) float64 {
	return 1 / math.Max(math.Abs(u), l.Eps)
}

// Kinks returns Eps, where psi' jumps.
func (l LAD) Kinks() []float64 { return []float64{l.Eps} }
