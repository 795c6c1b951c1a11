package psi

import "math"

// Fair is Fair's psi, a smooth monotone psi that grows without bound but
// ever more slowly. With a = |u|/C,
//
//	rho(u) = C² (a - log(1 + a)),
//	psi(u) = u/(1 + a),
//	w(u)   = 1/(1 + a).
//
// The methods are written with C/(C + |u|) = 1/(1 + a), which neither
// overflows nor gives Inf/Inf for huge |u|. The default C = 1.400 gives 95%
// asymptotic efficiency at the normal model (Holland & Welsch (1977), Comm.
// Statist. Theory Methods 6:813-827). psi is monotone, so the M-estimate is
// unique for fixed scale; psi tends to ±C, so its influence is bounded.
type Fair struct {
	// C is the tuning constant, C > 0.
	C float64
}

// Rho returns C² (|u|/C - log(1 + |u|/C)).
func (f Fair) Rho(u float64) float64 {
	a := math.Abs(u)
	if math.IsInf(a, 1) {
		return a
	}
	if a <= f.C {
		return f.C*a - f.C*f.C*math.Log1p(a/f.C)
	}
	// log(1 + a) = log(C + |u|) - log C, which does not overflow.
	return f.C*a - f.C*f.C*(math.Log(f.C+a)-math.Log(f.C))
}

// Psi returns u/(1 + |u|/C), tending to ±C.
func (f Fair) Psi(u float64) float64 {
	if math.IsInf(u, 0) {
		return math.Copysign(f.C, u)
	}
	return f.C * (u / (f.C + math.Abs(u)))
}

// Deriv returns 1/(1 + |u|/C)².
func (f Fair) Deriv(u float64) float64 {
	w := f.Weight(u)
	return w * w
}

// Weight returns 1/(1 + |u|/C).
func (f Fair) Weight(u float64) float64 {
	return f.C / (f.C + math.Abs(u))
}
