package psi

import "math"

// Cauchy is the psi of maximum likelihood under Cauchy errors, rescaled.
// With v = u/C,
//
//	rho(u) = C²/2 log(1 + v²),
//	psi(u) = u/(1 + v²),
//	w(u)   = 1/(1 + v²).
//
// The default C = 2.385 gives 95% asymptotic efficiency at the normal model
// (Holland & Welsch (1977), Comm. Statist. Theory Methods 6:813-827). psi is
// smooth and redescends slowly (like C²/u); rho is unbounded but grows only
// logarithmically. The estimating equations can have several roots, so the
// start matters. For |u| > C the methods work with C/u instead of u/C, so
// that no square overflows.
type Cauchy struct {
	// C is the tuning constant, C > 0.
	C float64
}

// Rho returns C²/2 log(1 + (u/C)²).
func (c Cauchy) Rho(u float64) float64 {
	a := math.Abs(u)
	if a <= c.C {
		v := u / c.C
		return c.C * c.C / 2 * math.Log1p(v*v)
	}
	// log(1 + v²) = log(1 + 1/v²) + 2 log|v|.
	r := c.C / a
	return c.C*c.C/2*math.Log1p(r*r) + c.C*c.C*(math.Log(a)-math.Log(c.C))
}

// Psi returns u/(1 + (u/C)²).
func (c Cauchy) Psi(u float64) float64 {
	if math.Abs(u) <= c.C {
		v := u / c.C
		return u / (1 + v*v)
	}
	r := c.C / u
	return c.C * r / (1 + r*r)
}

// Deriv returns (1 - v²)/(1 + v²)², v = u/C, computed as w(2w - 1) from the
// weight w.
func (c Cauchy) Deriv(u float64) float64 {
	w := c.Weight(u)
	return w * (2*w - 1)
}

// Weight returns 1/(1 + (u/C)²).
func (c Cauchy) Weight(u float64) float64 {
	if math.Abs(u) <= c.C {
		v := u / c.C
		return 1 / (1 + v*v)
	}
	r := c.C / u
	r2 := r * r
	return r2 / (1 + r2)
}
