package psi

// LeastSquares is the psi of ordinary least squares:
//
//	rho(u) = u²/2,  psi(u) = u,  psi'(u) = 1,  w(u) = 1.
//
// It has no tuning constant. It is fully efficient at the normal model and
// has breakdown point 0.
type LeastSquares struct{}

// Rho returns u²/2.
func (LeastSquares) Rho(u float64) float64 { return u * u / 2 }

// Psi returns u.
func (LeastSquares) Psi(u float64) float64 { return u }

// Deriv returns 1.
func (LeastSquares) Deriv(float64) float64 { return 1 }

// Weight returns 1.
func (LeastSquares) Weight(float64) float64 { return 1 }
