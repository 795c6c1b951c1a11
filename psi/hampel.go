package psi

import "math"

// Hampel is Hampel's three-part redescending psi: linear up to A, constant
// from A to B, falling linearly to zero from B to C, and zero beyond:
//
//	psi(u) = u                            for |u| ≤ A,
//	         A sign(u)                    for A < |u| ≤ B,
//	         A sign(u) (C - |u|)/(C - B)  for B < |u| ≤ C,
//	         0                            for |u| > C;
//	rho(u) = u²/2                         for |u| ≤ A,
//	         A|u| - A²/2                  for A < |u| ≤ B,
//	         R - A (C - |u|)²/(2(C - B))  for B < |u| ≤ C,
//	         R                            for |u| > C,
//
// with R = rho(C) = A(B + C - A)/2, and w(u) = psi(u)/u. The constants
// must satisfy 0 < A < B < C. The default (A, B, C) = (2, 4, 8) is common
// practice. psi is continuous, with kinks at A, B and C; being redescending,
// the estimating equations can have several roots, so the start matters.
type Hampel struct {
	// A ends the linear part, A > 0.
	A float64
	// B ends the constant part, B > A.
	B float64
	// C is the rejection point, C > B.
	C float64
}

// Rho returns Hampel's rho.
func (h Hampel) Rho(u float64) float64 {
	a := math.Abs(u)
	switch {
	case a <= h.A:
		return u * u / 2
	case a <= h.B:
		return h.A*a - h.A*h.A/2
	case a <= h.C:
		d := h.C - a
		return h.RhoMax() - h.A*d*d/(2*(h.C-h.B))
	}
	return h.RhoMax()
}

// Psi returns Hampel's psi.
func (h Hampel) Psi(u float64) float64 {
	a := math.Abs(u)
	var p float64
	switch {
	case a <= h.A:
		return u
	case a <= h.B:
		p = h.A
	case a <= h.C:
		p = h.A * (h.C - a) / (h.C - h.B)
	default:
		return 0
	}
	return math.Copysign(p, u)
}

// Deriv returns 1 on [0, A], 0 on (A, B], -A/(C - B) on (B, C] and 0
// beyond C (in |u|).
func (h Hampel) Deriv(u float64) float64 {
	a := math.Abs(u)
	switch {
	case a <= h.A:
		return 1
	case a <= h.B:
		return 0
	case a <= h.C:
		return -h.A / (h.C - h.B)
	}
	return 0
}

// Weight returns psi(u)/u: 1, A/|u|, A(C - |u|)/((C - B)|u|) or 0 by piece.
func (h Hampel) Weight(u float64) float64 {
	a := math.Abs(u)
	switch {
	case a <= h.A:
		return 1
	case a <= h.B:
		return h.A / a
	case a <= h.C:
		return h.A * (h.C - a) / ((h.C - h.B) * a)
	}
	return 0
}

// Kinks returns A, B and C, where psi' jumps.
func (h Hampel) Kinks() []float64 { return []float64{h.A, h.B, h.C} }

// RhoMax returns A(B + C - A)/2, the supremum of rho.
func (h Hampel) RhoMax() float64 { return h.A * (h.B + h.C - h.A) / 2 }
