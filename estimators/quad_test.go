package estimators

import "gonum.org/v1/gonum/integrate/quad"

// integrate returns ∫_a^b f by gonum's fixed 200-point Gauss-Legendre rule,
// exact to rounding for the smooth Gaussian integrands of these tests on
// intervals of length up to 40 (the adaptive quadrature of package psi is
// not exported).
func integrate(f func(float64) float64, a, b float64) float64 {
	return quad.Fixed(f, a, b, 200, quad.Legendre{}, 0)
}

// integrateHalfLine returns ∫_0^∞ f for an integrand with a Gaussian tail,
// split at the given increasing non-negative breaks and cut at 40, beyond
// which the tail is below 1e-300.
func integrateHalfLine(f func(float64) float64, breaks []float64) float64 {
	var sum float64
	lo := 0.0
	for _, b := range append(breaks, 40) {
		if b > lo {
			sum += integrate(f, lo, b)
			lo = b
		}
	}
	return sum
}
