package psi

// Psi is a psi function with its rho, derivative and IRLS weight. The
// argument of every method is a standardised residual u = r/sigma.
//
// Implementations must satisfy, for every finite u:
//   - Psi(u) = d/du Rho(u), Rho(0) = 0;
//   - Deriv(u) = d/du Psi(u) where Psi is differentiable (at a kink or jump
//     any one-sided value is acceptable);
//   - Weight(u) = Psi(u)/u for u != 0, and its limit at u = 0 (finite);
//   - no method returns NaN for finite u.
type Psi interface {
	// Rho is the loss of a standardised residual.
	Rho(u float64) float64
	// Psi is the derivative of Rho, the influence of a residual.
	Psi(u float64) float64
	// Deriv is the derivative of Psi.
	Deriv(u float64) float64
	// Weight is Psi(u)/u, the IRLS weight, finite at u = 0.
	Weight(u float64) float64
}

// Kinked is implemented by psi functions that are not smooth everywhere. Kinks
// returns the non-negative points at which psi or its derivative jumps, in
// increasing order; by symmetry their negatives are kinks too. Quadrature in
// the theory routines splits the real line at these points.
type Kinked interface {
	Kinks() []float64
}

// Bounded is implemented by psi functions whose rho is bounded. RhoMax
// returns sup rho, used for the breakdown point of an S-scale.
type Bounded interface {
	RhoMax() float64
}
