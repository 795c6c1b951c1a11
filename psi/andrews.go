package psi

import "math"

// Andrews is Andrews' sine psi, one arch of a sine wave out to ±πA and zero
// beyond. With v = u/A,
//
//	rho(u) = A² (1 - cos v)  for |u| ≤ πA,   2A² otherwise,
//	psi(u) = A sin v         for |u| ≤ πA,   0 otherwise,
//	w(u)   = A sin(v)/u      for |u| ≤ πA,   0 otherwise (1 at u = 0).
//
// The factor A makes psi(u) ≈ u near zero, so A is in units of the scale
// like the constants of the other families. The default A = 1.339 gives 95%
// asymptotic efficiency at the normal model (Holland & Welsch (1977), Comm.
// Statist. Theory Methods 6:813-827). psi is smooth inside ±πA and its
// derivative jumps there; being redescending, the estimating equations can
// have several roots, so the start matters.
type Andrews struct {
	// A is the tuning constant, A > 0.
	A float64
}

// Rho returns Andrews' rho, computed as 2A² sin²(v/2) to keep its accuracy
// near zero.
func (a Andrews) Rho(u float64) float64 {
	if math.Abs(u) > math.Pi*a.A {
		return 2 * a.A * a.A
	}
	s := math.Sin(u / a.A / 2)
	return 2 * a.A * a.A * s * s
}

// Psi returns A sin(u/A) inside [-πA, πA] and 0 outside.
func (a Andrews) Psi(u float64) float64 {
	if math.Abs(u) > math.Pi*a.A {
		return 0
	}
	return a.A * math.Sin(u/a.A)
}

// Deriv returns cos(u/A) inside [-πA, πA] and 0 outside.
func (a Andrews) Deriv(u float64) float64 {
	if math.Abs(u) > math.Pi*a.A {
		return 0
	}
	return math.Cos(u / a.A)
}

// Weight returns A sin(u/A)/u inside [-πA, πA], 1 at u = 0, and 0 outside.
func (a Andrews) Weight(u float64) float64 {
	if math.Abs(u) > math.Pi*a.A {
		return 0
	}
	if math.Abs(u/a.A) < 1e-8 {
		// sin(v)/v = 1 - v²/6 + ..., which rounds to 1 here.
		return 1
	}
	return a.A * math.Sin(u/a.A) / u
}

// Kinks returns πA, where psi' jumps from -1 to 0.
func (a Andrews) Kinks() []float64 { return []float64{math.Pi * a.A} }

// RhoMax returns 2A², the supremum of rho.
func (a Andrews) RhoMax() float64 { return 2 * a.A * a.A }
