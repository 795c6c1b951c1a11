package psi

import "math"

// Welsch is Welsch's psi, whose weight is a Gaussian bell in the residual.
// With v = u/C,
//
//	rho(u) = C²/2 (1 - exp(-v²)),
//	psi(u) = u exp(-v²),
//	w(u)   = exp(-v²).
//
// The default C = 2.985 gives 95% asymptotic efficiency at the normal model
// (Holland & Welsch (1977), Comm. Statist. Theory Methods 6:813-827). psi is
// smooth and redescends towards zero without reaching it; rho is bounded.
// The estimating equations can have several roots, so the start matters.
type Welsch struct {
	// C is the tuning constant, C > 0.
	C float64
}

// Rho returns C²/2 (1 - exp(-(u/C)²)).
func (w Welsch) Rho(u float64) float64 {
	v := u / w.C
	return -w.C * w.C / 2 * math.Expm1(-v*v)
}

// Psi returns u exp(-(u/C)²), and 0 where the exponential underflows (so
// that u = ±Inf gives 0, not NaN).
func (w Welsch) Psi(u float64) float64 {
	v := u / w.C
	e := math.Exp(-v * v)
	if e == 0 {
		return 0
	}
	return u * e
}

// Deriv returns (1 - 2v²) exp(-v²), v = u/C, and 0 where the exponential
// underflows.
func (w Welsch) Deriv(u float64) float64 {
	v := u / w.C
	e := math.Exp(-v * v)
	if e == 0 {
		return 0
	}
	return (1 - 2*v*v) * e
}

// Weight returns exp(-(u/C)²).
func (w Welsch) Weight(u float64) float64 {
	v := u / w.C
	return math.Exp(-v * v)
}

// RhoMax returns C²/2, the supremum of rho.
func (w Welsch) RhoMax() float64 { return w.C * w.C / 2 }
