package estimators

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/psi"
)

// Estimator specifies a regression fit: the method, and for M-estimation the
// psi, the scale rule, the start and the stopping rules. It is a small value
// type; the zero value is least squares.
type Estimator struct {
	// Method is the algorithm.
	Method Method
	// Psi is the psi function of an M-estimator; ignored by MethodLS.
	Psi psi.Psi
	// Scale is the scale rule of an M-estimator; the zero value is ScaleMAD.
	Scale Scale
	// Start is the starting coefficient vector; nil means the estimate of
	// StartFrom. Its length must equal the number of columns of X.
	Start []float64
	// StartFrom is the method whose estimate starts an iterative fit when
	// Start is nil: MethodLS (the zero value), MethodS, MethodMM, MethodLTS
	// or MethodLAD. A redescending psi is used safely from a
	// high-breakdown start.
	StartFrom Method
	// Resampling holds the settings of the S, MM and LTS estimators (also
	// when they serve as a start).
	Resampling Resampling
	// Settings holds the stopping rules.
	Settings Settings
	// Trace, if not nil, is called after every iteration of an iterative
	// fit with the state reached. The slices it sees belong to the
	// workspace and are valid only during the call.
	Trace func(Iteration)
}

// Iteration describes one iteration of an iterative fit, for tracing.
type Iteration struct {
	// Index counts iterations from 1.
	Index int
	// Coefficients are the coefficients after the step.
	Coefficients []float64
	// Scale is the scale used for the step.
	Scale float64
	// Objective is Σ rho(r_i/Scale) before the step.
	Objective float64
	// EquationNorm is the estimating-equation norm before the step.
	EquationNorm float64
	// StepLength is the fraction of the full step taken (1 unless halved).
	StepLength float64
	// Change is the relative change in coefficients, ‖Δβ‖/‖β‖.
	Change float64
	// Halvings and Fallback report the safeguards fired in this iteration:
	// step halvings, and whether an IRLS step replaced a Newton step.
	Halvings int  // step halvings of the line search
	Fallback bool // an IRLS step replaced the Newton step
	// QR reports that the weighted solve fell back from Cholesky to QR.
	QR bool
	// MinWeight and MaxWeight are the extreme IRLS weights (or psi'
	// values for a Newton step) of the step.
	MinWeight, MaxWeight float64
}

// Result is the outcome of a fit. A Result may be reused across fits: its
// Coefficients slice is overwritten in place when large enough.
type Result struct {
	// Coefficients are the fitted coefficients, one per column of X.
	Coefficients []float64
	// Scale is the residual scale: the M-estimator's sigma at the end of the
	// fit, or for least squares sqrt(RSS/(n-p)) (zero when n = p).
	Scale float64
	// Iterations is the number of steps taken (0 for least squares).
	Iterations int
	// Status says which stopping rule ended the fit or which failure did.
	Status Status
	// EquationNorm is the norm of the estimating equations at the end (see
	// RuleEquations).
	EquationNorm float64
	// Objective is Σ rho(r_i/Scale) at the end; for least squares RSS/2.
	Objective float64
	// Halvings counts Newton step halvings over the fit.
	Halvings int
	// Fallbacks counts Newton iterations that took an IRLS step instead,
	// because psi' gave a Jacobian that was not positive definite, the
	// Newton direction did not lower the objective, or Newton had made no
	// progress for several iterations and handed the rest of the fit over
	// to IRLS (every IRLS iteration after the handover counts).
	Fallbacks int
	// QRSolves counts weighted solves that fell back from the Cholesky
	// factorisation of the normal equations to QR because of conditioning.
	QRSolves int
	// SRefinement says how the refinement of the winning S candidate
	// ended, for S and MM fits (and fits started from them);
	// RefinementNone otherwise.
	SRefinement Refinement
	// SSteps counts the refinement steps of the winning S candidate.
	SSteps int
}

// Refinement says how the refinement of an S-estimate's winning candidate
// ended.
type Refinement uint8

const (
	// RefinementNone: no S-estimate was refined (another method, or an
	// exact fit found among the elemental subsets).
	RefinementNone Refinement = iota
	// RefinementConverged: the refinement reached its tolerance.
	RefinementConverged
	// RefinementAtCap: the refinement stopped at its step cap. The scale
	// is still the M-scale of the coefficients returned, a valid S-scale
	// no larger than that of any other candidate, but the coefficients
	// are not at the minimum to tolerance.
	RefinementAtCap
)

// String returns "none", "converged" or "at-cap".
func (r Refinement) String() string {
	switch r {
	case RefinementNone:
		return "none"
	case RefinementConverged:
		return "converged"
	case RefinementAtCap:
		return "at-cap"
	}
	return "unknown-refinement"
}

// note records the S refinement's outcome in res.
func (o sOutcome) note(res *Result) {
	res.SSteps = o.steps
	switch {
	case o.status == IterationLimit:
		res.SRefinement = RefinementAtCap
	case o.status.Converged() && o.scale > 0:
		res.SRefinement = RefinementConverged
	}
}

// Fit fits e to the design x (n×p) and response y, writing the outcome to
// res. ws holds the buffers of the fit; reusing it across fits of one shape
// makes Fit allocate nothing. ws and res may not be used concurrently.
//
// Fit returns an error only on misuse: mismatched dimensions, fewer rows
// than columns, NaN or infinite data, a missing psi, a bad start, scale or
// settings. Every other outcome is a Status in res. Whatever happens, res
// holds nothing of an earlier fit: on an error its coefficients are NaN and
// its status is NotRun, or NonFinite when the data hold NaN or infinite
// values (the error then wraps ErrNonFinite).
func (e Estimator) Fit(x *mat.Dense, y []float64, ws *Workspace, res *Result) error {
	raw := x.RawMatrix()
	n, p := raw.Rows, raw.Cols
	if cap(res.Coefficients) < p {
		res.Coefficients = make([]float64, p)
	}
	*res = Result{Coefficients: res.Coefficients[:p]}
	beta := res.Coefficients
	if err := e.check(raw, y); err != nil {
		for j := range beta {
			beta[j] = math.NaN()
		}
		res.Scale, res.EquationNorm, res.Objective = math.NaN(), math.NaN(), math.NaN()
		if errors.Is(err, ErrNonFinite) {
			res.Status = NonFinite
		}
		return err
	}
	ws.reserve(n, p)

	if e.Method.Direct() {
		ws.direct(e, e.Method, raw, y, res)
		return nil
	}
	solverOf(e.Method).fit(ws, e, raw, y, res)
	return nil
}

// classifyNonFinite turns a solution with a NaN or infinite coefficient or
// scale (data so extreme that float64 arithmetic overflowed) into the
// NonFinite status.
func classifyNonFinite(res *Result) {
	if !res.Status.Converged() {
		return
	}
	bad := math.IsNaN(res.Scale) || math.IsInf(res.Scale, 0)
	for _, b := range res.Coefficients {
		bad = bad || math.IsNaN(b) || math.IsInf(b, 0)
	}
	if bad {
		res.Status = NonFinite
	}
}

// direct computes the estimate of the direct method m (e's own, or its
// start's) into res, the residuals ending in ws.r, and classifies a
// non-finite solution.
func (ws *Workspace) direct(e Estimator, m Method, x blas64.General, y []float64, res *Result) {
	solverOf(m).fit(ws, e, x, y, res)
	classifyNonFinite(res)
}

// Fit fits e to x and y with a fresh workspace. It is a convenience for
// one-off fits; loops should reuse a Workspace with Estimator.Fit.
func Fit(e Estimator, x *mat.Dense, y []float64) (Result, error) {
	var ws Workspace
	var res Result
	err := e.Fit(x, y, &ws, &res)
	return res, err
}

// ErrNonFinite is wrapped by the error Fit returns for NaN or infinite data.
var ErrNonFinite = errors.New("data contain NaN or infinite values")

// check validates the arguments of Fit.
func (e Estimator) check(raw blas64.General, y []float64) error {
	n, p := raw.Rows, raw.Cols
	switch {
	case len(y) != n:
		return fmt.Errorf("response has %d values, design has %d rows", len(y), n)
	case p == 0:
		return errors.New("design has no columns")
	case n < p:
		return fmt.Errorf("design has %d rows, fewer than its %d columns", n, p)
	case solverOf(e.Method) == nil:
		return fmt.Errorf("unknown method %d", int(e.Method))
	case e.Method.TakesPsi() && e.MStepPsi() == nil:
		return fmt.Errorf("method %v needs a psi function", e.Method)
	case !e.StartFrom.Direct():
		return fmt.Errorf("method %v cannot start an iterative fit; use %s", e.StartFrom, ListMethods(MethodsWhere(func(i MethodInfo) bool { return i.Direct }), "or"))
	case e.Resampling.Subsets < 0 || e.Resampling.Keep < 0 || e.Resampling.H < 0 || e.Resampling.SC < 0:
		return errors.New("resampling settings must not be negative")
	case e.Resampling.SDivisor > DivideByNMinusP:
		return fmt.Errorf("unknown S-scale divisor %d", e.Resampling.SDivisor)
	case e.Resampling.SDivisor == DivideByNMinusP && n == p:
		return fmt.Errorf("the S-scale divisor n − p is 0 with n = p = %d", n)
	case e.Resampling.H != 0 && (e.Resampling.H < p || e.Resampling.H > n):
		return fmt.Errorf("LTS keeps h = %d observations; h must lie between p = %d and n = %d", e.Resampling.H, p, n)
	case e.Start != nil && len(e.Start) != p:
		return fmt.Errorf("start has %d coefficients, design has %d columns", len(e.Start), p)
	case e.Start != nil && e.Scale.Rule == ScaleStart:
		return errors.New("the start scale rule takes the scale of a start method's fit; with given start coefficients there is none: use the MAD or a fixed scale")
	}
	if err := e.Settings.Validate(); err != nil {
		return err
	}
	if info := e.Method.Info(); info.TakesPsi && info.OwnStart == "" {
		switch e.Scale.Rule {
		case ScaleMAD, ScaleStart:
		case ScaleFixed:
			if !(e.Scale.Value > 0) || math.IsInf(e.Scale.Value, 0) {
				return fmt.Errorf("fixed scale %v must be a positive finite number", e.Scale.Value)
			}
		default:
			return fmt.Errorf("unknown scale rule %d", e.Scale.Rule)
		}
	}
	if !allFinite(y, raw) {
		for i, v := range y {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return fmt.Errorf("response row %d is %v: %w", i+1, v, ErrNonFinite)
			}
		}
		for i := 0; i < n; i++ {
			for j, v := range raw.Data[i*raw.Stride : i*raw.Stride+p] {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					return fmt.Errorf("design row %d column %d is %v: %w", i+1, j+1, v, ErrNonFinite)
				}
			}
		}
	}
	for j, v := range e.Start {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("start coefficient %d is %v: %w", j+1, v, ErrNonFinite)
		}
	}
	return nil
}

// allFinite reports whether every value of y and of the design is finite.
// A value is not finite exactly when its exponent bits are all ones, so
// the largest exponent field tells, found without a data-dependent branch;
// check then looks for the first value that is not, to name it.
func allFinite(y []float64, raw blas64.General) bool {
	const exp = 0x7ff0000000000000
	var worst uint64
	for _, v := range y {
		worst = max(worst, math.Float64bits(v)&exp)
	}
	p := raw.Cols
	for i := 0; i < raw.Rows; i++ {
		for _, v := range raw.Data[i*raw.Stride : i*raw.Stride+p] {
			worst = max(worst, math.Float64bits(v)&exp)
		}
	}
	return worst != exp
}
