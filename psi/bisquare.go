package psi

import "math"

// Tuning constants of the bisquare that the S and MM estimators use by
// default. Both are roots computed by this package's tuning code
// (Family.TuneBreakdown(0.5) and Family.TuneEfficiency(0.95) of the
// bisquare; the estimators package's TestDefaultConstants checks them
// against it) and agree with an independent 30-digit quadrature to all the
// digits given.
const (
	// BisquareBreakdown50 is the bisquare constant whose S-scale, with b =
	// E[rho(Z)], has breakdown point exactly 50%: b/sup rho = 1/2
	// (Rousseeuw & Yohai (1984); the rounded 1.547 is common practice and
	// gives 0.4998).
	BisquareBreakdown50 = 1.5476449809282259
	// BisquareEfficiency95 is the bisquare constant of 95% asymptotic
	// efficiency at the normal: the bisquare family's default (Holland &
	// Welsch (1977) print 4.685).
	BisquareEfficiency95 = 4.6850649485433758
)

// Bisquare is Tukey's biweight psi, smooth and redescending to zero at ±C.
// With v = u/C,
//
//	rho(u) = C²/6 (1 - (1 - v²)³)  for |u| ≤ C,   C²/6 otherwise,
//	psi(u) = u (1 - v²)²           for |u| ≤ C,   0 otherwise,
//	w(u)   = (1 - v²)²             for |u| ≤ C,   0 otherwise.
//
// The default C = BisquareEfficiency95 = 4.6850649… gives 95% asymptotic
// efficiency at the normal model (Holland & Welsch (1977), Comm. Statist.
// Theory Methods 6:813-827, print 4.685). Used as the rho of an S-scale,
// C = BisquareBreakdown50 = 1.5476449… gives a 50% breakdown point (Rousseeuw &
// Yohai (1984); the rounded 1.547 gives 0.4998). Being redescending, its
// estimating equations can have several roots: a start near the bulk of
// the data matters.
type Bisquare struct {
	// C is the tuning constant, C > 0.
	C float64
}

// Rho returns the bisquare rho.
func (b Bisquare) Rho(u float64) float64 {
	if math.Abs(u) >= b.C {
		return b.C * b.C / 6
	}
	v := u / b.C
	t := 1 - v*v
	return b.C * b.C / 6 * (1 - t*t*t)
}

// Psi returns u(1 - (u/C)²)² inside [-C, C] and 0 outside.
func (b Bisquare) Psi(u float64) float64 {
	if math.Abs(u) >= b.C {
		return 0
	}
	v := u / b.C
	t := 1 - v*v
	return u * t * t
}

// Deriv returns (1 - v²)(1 - 5v²), v = u/C, inside [-C, C] and 0 outside.
func (b Bisquare) Deriv(u float64) float64 {
	if math.Abs(u) >= b.C {
		return 0
	}
	v := u / b.C
	v2 := v * v
	return (1 - v2) * (1 - 5*v2)
}

// Weight returns (1 - (u/C)²)² inside [-C, C] and 0 outside.
func (b Bisquare) Weight(u float64) float64 {
	if math.Abs(u) >= b.C {
		return 0
	}
	v := u / b.C
	t := 1 - v*v
	return t * t
}

// Kinks returns C, beyond which psi is identically zero (psi and psi' are
// continuous there; higher derivatives are not).
func (b Bisquare) Kinks() []float64 { return []float64{b.C} }

// RhoMax returns C²/6, the supremum of rho.
func (b Bisquare) RhoMax() float64 { return b.C * b.C / 6 }
