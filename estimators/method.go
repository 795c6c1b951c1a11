package estimators

import (
	"math"
	"strings"

	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/psi"
)

// Method is the algorithm of a fit. Its values index the methods
// registered in solverOf; each method's constant, documentation and
// behaviour live in its own file, method_<name>.go.
type Method int

// solverOf returns the solver of m, or nil for a value no method has.
// Adding a method is one file holding its constant and solver, and one
// line here; the constants run from 0 with no gaps.
func solverOf(m Method) solver {
	switch m {
	case MethodLS:
		return lsSolver{}
	case MethodIRLS:
		return irlsSolver{}
	case MethodNewton:
		return newtonSolver{}
	case MethodS:
		return sSolver{}
	case MethodMM:
		return mmSolver{}
	case MethodLTS:
		return ltsSolver{}
	case MethodLAD:
		return ladSolver{}
	}
	return nil
}

// solver is one fitting method: how it fits, and what the rest of the
// program needs to know of it. The types implementing it have no fields,
// so calling through it allocates nothing.
type solver interface {
	// info returns the method's properties.
	info() MethodInfo
	// fit computes e's estimate by this method into res, whose
	// Coefficients have one element per column of x and whose other fields
	// are zero; ws is reserved for x's shape. e.Method is this method, or,
	// when this method starts another fit, that fit's method. A direct
	// method leaves the residuals of its estimate in ws.r.
	fit(ws *Workspace, e Estimator, x blas64.General, y []float64, res *Result)
	// efficiency returns e's asymptotic efficiency relative to least
	// squares at normal errors of SD sd, for n observations and p
	// coefficients, or NaN when there is no such theory.
	efficiency(e Estimator, sd float64, n, p int) float64
	// covariance returns the factor f of Cov(β̂) ≈ f (XᵀX)⁻¹ at the fit
	// just made into ws and res (converged, n > p), and false when the
	// method or the fit has none.
	covariance(ws *Workspace, e Estimator, res *Result, n, p int) (float64, bool)
	// curve returns the psi whose psi, rho and weight describe e, and its
	// name when it is not e.Psi ("" otherwise).
	curve(e Estimator) (psi.Psi, string)
	// rules says in words where a fit of e starts, how its scale is found
	// and what its per-observation weight is; psiText names e's psi and
	// seed is the seed of its random subsets.
	rules(e Estimator, psiText string, seed uint64) FitRules
	// weights writes to w the final weight of each observation, given the
	// residuals r of the fit, its scale and the number p of coefficients
	// (NaN where the method has no weights).
	weights(e Estimator, r []float64, scale float64, p int, w []float64)
}

// MethodInfo describes a method: its name and the settings it uses.
type MethodInfo struct {
	// Name is the method's name in scenario files and on the command line.
	Name string
	// Direct reports that the method needs no start of its own, so that it
	// can serve as the start of an M-estimator.
	Direct bool
	// TakesPsi reports that the method fits with a psi and stopping rules
	// of the user's (and, unless OwnStart, a scale rule and a start).
	TakesPsi bool
	// OwnStart, for a method taking a psi that has its own start and scale
	// so that the user gives neither, says whose they are ("the
	// S-estimate's" for MM); it is "" for the other methods.
	OwnStart string
	// OwnScale names the scale rule of such a method in a fit's
	// description ("s-estimate" for MM); "" for the other methods.
	OwnScale string
	// DefaultPsi is the psi used when the estimator has none, and
	// DefaultFamily its family's name; nil and "" when a psi is required
	// or not used.
	DefaultPsi    psi.Psi
	DefaultFamily string
	// SScale reports that the method computes an S-scale, so it uses
	// Resampling.SC and Resampling.SDivisor.
	SScale bool
	// Trims reports that the method keeps the h observations of smallest
	// residual, so it uses Resampling.H.
	Trims bool
	// Inference says how the method's standard errors make intervals.
	Inference Inference
}

// Resamples reports whether the method draws random elemental subsets, so
// that it uses Resampling.Subsets and Resampling.Keep.
func (i MethodInfo) Resamples() bool { return i.SScale || i.Trims }

// Inference is how a method's standard errors (Workspace.StandardErrors)
// turn into confidence intervals.
type Inference uint8

const (
	// NoInference: the method has no covariance estimate.
	NoInference Inference = iota
	// StudentT: estimate ± t_{n−p} quantile × standard error (least
	// squares, with s² = RSS/(n−p)).
	StudentT
	// Wald: estimate ± normal quantile × standard error (M-estimators,
	// from Huber's asymptotic covariance).
	Wald
)

// Info returns the properties of m; a value that names no method has the
// zero MethodInfo but for the name "unknown-method".
func (m Method) Info() MethodInfo {
	if s := solverOf(m); s != nil {
		return s.info()
	}
	return MethodInfo{Name: "unknown-method"}
}

// String returns the method's name as used in scenario files: "ls",
// "irls", "newton", "s-estimate", "mm-estimate", "lts" or "lad".
func (m Method) String() string { return m.Info().Name }

// ParseMethod returns the Method named by s.
func ParseMethod(s string) (Method, bool) {
	for _, m := range Methods() {
		if m.String() == s {
			return m, true
		}
	}
	return 0, false
}

// Methods returns every method, in the order of their values.
func Methods() []Method {
	var out []Method
	for m := Method(0); solverOf(m) != nil; m++ {
		out = append(out, m)
	}
	return out
}

// Direct reports whether the method needs no start of its own (least
// squares, S, MM, LTS, exact LAD), so that it can serve as the start of an
// M-estimator. Whether it takes a psi is a separate question: see TakesPsi.
func (m Method) Direct() bool { return m.Info().Direct }

// TakesPsi reports whether the method fits with a psi, stopping rules, a
// scale rule and (but MM, whose start is its S-estimate) a start of the
// user's: IRLS, Newton, and MM for its M-step.
func (m Method) TakesPsi() bool { return m.Info().TakesPsi }

// Fitter is an estimator the harness can run: anything that fits the
// design x (n×p) and response y into res, reusing the buffers of ws, and
// returns an error only on misuse (as Estimator.Fit does, which makes
// Estimator a Fitter). A Fitter that draws random numbers takes them from
// ws (Workspace.SeedRandom), so that its fits are reproducible. It may
// also implement NormalTheory, PsiCurves and StandardErrorer.
type Fitter interface {
	Fit(x *mat.Dense, y []float64, ws *Workspace, res *Result) error
}

// NormalTheory is implemented by a Fitter that knows its asymptotic
// efficiency at the normal model, for comparison with simulation.
type NormalTheory interface {
	// NormalEfficiency returns the asymptotic efficiency relative to least
	// squares at normal errors of SD sd, n observations and p
	// coefficients, or NaN when there is no such theory.
	NormalEfficiency(sd float64, n, p int) float64
}

// PsiCurves is implemented by a Fitter whose psi, rho and weight functions
// can be drawn.
type PsiCurves interface {
	// CurvePsi returns the psi to draw, nil if there is none, and its name
	// when it is not the estimator's own psi ("" otherwise).
	CurvePsi() (fn psi.Psi, name string)
}

// NormalEfficiency returns e's asymptotic efficiency relative to least
// squares at normal errors of SD sd, n observations and p coefficients, or
// NaN when its method has no such theory. Scales estimated from the data
// (MAD, S, LTS, a start's) are consistent at the normal, so residuals are
// standardised by sd itself; a fixed scale S standardises by S.
func (e Estimator) NormalEfficiency(sd float64, n, p int) float64 {
	s := solverOf(e.Method)
	if s == nil {
		return math.NaN()
	}
	return s.efficiency(e, sd, n, p)
}

// CurvePsi returns the psi whose psi, rho and weight describe e: its own
// psi, the default psi of MM's M-step when it has none (named "bisquare"),
// or the S-scale's bisquare of an S-estimate (named "S-scale bisquare c").
// It returns nil for methods without a psi (least squares, LTS, LAD).
func (e Estimator) CurvePsi() (fn psi.Psi, name string) {
	s := solverOf(e.Method)
	if s == nil {
		return nil, ""
	}
	return s.curve(e)
}

// MethodsWhere returns the methods whose properties satisfy keep, in the
// order of Methods.
func MethodsWhere(keep func(MethodInfo) bool) []Method {
	var out []Method
	for _, m := range Methods() {
		if keep(m.Info()) {
			out = append(out, m)
		}
	}
	return out
}

// ListMethods names ms in words for messages, joined by the conjunction
// conj ("and", "or"): "a", "a or b", "a, b or c".
func ListMethods(ms []Method, conj string) string {
	names := make([]string, len(ms))
	for i, m := range ms {
		names[i] = m.String()
	}
	if len(names) < 2 {
		return strings.Join(names, "")
	}
	return strings.Join(names[:len(names)-1], ", ") + " " + conj + " " + names[len(names)-1]
}
