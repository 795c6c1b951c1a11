package psi

import "math"

// Huber is Huber's psi, linear in the middle and constant beyond ±K:
//
//	rho(u) = u²/2            for |u| ≤ K,   K|u| - K²/2 otherwise,
//	psi(u) = max(-K, min(K, u)),
//	w(u)   = min(1, K/|u|).
//
// The default K = 1.345 gives 95% asymptotic efficiency at the normal model
// (Holland & Welsch (1977), Comm. Statist. Theory Methods 6:813-827). Huber
// (1964), Ann. Math. Statist. 35:73-101, shows this psi is minimax for the
// asymptotic variance over eps-contaminated normal models. psi is monotone,
// so the M-estimate is unique for fixed scale.
type Huber struct {
	// K is the tuning constant, K > 0.
	K float64
}

// Rho returns Huber's rho.
func (h Huber) Rho(u float64) float64 {
	a := math.Abs(u)
	if a <= h.K {
		return u * u / 2
	}
	return h.K*a - h.K*h.K/2
}

// Psi returns u clipped to [-K, K].
func (h Huber) Psi(u float64) float64 {
	switch {
	case u > h.K:
		return h.K
	case u < -h.K:
		return -h.K
	}
	return u
}

// Deriv returns 1 inside [-K, K] and 0 outside.
func (h Huber) Deriv(u float64) float64 {
	if math.Abs(u) <= h.K {
		return 1
	}
	return 0
}

// Weight returns min(1, K/|u|).
func (h Huber) Weight(u float64) float64 {
	a := math.Abs(u)
	if a <= h.K {
		return 1
	}
	return h.K / a
}

// Kinks returns K, where psi' jumps.
func (h Huber) Kinks() []float64 { return []float64{h.K} }
