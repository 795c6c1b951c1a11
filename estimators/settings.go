package estimators

import (
	"fmt"
	"math"

	"github.com/rhomark/rhomark/psi"
)

// Resampling are the settings of the estimators that draw random elemental
// subsets (S, MM, LTS). Zero values mean the documented defaults.
type Resampling struct {
	// Subsets is the number of random elemental subsets; zero means
	// ElementalSubsets(p).
	Subsets int
	// Keep is the number of best candidates refined fully; zero means 5
	// for S and 10 for LTS.
	Keep int
	// SC is the bisquare constant of the S-scale; zero means
	// DefaultSTuning, the constant of a 50% breakdown point.
	SC float64
	// SDivisor is the divisor of the S-scale's equation: n (the zero
	// value) or n − p.
	SDivisor ScaleDivisor
	// H is the number of observations LTS keeps; zero means ⌊(n+p+1)/2⌋.
	H int
}

// Default tuning constants of the S and MM estimators, the bisquare
// constants of a 50% breakdown point and of 95% efficiency at the normal
// (see [psi.BisquareBreakdown50] and [psi.BisquareEfficiency95];
// TestDefaultConstants checks them against this module's tuning code).
const (
	// DefaultSTuning is the bisquare constant whose S-scale, with b =
	// E[rho(Z)], has breakdown point exactly 50%.
	DefaultSTuning = psi.BisquareBreakdown50
	// DefaultMMTuning is the bisquare constant of 95% asymptotic efficiency
	// at the normal: the bisquare family's default and the default psi of
	// the MM-estimator's M-step.
	DefaultMMTuning = psi.BisquareEfficiency95
)

// ScaleDivisor is the divisor of the S-scale's equation
// (1/d) Σ rho(r_i/s) = b.
type ScaleDivisor uint8

const (
	// DivideByN uses d = n, the definition of Rousseeuw & Yohai (1984).
	DivideByN ScaleDivisor = iota
	// DivideByNMinusP uses d = n − p, a small-sample correction that makes
	// the scale larger; many published MM fits use it.
	DivideByNMinusP
)

// String returns "n" or "n-p", the names used in scenario files and on the
// command line.
func (d ScaleDivisor) String() string {
	switch d {
	case DivideByN:
		return "n"
	case DivideByNMinusP:
		return "n-p"
	}
	return "unknown-divisor"
}

// ParseScaleDivisor returns the ScaleDivisor named by s ("n" or "n-p").
func ParseScaleDivisor(s string) (ScaleDivisor, bool) {
	for _, d := range []ScaleDivisor{DivideByN, DivideByNMinusP} {
		if d.String() == s {
			return d, true
		}
	}
	return 0, false
}

// divisor returns d of the S-scale equation for n observations and p
// coefficients.
func (d ScaleDivisor) divisor(n, p int) float64 {
	if d == DivideByNMinusP {
		return float64(n - p)
	}
	return float64(n)
}

// SScale returns the bisquare whose rho defines the S-scale: constant SC,
// or DefaultSTuning when SC is zero.
func (r Resampling) SScale() psi.Bisquare {
	if r.SC == 0 {
		return psi.Bisquare{C: DefaultSTuning}
	}
	return psi.Bisquare{C: r.SC}
}

// LTSKeep returns the number of the n observations (p coefficients) LTS
// keeps: H, or ⌊(n+p+1)/2⌋ when H is zero.
func (r Resampling) LTSKeep(n, p int) int {
	if r.H == 0 {
		return (n + p + 1) / 2
	}
	return r.H
}

// MStepPsi returns the psi of the M-step of e: e.Psi, or for an
// MM-estimator without one the bisquare with c = DefaultMMTuning (95%
// efficiency at the normal). It is nil for methods without an M-step and
// no psi.
func (e Estimator) MStepPsi() psi.Psi {
	if e.Psi == nil {
		return e.Method.Info().DefaultPsi
	}
	return e.Psi
}

// Rule is a set of stopping rules, combined with bitwise or.
type Rule uint8

const (
	// RuleChange stops when ‖Δβ‖₂ ≤ ChangeTol · ‖β‖₂, the relative change in
	// the coefficients over the last step.
	RuleChange Rule = 1 << iota
	// RuleEquations stops when the estimating equations are near zero:
	// max_j |(1/n) Σ_i psi(u_i) x_ij| / rms(x_j) ≤ EquationTol, a norm that
	// does not depend on the units of y or of the columns of X.
	RuleEquations
)

// Default values used where a Settings field is zero.
const (
	DefaultChangeTol     = 1e-8
	DefaultEquationTol   = 1e-8
	DefaultMaxIterations = 100
)

// maxHalvings bounds the step halvings of one Newton iteration.
const maxHalvings = 40

// newtonPatience is the number of Newton iterations in a row without a new
// smallest equation norm, or in a row needing the IRLS fallback, after
// which Newton hands over to IRLS for the rest of the fit.
const newtonPatience = 5

// divergeFactor: coefficients larger than this multiple of the start's norm
// mean the iteration diverged.
const divergeFactor = 1e12

// Settings holds the stopping rules of an iterative fit. The zero value
// means: stop on a relative change in coefficients below 1e-8, at most 100
// iterations. The iteration cap always applies, so no fit runs forever.
type Settings struct {
	// Rules selects the stopping rules; zero means RuleChange.
	Rules Rule
	// RequireAll, when set, stops only when every selected rule holds at
	// once; otherwise the first rule to hold stops the fit.
	RequireAll bool
	// ChangeTol is the tolerance of RuleChange; zero means DefaultChangeTol.
	ChangeTol float64
	// EquationTol is the tolerance of RuleEquations; zero means
	// DefaultEquationTol.
	EquationTol float64
	// MaxIterations caps the iterations; zero means DefaultMaxIterations.
	MaxIterations int
}

// withDefaults returns s with zero fields replaced by their defaults.
func (s Settings) withDefaults() Settings {
	if s.Rules == 0 {
		s.Rules = RuleChange
	}
	if s.ChangeTol == 0 {
		s.ChangeTol = DefaultChangeTol
	}
	if s.EquationTol == 0 {
		s.EquationTol = DefaultEquationTol
	}
	if s.MaxIterations == 0 {
		s.MaxIterations = DefaultMaxIterations
	}
	return s
}

// Validate reports an error if a field is out of range.
func (s Settings) Validate() error {
	switch {
	case s.Rules&^(RuleChange|RuleEquations) != 0:
		return fmt.Errorf("unknown stopping rule bits %#x", s.Rules)
	case s.ChangeTol < 0 || math.IsNaN(s.ChangeTol) || math.IsInf(s.ChangeTol, 0):
		return fmt.Errorf("change tolerance %v must be a finite number ≥ 0", s.ChangeTol)
	case s.EquationTol < 0 || math.IsNaN(s.EquationTol) || math.IsInf(s.EquationTol, 0):
		return fmt.Errorf("equation tolerance %v must be a finite number ≥ 0", s.EquationTol)
	case s.MaxIterations < 0:
		return fmt.Errorf("iteration cap %d must be ≥ 0", s.MaxIterations)
	}
	return nil
}
