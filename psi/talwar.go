package psi

import "math"

// Talwar is Talwar's hard-rejection psi: least squares inside ±C, and
// residuals beyond ±C are ignored:
//
//	rho(u) = u²/2  for |u| ≤ C,   C²/2 otherwise,
//	psi(u) = u     for |u| ≤ C,   0 otherwise,
//	w(u)   = 1     for |u| ≤ C,   0 otherwise.
//
// psi jumps from ±C to 0 at ±C; Deriv returns 1 inside (|u| ≤ C) and 0
// outside, leaving out the jump, which theory must add to E[psi']. The
// default C = 2.795 gives 95% asymptotic efficiency at the normal model
// (Holland & Welsch (1977), Comm. Statist. Theory Methods 6:813-827). The
// estimating equations can have several roots, so the start matters, and
// with a scale re-estimated at every iteration IRLS can cycle between two
// sets of kept residuals, ending at the iteration limit.
type Talwar struct {
	// C is the rejection point, C > 0.
	C float64
}

// Rho returns u²/2 inside [-C, C] and C²/2 outside.
func (t Talwar) Rho(u float64) float64 {
	if math.Abs(u) <= t.C {
		return u * u / 2
	}
	return t.C * t.C / 2
}

// Psi returns u inside [-C, C] and 0 outside.
func (t Talwar) Psi(u float64) float64 {
	if math.Abs(u) <= t.C {
		return u
	}
	return 0
}

// Deriv returns 1 inside [-C, C] and 0 outside.
func (t Talwar) Deriv(u float64) float64 {
	if math.Abs(u) <= t.C {
		return 1
	}
	return 0
}

// Weight returns 1 inside [-C, C] and 0 outside.
func (t Talwar) Weight(u float64) float64 {
	if math.Abs(u) <= t.C {
		return 1
	}
	return 0
}

// Kinks returns C, where psi jumps.
func (t Talwar) Kinks() []float64 { return []float64{t.C} }

// RhoMax returns C²/2, the supremum of rho.
func (t Talwar) RhoMax() float64 { return t.C * t.C / 2 }
