package psi

import "math"

// Logistic is the logistic psi, a smooth bounded monotone psi like a
// rounded Huber psi. With v = u/C,
//
//	rho(u) = C² log(cosh v),
//	psi(u) = C tanh v,
//	w(u)   = C tanh(v)/u   (1 at u = 0).
//
// rho is computed as C² log1p(2 sinh²(v/2)) for |v| ≤ 1 and as
// C|u| + C² (log1p(exp(-2|v|)) - ln 2) beyond, so that it is accurate near
// zero and does not overflow for large |u|. The default C = 1.205 gives 95%
// asymptotic efficiency at the normal model (Holland & Welsch (1977), Comm.
// Statist. Theory Methods 6:813-827). psi is monotone and bounded by C, so
// the M-estimate is unique for fixed scale.
type Logistic struct {
	// C is the tuning constant, C > 0.
	C float64
}

// Rho returns C² log(cosh(u/C)).
func (l Logistic) Rho(u float64) float64 {
	a := math.Abs(u)
	v := a / l.C
	if v <= 1 {
		s := math.Sinh(v / 2)
		return l.C * l.C * math.Log1p(2*s*s)
	}
	return l.C*a + l.C*l.C*(math.Log1p(math.Exp(-2*v))-math.Ln2)
}

// Psi returns C tanh(u/C).
func (l Logistic) Psi(u float64) float64 {
	return math.Copysign(l.C*math.Tanh(math.Abs(u)/l.C), u)
}

// Deriv returns 1/cosh²(u/C).
func (l Logistic) Deriv(u float64) float64 {
	c := math.Cosh(u / l.C)
	return 1 / (c * c)
}

// Weight returns C tanh(u/C)/u, and 1 at u = 0.
func (l Logistic) Weight(u float64) float64 {
	if math.Abs(u/l.C) < 1e-8 {
		// tanh(v)/v = 1 - v²/3 + ..., which rounds to 1 here.
		return 1
	}
	return l.Psi(u) / u
}
