// Package root finds a root of a function of one variable inside a bracket
// [a, b] on which the function changes sign.
//
// Find is Brent's method (Brent (1973), Algorithms for Minimization without
// Derivatives, Prentice-Hall, ch. 4): inverse quadratic or secant steps
// while they shrink the bracket fast enough, bisection otherwise, so it
// never needs more evaluations than about twice bisection's and usually
// far fewer. Bisect is plain bisection and returns the final bracket; it
// is for functions that only say on which side of the root a point lies
// (a step function, a predicate), where interpolation has nothing to use,
// and where the caller wants the side of the root to be known.
//
// Both refuse a bracket without a sign change (ErrNoSignChange) and a
// function value that is NaN (ErrNaN), and neither panics or loops
// forever: Tolerance.MaxIter bounds the evaluations.
package root

import (
	"errors"
	"fmt"
	"math"
)

// ErrNoSignChange is returned when f(a) and f(b) have the same sign and
// neither is zero, so that the bracket need not hold a root.
var ErrNoSignChange = errors.New("no sign change over the bracket")

// ErrNaN is returned when f is NaN at an end of the bracket or at a point
// the search tried, or an end of the bracket is NaN.
var ErrNaN = errors.New("function value is NaN")

// ErrMaxIter is returned when the bracket is still wider than the
// tolerance after Tolerance.MaxIter evaluations.
var ErrMaxIter = errors.New("bracket not narrowed to the tolerance within the iteration limit")

// Tolerance says when a search stops: when the bracket's width is at most
// max(Abs, Rel·m), m the larger magnitude of its ends, or after MaxIter
// steps. Find also never asks for less than a few units in the last
// place of the root.
type Tolerance struct {
	Abs, Rel float64
	// MaxIter bounds the steps (one evaluation of f each); zero means 200.
	MaxIter int
}

func (t Tolerance) maxIter() int {
	if t.MaxIter <= 0 {
		return 200
	}
	return t.MaxIter
}

// wide reports whether [lo, hi] is still wider than the tolerance.
func (t Tolerance) wide(lo, hi float64) bool {
	return math.Abs(hi-lo) > math.Max(t.Abs, t.Rel*math.Max(math.Abs(lo), math.Abs(hi)))
}

// ends evaluates f at a and b and checks the bracket.
func ends(f func(float64) float64, a, b float64) (fa, fb float64, err error) {
	if math.IsNaN(a) || math.IsNaN(b) {
		return 0, 0, fmt.Errorf("bracket [%v, %v]: %w", a, b, ErrNaN)
	}
	fa, fb = f(a), f(b)
	if math.IsNaN(fa) || math.IsNaN(fb) {
		return 0, 0, fmt.Errorf("f(%v) = %v, f(%v) = %v: %w", a, fa, b, fb, ErrNaN)
	}
	if fa != 0 && fb != 0 && math.Signbit(fa) == math.Signbit(fb) {
		return 0, 0, fmt.Errorf("f(%v) = %v, f(%v) = %v: %w", a, fa, b, fb, ErrNoSignChange)
	}
	return fa, fb, nil
}

// Bisect narrows [a, b], over which f changes sign, by halving until it
// is no wider than tol, and returns the final bracket [lo, hi] (lo ≤ hi):
// f(lo) has the sign f had at the lower end, f(hi) the other. A step at
// which f is exactly zero keeps the bracket's lower end, so the zero ends
// the bracket from above. If f is zero at an end, the bracket is that
// point. If the bracket is still too wide after tol.MaxIter halvings, it
// is returned with ErrMaxIter.
func Bisect(f func(float64) float64, a, b float64, tol Tolerance) (lo, hi float64, err error) {
	if a > b {
		a, b = b, a
	}
	flo, fhi, err := ends(f, a, b)
	if err != nil {
		return 0, 0, err
	}
	switch {
	case flo == 0:
		return a, a, nil
	case fhi == 0:
		return b, b, nil
	}
	lo, hi = a, b
	for i := 0; i < tol.maxIter() && tol.wide(lo, hi); i++ {
		mid := (lo + hi) / 2
		if math.IsInf(mid, 0) {
			mid = lo/2 + hi/2
		}
		fm := f(mid)
		switch {
		case math.IsNaN(fm):
			return lo, hi, fmt.Errorf("f(%v): %w", mid, ErrNaN)
		case fm != 0 && math.Signbit(fm) == math.Signbit(flo):
			lo = mid
		default:
			hi = mid
		}
	}
	if tol.wide(lo, hi) {
		return lo, hi, ErrMaxIter
	}
	return lo, hi, nil
}

// Find returns a root of f in [a, b], over which f changes sign, by
// Brent's method: the returned x is within tol of a sign change of f (or f
// is zero there). An end at which f is zero is returned as it is.
func Find(f func(float64) float64, a, b float64, tol Tolerance) (float64, error) {
	fa, fb, err := ends(f, a, b)
	if err != nil {
		return 0, err
	}
	switch {
	case fa == 0:
		return a, nil
	case fb == 0:
		return b, nil
	}
	// b is the best estimate, a the previous one, and c the other end of
	// the bracket [b, c]; d is the last step and e the one before.
	c, fc := a, fa
	d := b - a
	e := d
	for i := 0; i < tol.maxIter(); i++ {
		if math.Signbit(fb) == math.Signbit(fc) {
			c, fc = a, fa
			d = b - a
			e = d
		}
		if math.Abs(fc) < math.Abs(fb) {
			a, b, c = b, c, b
			fa, fb, fc = fb, fc, fb
		}
		// Half the tolerated width, but never below rounding at b.
		t := 2*eps*math.Abs(b) + 0.5*math.Max(tol.Abs, tol.Rel*math.Max(math.Abs(b), math.Abs(c)))
		m := 0.5 * (c - b)
		if math.Abs(m) <= t || fb == 0 {
			return b, nil
		}
		if math.Abs(e) >= t && math.Abs(fa) > math.Abs(fb) {
			// Interpolate: secant if only two points, else inverse
			// quadratic; accept it only if it falls well inside the
			// bracket and shrinks faster than the step before last.
			s := fb / fa
			var p, q float64
			if a == c {
				p, q = 2*m*s, 1-s
			} else {
				u, r := fa/fc, fb/fc
				p = s * (2*m*u*(u-r) - (b-a)*(r-1))
				q = (u - 1) * (r - 1) * (s - 1)
			}
			if p > 0 {
				q = -q
			} else {
				p = -p
			}
			if 2*p < math.Min(3*m*q-math.Abs(t*q), math.Abs(e*q)) {
				e, d = d, p/q
			} else {
				d, e = m, m
			}
		} else {
			d, e = m, m
		}
		a, fa = b, fb
		if math.Abs(d) > t {
			b += d
		} else {
			b += math.Copysign(t, m)
		}
		fb = f(b)
		if math.IsNaN(fb) {
			return b, fmt.Errorf("f(%v): %w", b, ErrNaN)
		}
	}
	return b, ErrMaxIter
}

// eps is the spacing of float64 at 1.
const eps = 0x1p-52
