package estimators

import (
	"fmt"
	"math"
)

// Method is the algorithm of a fit.
type Method int

const (
	// MethodLS is ordinary least squares by Householder QR.
	MethodLS Method = iota
	// MethodIRLS is iteratively reweighted least squares.
	MethodIRLS
	// MethodNewton is Newton's method on the estimating equations, with step
	// halving and IRLS steps as safeguards.
	MethodNewton
)

// String returns the method's name as used in scenario files: "ls", "irls"
// or "newton".
func (m Method) String() string {
	switch m {
	case MethodLS:
		return "ls"
	case MethodIRLS:
		return "irls"
	case MethodNewton:
		return "newton"
	}
	return "unknown-method"
}

// ParseMethod returns the Method named by s.
func ParseMethod(s string) (Method, bool) {
	for _, m := range []Method{MethodLS, MethodIRLS, MethodNewton} {
		if m.String() == s {
			return m, true
		}
	}
	return 0, false
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
