package psi

import (
	"errors"
	"fmt"
	"math"

	"github.com/rhomark/rhomark/internal/root"
)

// Theory holds the asymptotic properties of a psi function, computed by
// quadrature.
//
// At the standard normal model, with Z ~ N(0, 1):
//
//	asymptotic variance  V = E[psi(Z)²] / E[psi'(Z)]²
//	efficiency           1/V (relative to least squares, the ML estimator)
//	gross-error sens.    sup|psi| / E[psi'(Z)]
//
// E[psi'(Z)] is computed as E[Z psi(Z)] (Stein's identity), which holds for
// any psi of bounded variation and so counts the jumps of psi (Talwar's hard
// rejection, for instance), which a pointwise psi' would miss. Under another
// symmetric model F the same identity reads E[psi'] = σ E[psi(X/σ) ℓ(X)] with
// ℓ = −f'/f the location score, and σ the limit of the normalised MAD under
// F, the scale the solvers use.
type Theory struct {
	// Efficiency is the asymptotic efficiency at the normal, relative to
	// least squares.
	Efficiency float64 `json:"efficiency"`
	// AsymptoticVariance is E[psi²]/E[psi']² at the standard normal.
	AsymptoticVariance float64 `json:"asymptotic_variance"`
	// GrossErrorSensitivity is sup|psi| / E[psi'] (+Inf if psi is
	// unbounded).
	GrossErrorSensitivity float64 `json:"gross_error_sensitivity"`
	// RejectionPoint is the smallest r with psi(u) = 0 for all |u| > r
	// (+Inf if there is none).
	RejectionPoint float64 `json:"rejection_point"`
	// SupPsi is sup|psi| (+Inf if unbounded).
	SupPsi float64 `json:"sup_psi"`
	// Bounded, Monotone and Redescending describe the shape of psi on
	// [0, ∞): psi bounded; non-decreasing; tending to zero.
	Bounded      bool `json:"bounded"`      // sup|psi| is finite
	Monotone     bool `json:"monotone"`     // psi never decreases on the grid checked
	Redescending bool `json:"redescending"` // bounded, and |psi(1e12)| ≤ 1e-6 sup|psi|
	// ScaleConsistency is b = E[rho(Z)], the constant that makes an
	// S-scale built on this rho consistent at the normal; Breakdown is its
	// breakdown point min(b/sup rho, 1 − b/sup rho) (Rousseeuw & Yohai
	// (1984): too many outliers can blow the scale up, too many inliers
	// can implode it); RhoMax is sup rho. They are NaN when rho is
	// unbounded.
	ScaleConsistency float64 `json:"scale_consistency"`
	Breakdown        float64 `json:"breakdown"` // min(b/RhoMax, 1 − b/RhoMax); NaN if rho is unbounded
	RhoMax           float64 `json:"rho_max"`   // sup rho; NaN if rho is unbounded
	// Models holds the efficiency under each requested error model.
	Models []ModelTheory `json:"models,omitempty"`
}

// ModelTheory is the asymptotic behaviour of a psi under one error model,
// with residuals standardised by the limit of the normalised MAD.
type ModelTheory struct {
	// Model names the error distribution.
	Model string `json:"model"`
	// Scale is the MAD limit σ used to standardise residuals.
	Scale float64 `json:"scale"`
	// AsymptoticVariance is σ² E[psi(X/σ)²] / E[psi'(X/σ)]², in the
	// units of the model.
	AsymptoticVariance float64 `json:"asymptotic_variance"`
	// Efficiency is the efficiency relative to the maximum-likelihood
	// estimator, (1/I)/AsymptoticVariance, I the Fisher information.
	Efficiency float64 `json:"efficiency"`
	// Fisher is I, and FisherClosedForm says whether it has a closed form
	// (otherwise it was computed by quadrature).
	Fisher           float64 `json:"fisher_information"`
	FisherClosedForm bool    `json:"fisher_closed_form"` // false when Fisher came from quadrature
	// RelativeToLS is Var(X)/AsymptoticVariance, the efficiency against
	// least squares (+Inf where least squares has infinite variance).
	RelativeToLS float64 `json:"relative_to_ls"`
}

// breaksOf returns the break points of psi for quadrature.
func breaksOf(psi Psi) []float64 {
	if k, ok := psi.(Kinked); ok {
		return k.Kinks()
	}
	return nil
}

// Moments returns A = E[psi(κZ)²] and B = E[Z psi(κZ)] for Z standard
// normal. An M-estimator whose residuals, of standard deviation s, are
// divided by s/κ before psi is applied has asymptotic variance s²A/B²,
// so B²/A is its efficiency against least squares for any κ.
func Moments(psi Psi, kappa float64) (a, b float64) {
	var breaks []float64
	for _, k := range breaksOf(psi) {
		breaks = append(breaks, k/kappa)
	}
	phi := func(z float64) float64 { return math.Exp(-z*z/2) / math.Sqrt(2*math.Pi) }
	// Both integrands are even for an odd psi: twice the half line.
	a = 2 * integrateHalfLine(func(z float64) float64 {
		p := psi.Psi(kappa * z)
		return p * p * phi(z)
	}, breaks)
	b = 2 * integrateHalfLine(func(z float64) float64 {
		return z * psi.Psi(kappa*z) * phi(z)
	}, breaks)
	return a, b
}

// EfficiencyAtNormal returns the asymptotic efficiency of psi at the
// normal model, relative to least squares.
func EfficiencyAtNormal(psi Psi) float64 {
	a, b := Moments(psi, 1)
	return b * b / a
}

// Analyse computes the properties of psi at the normal and under each of
// models. It reports an error if psi misbehaves (NaN values, E[psi'] ≤ 0).
func Analyse(psi Psi, models ...ErrorModel) (Theory, error) {
	var t Theory
	a, b := Moments(psi, 1)
	if math.IsNaN(a) || math.IsNaN(b) || math.IsInf(a, 0) {
		return t, errors.New("the moments of psi at the normal are not finite")
	}
	if !(b > 0) {
		return t, fmt.Errorf("E[psi'(Z)] = %.3g is not positive; psi must be increasing near 0", b)
	}
	t.AsymptoticVariance = a / (b * b)
	t.Efficiency = b * b / a
	shape := describeShape(psi)
	t.SupPsi, t.Bounded, t.Monotone, t.Redescending, t.RejectionPoint = shape.sup, shape.bounded, shape.monotone, shape.redescending, shape.rejection
	t.GrossErrorSensitivity = math.Inf(1)
	if t.Bounded {
		t.GrossErrorSensitivity = t.SupPsi / b
	}
	t.ScaleConsistency, t.Breakdown, t.RhoMax = math.NaN(), math.NaN(), math.NaN()
	if rmax, ok := rhoSup(psi); ok {
		t.RhoMax = rmax
		t.ScaleConsistency = ScaleConsistency(psi)
		r := t.ScaleConsistency / rmax
		t.Breakdown = math.Min(r, 1-r)
	}
	for _, m := range models {
		mt, err := AnalyseUnder(psi, m)
		if err != nil {
			return t, err
		}
		t.Models = append(t.Models, mt)
	}
	return t, nil
}

// ScaleConsistency returns b = E[rho(Z)] at the standard normal.
func ScaleConsistency(psi Psi) float64 {
	phi := func(z float64) float64 { return math.Exp(-z*z/2) / math.Sqrt(2*math.Pi) }
	return 2 * integrateHalfLine(func(z float64) float64 { return psi.Rho(z) * phi(z) }, breaksOf(psi))
}

// rhoSup returns sup rho and whether rho is bounded.
func rhoSup(psi Psi) (float64, bool) {
	if b, ok := psi.(Bounded); ok {
		return b.RhoMax(), true
	}
	far, farther := psi.Rho(1e6), psi.Rho(1e12)
	if math.IsNaN(far) || math.IsInf(farther, 0) || farther > far*(1+1e-6)+1e-12 {
		return math.NaN(), false
	}
	var sup float64
	for u := 0.0; u <= 100; u += 0.01 {
		sup = math.Max(sup, psi.Rho(u))
	}
	return math.Max(sup, farther), true
}

// AnalyseUnder computes the efficiency of psi under the model m, with the
// residuals standardised by the limit of the normalised MAD under m.
func AnalyseUnder(psi Psi, m ErrorModel) (ModelTheory, error) {
	if err := m.Validate(); err != nil {
		return ModelTheory{}, err
	}
	sigma := m.madLimit()
	var breaks []float64
	for _, k := range breaksOf(psi) {
		breaks = append(breaks, k*sigma)
	}
	a := 2 * integrateHalfLine(func(x float64) float64 {
		p := psi.Psi(x / sigma)
		return p * p * m.density(x)
	}, breaks)
	c := 2 * integrateHalfLine(func(x float64) float64 {
		return psi.Psi(x/sigma) * m.score(x) * m.density(x)
	}, breaks)
	fisher, closed := m.fisher()
	mt := ModelTheory{Model: m.String(), Scale: sigma, Fisher: fisher, FisherClosedForm: closed}
	// V = σ²A/B² with B = σE[psi ℓ] = σc, so V = A/c².
	mt.AsymptoticVariance = a / (c * c)
	mt.Efficiency = (1 / fisher) / mt.AsymptoticVariance
	mt.RelativeToLS = m.variance() / mt.AsymptoticVariance
	if math.IsNaN(mt.Efficiency) {
		return mt, fmt.Errorf("efficiency under %s is not defined for this psi", m)
	}
	return mt, nil
}

// Redescending reports whether psi is redescending by the rule Theory
// uses for its field of that name: bounded, not identically zero, and
// |psi(1e12)| at most 1e-6 times sup|psi| (see describeShape for the grid).
// The estimating equations of a redescending psi can have several roots.
func Redescending(psi Psi) bool { return describeShape(psi).redescending }

// shape is the numerical description of psi on [0, ∞).
type shape struct {
	sup                             float64
	bounded, monotone, redescending bool
	rejection                       float64
}

// describeShape evaluates psi on a grid (fine near 0, geometric far out,
// plus its break points) to decide boundedness, monotonicity, redescent
// and the rejection point.
func describeShape(psi Psi) shape {
	var grid []float64
	for u := 0.0; u < 20; u += 0.005 {
		grid = append(grid, u)
	}
	for u := 20.0; u <= 1e12; u *= 1.05 {
		grid = append(grid, u)
	}
	for _, k := range breaksOf(psi) {
		// At a jump sup|psi| may be a one-sided limit: the neighbouring
		// floats stand for it.
		grid = append(grid, k*(1-1e-12), math.Nextafter(k, 0), k, math.Nextafter(k, math.Inf(1)), k*(1+1e-12))
	}
	sortFloats(grid)
	s := shape{monotone: true}
	prev := math.Inf(-1)
	lastNonZero := 0.0
	top := 0 // index of the grid's largest |psi|
	for i, u := range grid {
		p := psi.Psi(u)
		if math.Abs(p) > s.sup {
			s.sup = math.Abs(p)
			top = i
		}
		if p < prev-1e-12*math.Max(1, math.Abs(prev)) {
			s.monotone = false
		}
		prev = p
		if p != 0 {
			lastNonZero = u
		}
	}
	// The grid's spacing (0.005 near 0) leaves sup|psi| short by up to
	// about 1e-5 relative where the maximum is smooth: refine it between
	// the grid neighbours of the largest value.
	if top > 0 && top+1 < len(grid) && !math.IsInf(s.sup, 0) {
		s.sup = math.Max(s.sup, maxAbsPsi(psi, grid[top-1], grid[top+1]))
	}
	// Unbounded when psi keeps growing far out.
	far, farther := math.Abs(psi.Psi(1e6)), math.Abs(psi.Psi(1e12))
	s.bounded = !(farther > 2*far && farther > 1) && !math.IsInf(s.sup, 0)
	if !s.bounded {
		s.sup = math.Inf(1)
	}
	s.redescending = s.bounded && s.sup > 0 && math.Abs(psi.Psi(1e12)) <= 1e-6*s.sup
	s.rejection = math.Inf(1)
	// A rejection point is where psi becomes identically zero; psi that
	// only reaches zero by floating-point underflow (Welsch's
	// u·exp(−(u/c)²) near u ≈ 27c, where its last values are below
	// 1e-250) tends to zero without one.
	if s.redescending && psi.Psi(1e12) == 0 && lastNonZero < 1e12 && math.Abs(psi.Psi(lastNonZero)) > 1e-250*math.Max(1, s.sup) {
		// Refine the point where psi becomes identically zero between
		// the last non-zero grid point and the next one.
		// Bisection, since psi only says on which side a point lies.
		lo, hi := lastNonZero, nextAfter(grid, lastNonZero)
		side := func(u float64) float64 {
			if psi.Psi(u) != 0 {
				return -1
			}
			return 1
		}
		if l, h, err := root.Bisect(side, lo, hi, root.Tolerance{Rel: 1e-14}); err == nil || errors.Is(err, root.ErrMaxIter) {
			lo, hi = l, h
		} // else no grid point follows lastNonZero: keep it
		s.rejection = hi
		// Snap to a declared break point the bisection has bracketed.
		for _, k := range breaksOf(psi) {
			if k >= lo && k <= hi {
				s.rejection = k
			}
		}
	}
	return s
}

// nextAfter returns the first grid value above x.
func nextAfter(grid []float64, x float64) float64 {
	for _, g := range grid {
		if g > x {
			return g
		}
	}
	return x
}

// maxAbsPsi returns the largest |psi| that a golden-section search finds
// on [a, b], where |psi| is taken to have one maximum. The search narrows
// the bracket to a relative width of 1e-10; at a smooth maximum |psi|
// differs from its peak by the square of that distance, far below
// rounding. If the maximum is a one-sided limit at a jump or a kink, the
// search closes in on it from the side where it is approached. The
// largest value evaluated is returned, so a bracket with no interior
// maximum does no harm.
func maxAbsPsi(psi Psi, a, b float64) float64 {
	const invPhi = 0.6180339887498949 // (√5 − 1)/2
	f := func(u float64) float64 { return math.Abs(psi.Psi(u)) }
	best := math.Max(f(a), f(b))
	c, d := b-invPhi*(b-a), a+invPhi*(b-a)
	fc, fd := f(c), f(d)
	for i := 0; i < 200 && b-a > 1e-10*math.Max(math.Abs(b), 1e-300); i++ {
		best = math.Max(best, math.Max(fc, fd))
		if fc >= fd {
			b, d, fd = d, c, fc
			c = b - invPhi*(b-a)
			fc = f(c)
		} else {
			a, c, fc = c, d, fd
			d = a + invPhi*(b-a)
			fd = f(d)
		}
	}
	return math.Max(best, math.Max(fc, fd))
}
