package psi

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/rhomark/rhomark/internal/root"
)

// Tuning solves for tuning constants. A family with several constants is
// tuned along the ray through its defaults: the constants are m times the
// defaults and m is solved for, so their ratios stay as the defaults have
// them (Hampel's (2, 4, 8) stays in proportion 1:2:4).

// scaledTuning returns m times the family's defaults.
func (f Family) scaledTuning(m float64) []float64 {
	out := make([]float64, len(f.Defaults))
	for i, d := range f.Defaults {
		out[i] = m * d
	}
	return out
}

// WithFirst returns tuning constants whose first is c and whose others keep
// their default proportion to it (for a one-constant family, just [c]).
func (f Family) WithFirst(c float64) []float64 {
	if len(f.Defaults) == 0 {
		return nil
	}
	return f.scaledTuning(c / f.Defaults[0])
}

// solveRay finds m > 0 with g(m) = 0 for g monotone in m: two walkers
// leave m = 1 upwards and downwards in powers of two (at most 2^±20) until
// one sees the sign of g change; then root.Find narrows the bracket to a
// relative width of 1e-13. An error of g ends the search with that error.
func solveRay(g func(m float64) (float64, error)) (float64, error) {
	g1, err := g(1)
	if err != nil {
		return 0, err
	}
	if g1 == 0 {
		return 1, nil
	}
	// The two walkers take turns, so a root below 1 costs as few
	// evaluations as one above.
	var lo, hi float64
	found := false
	up, down := 1.0, 1.0
	for step := 0; step < 20 && !found; step++ {
		for _, w := range []*float64{&up, &down} {
			prev := *w
			m := prev * 2
			if w == &down {
				m = prev / 2
			}
			*w = m
			gm, err := g(m)
			if err == nil && math.Signbit(gm) != math.Signbit(g1) {
				lo, hi, found = math.Min(prev, m), math.Max(prev, m), true
				break
			}
		}
	}
	if !found {
		return 0, errors.New("no multiple of the defaults between 2^-20 and 2^20 reaches the target")
	}
	var gErr error
	f := func(m float64) float64 {
		v, err := g(m)
		if err != nil {
			gErr = err
			return math.NaN() // stops the search
		}
		return v
	}
	m, err := root.Find(f, lo, hi, root.Tolerance{Rel: 1e-13})
	if gErr != nil {
		return 0, gErr
	}
	return m, err
}

// TuneEfficiency returns the tuning constants at which the family's psi has
// asymptotic efficiency target at the normal model (0 < target < 1).
func (f Family) TuneEfficiency(target float64) ([]float64, error) {
	if !(target > 0 && target < 1) {
		return nil, fmt.Errorf("target efficiency must be between 0 and 1 (exclusive), got %v", target)
	}
	if len(f.Params) == 0 {
		return nil, fmt.Errorf("psi family %q has no tuning constant", f.Name)
	}
	m, err := solveRay(func(m float64) (float64, error) {
		psi, err := f.New(f.scaledTuning(m))
		if err != nil {
			return 0, err
		}
		return EfficiencyAtNormal(psi) - target, nil
	})
	if err != nil {
		return nil, fmt.Errorf("psi family %q: efficiency %v: %w", f.Name, target, err)
	}
	return f.scaledTuning(m), nil
}

// TuneBreakdown returns the tuning constants at which an S-scale built on
// the family's rho has breakdown point target (0 < target ≤ 0.5), with the
// consistency constant b = E[rho(Z)]: the solution of b/sup rho = target,
// the larger (more efficient) of the two constants with that breakdown
// point. The family's rho must be bounded.
func (f Family) TuneBreakdown(target float64) ([]float64, error) {
	if !(target > 0 && target <= 0.5) {
		return nil, fmt.Errorf("target breakdown point must be in (0, 0.5], got %v", target)
	}
	if len(f.Params) == 0 {
		return nil, fmt.Errorf("psi family %q has no tuning constant", f.Name)
	}
	probe, err := f.New(nil)
	if err != nil {
		return nil, err
	}
	if _, ok := rhoSup(probe); !ok {
		return nil, fmt.Errorf("psi family %q has an unbounded rho, so an S-scale built on it has breakdown point 0", f.Name)
	}
	m, err := solveRay(func(m float64) (float64, error) {
		psi, err := f.New(f.scaledTuning(m))
		if err != nil {
			return 0, err
		}
		rmax, _ := rhoSup(psi)
		return ScaleConsistency(psi)/rmax - target, nil
	})
	if err != nil {
		return nil, fmt.Errorf("psi family %q: breakdown %v: %w", f.Name, target, err)
	}
	return f.scaledTuning(m), nil
}

// HuberMinimax returns Huber's (1964) minimax constant k for the
// eps-contaminated normal model, the root of
//
//	2φ(k)/k − 2Φ(−k) = eps/(1 − eps),
//
// for 0 < eps < 1 (Huber (1964), Ann. Math. Statist. 35:73-101).
func HuberMinimax(eps float64) (float64, error) {
	if !(eps > 0 && eps < 1) {
		return 0, fmt.Errorf("contamination fraction must be between 0 and 1 (exclusive), got %v", eps)
	}
	target := eps / (1 - eps)
	g := func(k float64) float64 {
		return 2*distuv.UnitNormal.Prob(k)/k - 2*distuv.UnitNormal.CDF(-k) - target
	}
	// g decreases from +∞ at k → 0 to 0 at k → ∞.
	const lo = 1e-12
	hi := 1.0
	for g(hi) > 0 {
		hi *= 2
		if hi > 1e3 {
			return 0, fmt.Errorf("no constant for eps = %v", eps)
		}
	}
	k, err := root.Find(g, lo, hi, root.Tolerance{Rel: 1e-15})
	if err != nil {
		return 0, fmt.Errorf("no constant for eps = %v: %w", eps, err)
	}
	return k, nil
}

// SweepRow is one row of a tuning sweep.
type SweepRow struct {
	Tuning                []float64 `json:"tuning"`                  // all tuning constants of the psi at this row
	Efficiency            float64   `json:"efficiency"`              // asymptotic efficiency at the normal, as Theory.Efficiency
	GrossErrorSensitivity float64   `json:"gross_error_sensitivity"` // as Theory.GrossErrorSensitivity; +Inf if psi is unbounded
	RejectionPoint        float64   `json:"rejection_point"`         // as Theory.RejectionPoint; +Inf if there is none
	Breakdown             float64   `json:"breakdown"`               // S-scale breakdown point, as Theory.Breakdown; NaN if rho is unbounded
}

// Sweep returns efficiency, gross-error sensitivity, rejection point and
// S-scale breakdown point at steps equally spaced values of the first
// tuning constant from lo to hi; any other constants keep their default
// proportion to the first.
func (f Family) Sweep(lo, hi float64, steps int) ([]SweepRow, error) {
	if len(f.Params) == 0 {
		return nil, fmt.Errorf("psi family %q has no tuning constant", f.Name)
	}
	if !(lo > 0 && hi > lo) || steps < 2 || steps > 10000 {
		return nil, fmt.Errorf("want 0 < from < to and 2 to 10000 steps, got %v, %v, %d", lo, hi, steps)
	}
	var rows []SweepRow
	for i := 0; i < steps; i++ {
		first := lo + (hi-lo)*float64(i)/float64(steps-1)
		tun := f.WithFirst(first)
		psi, err := f.New(tun)
		if err != nil {
			return nil, err
		}
		th, err := Analyse(psi)
		if err != nil {
			return nil, fmt.Errorf("at %v: %w", tun, err)
		}
		rows = append(rows, SweepRow{Tuning: tun, Efficiency: th.Efficiency,
			GrossErrorSensitivity: th.GrossErrorSensitivity, RejectionPoint: th.RejectionPoint, Breakdown: th.Breakdown})
	}
	return rows, nil
}
