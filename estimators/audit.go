package estimators

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/psi"
)

// The solver audit answers, for one fit, how close "converged" was: it
// continues the iteration from the returned estimate to the fixed point at
// machine precision and measures the distance in standard errors
// (stopping-rule error), estimates the observed convergence rate from the
// iteration history, and tabulates the iterations each change tolerance
// would have needed. See AuditWorkspace.Audit.

// NumAuditTolerances is the number of change tolerances in an Audit's
// table: 1e-2, 1e-3, …, 1e-14.
const NumAuditTolerances = 13

// AuditTolerance returns the i-th change tolerance of the audit table,
// 10^-(i+2) as the float64 literal of that power (1e-3 for i = 1), for
// 0 ≤ i < NumAuditTolerances.
func AuditTolerance(i int) float64 {
	return [NumAuditTolerances]float64{1e-2, 1e-3, 1e-4, 1e-5, 1e-6, 1e-7, 1e-8, 1e-9, 1e-10, 1e-11, 1e-12, 1e-13, 1e-14}[i]
}

// Constants of the continuation and of the rate rule.
const (
	// DefaultAuditIterations caps the continuation's iterations when
	// AuditWorkspace.MaxIterations is zero: enough for an IRLS rate of
	// 0.993 to go from a change of 1e-2 to 1e-16.
	DefaultAuditIterations = 5000
	// AuditEquationTol is the equation tolerance of the continuation
	// (see RuleEquations): a few units of rounding of the mean of ψ(u)x.
	AuditEquationTol = 1e-15
	// AuditStallWindow is the number of continuation steps in a row that
	// set no new smallest change after which the continuation is taken to
	// have stalled at the limit of precision.
	AuditStallWindow = 5
	// RateSkip is the number of first iterations of a fit that the rate
	// estimates leave out: the step from the start, whose size says how
	// far the start was rather than how fast the iteration contracts (and
	// during which the MAD moves most). One only, because Newton from a
	// good start is within rounding of the root in three or four steps.
	RateSkip = 1
	// RateFloor is the smallest relative change ‖Δβ‖/‖β‖ that the rate
	// estimates use; below it rounding (about 1e-16 times the condition
	// of the step) dominates the change.
	RateFloor = 1e-13
)

// auditRound is the number of continuation iterations between two checks
// for a stall. A new round restarts the fit from the last iterate, which
// for IRLS is exactly the next iteration and for Newton differs only in
// the safeguards' counters.
const auditRound = 8

// AuditKind says what an audit could measure.
type AuditKind uint8

const (
	// AuditNotRun: nothing was audited (the zero value).
	AuditNotRun AuditKind = iota
	// AuditIterative: an iterative fit (IRLS, Newton, the M-step of MM)
	// was continued to its fixed point.
	AuditIterative
	// AuditDirect: the method has no stopping rule on an M-estimating
	// equation (least squares, S, LTS, exact LAD) or the fit was exact;
	// the error is exactly 0.
	AuditDirect
	// AuditFailedFit: the fit ended in a failure (see Audit.Fit), so there
	// is no estimate to continue from.
	AuditFailedFit
)

// String returns "not-run", "iterative", "direct" or "failed-fit".
func (k AuditKind) String() string {
	switch k {
	case AuditNotRun:
		return "not-run"
	case AuditIterative:
		return "iterative"
	case AuditDirect:
		return "direct"
	case AuditFailedFit:
		return "failed-fit"
	}
	return "unknown-audit-kind"
}

// ContinuationEnd says how the continuation to the fixed point ended.
type ContinuationEnd uint8

const (
	// ContinuationNone: no continuation was run (the zero value).
	ContinuationNone ContinuationEnd = iota
	// ContinuationSettled: a step changed nothing, or the equation norm
	// fell to AuditEquationTol.
	ContinuationSettled
	// ContinuationStalled: the relative change set no new minimum for
	// AuditStallWindow steps in a row; rounding now dominates the
	// iteration, and Audit.PrecisionLimit says at what size.
	ContinuationStalled
	// ContinuationAtCap: the continuation reached its iteration cap still
	// making progress; the fixed point is the last iterate.
	ContinuationAtCap
	// ContinuationFailed: the continuation ended in a failure status
	// (Audit.ContinuationStatus); the errors are NaN.
	ContinuationFailed
)

// String returns "none", "settled", "stalled", "at-cap" or "failed".
func (c ContinuationEnd) String() string {
	switch c {
	case ContinuationNone:
		return "none"
	case ContinuationSettled:
		return "settled"
	case ContinuationStalled:
		return "stalled"
	case ContinuationAtCap:
		return "at-cap"
	case ContinuationFailed:
		return "failed"
	}
	return "unknown-continuation-end"
}

// SEReason says whether the standard errors that are the audit's unit are
// defined, and if not why.
type SEReason uint8

const (
	// SENotComputed: no standard errors were needed (a direct method,
	// whose error is 0) or the fit was not audited; the zero value.
	SENotComputed SEReason = iota
	// SEDefined: Workspace.StandardErrors gave the standard errors at the
	// fixed point.
	SEDefined
	// SENoDegreesOfFreedom: n = p, so no residual variance is left.
	SENoDegreesOfFreedom
	// SEPsiJumps: psi is discontinuous, so the sandwich's mean ψ' misses
	// the jumps and the standard errors would be too small.
	SEPsiJumps
	// SENoCurvature: the mean ψ' at the fixed point is not positive or
	// the design is singular, so the sandwich does not exist.
	SENoCurvature
	// SENoFixedPoint: the continuation failed, so there is no fit to take
	// standard errors of.
	SENoFixedPoint
)

// String returns "not-computed", "defined", "no-degrees-of-freedom",
// "psi-jumps", "no-curvature" or "no-fixed-point".
func (r SEReason) String() string {
	switch r {
	case SENotComputed:
		return "not-computed"
	case SEDefined:
		return "defined"
	case SENoDegreesOfFreedom:
		return "no-degrees-of-freedom"
	case SEPsiJumps:
		return "psi-jumps"
	case SENoCurvature:
		return "no-curvature"
	case SENoFixedPoint:
		return "no-fixed-point"
	}
	return "unknown-se-reason"
}

// RateKind says what a Rate measures.
type RateKind uint8

const (
	// RateNone: no rate could be estimated (the zero value): a direct
	// method, or too few usable iterations (see Rate).
	RateNone RateKind = iota
	// RateLinear: the linear rate of IRLS, the median of Δ_{k+1}/Δ_k.
	RateLinear
	// RateOrder: the order of Newton's method, q in Δ_{k+1} ≈ C Δ_k^q.
	RateOrder
)

// String returns "none", "linear" or "order".
func (k RateKind) String() string {
	switch k {
	case RateNone:
		return "none"
	case RateLinear:
		return "linear"
	case RateOrder:
		return "order"
	}
	return "unknown-rate-kind"
}

// Rate is the observed convergence rate of a fit, from its relative
// changes Δ_k = ‖β_k − β_{k−1}‖/‖β_k‖ (the fit's steps followed by the
// continuation's, which carry on the same iteration).
//
// Steps used: the first RateSkip steps of the fit are left out, and so is
// every step with Δ_k < RateFloor (and for Newton every step that halved or
// fell back to IRLS, which is not a Newton step). When the fit was not
// traced only the continuation's steps are known, and none is skipped:
// they follow a fit that already stopped.
//
// For IRLS (and MM's M-step) Value is the median of Δ_{k+1}/Δ_k over the
// later half of the consecutive pairs of used steps: near the fixed point
// IRLS converges linearly, so the ratio settles to the rate, in (0, 1).
//
// For Newton Value is the order q at the last pair of consecutive used
// steps, the pair nearest the root:
//
//	q = log Δ_{k+1} / log Δ_k.
//
// With Δ_{k+1} ≈ C Δ_k^q this is q + log C / log Δ_k: the constant's share
// shrinks as Δ_k falls, so the pair nearest the root is used. (The
// three-point estimate log(Δ_{k+1}/Δ_k)/log(Δ_k/Δ_{k−1}) cancels C but not
// its change from step to step, which in several dimensions follows the
// direction of the error and is larger over the two or three steps Newton
// takes near a root.) Near a simple root with a smooth psi and a fixed
// scale q is about 2; with the MAD re-estimated at each step the Jacobian
// leaves out the scale's dependence on β, and the observed order drops
// towards 1.
type Rate struct {
	// Kind says whether Value is a linear rate or an order.
	Kind RateKind
	// Value is the rate or the order; NaN when Kind is RateNone.
	Value float64
	// Used is the number of ratios (IRLS) or pairs (Newton) available to
	// the estimate.
	Used int
	// Change is the relative change Δ_k where the rate was read: the
	// first change of the tail (IRLS) or of the pair used (Newton), which
	// bounds the bias log C / log Δ_k of the order.
	Change float64
}

// ToleranceRow is one row of an audit's tolerance table: what a change
// tolerance would have given on this fit.
type ToleranceRow struct {
	// Tolerance is the relative change tolerance (see RuleChange).
	Tolerance float64
	// Reached reports whether the iteration ever got a change at or below
	// Tolerance; if not, Iterations is 0 and MaxErrorSE NaN.
	Reached bool
	// Iterations is the number of iterations RuleChange with this
	// tolerance would have stopped after.
	Iterations int
	// MaxErrorSE is the largest distance, over coefficients, of that
	// iterate from the fixed point, in standard errors (NaN when they are
	// not defined).
	MaxErrorSE float64
}

// Audit is the outcome of auditing one fit. Its slices are reused by the
// next audit into the same value.
type Audit struct {
	// Kind says what was audited.
	Kind AuditKind
	// Fit is the status of the audited fit.
	Fit Status
	// End says how the continuation ended; ContinuationStatus is the
	// status of its last round and ContinuationIterations the number of
	// its iterations.
	End                    ContinuationEnd
	ContinuationStatus     Status
	ContinuationIterations int
	// PrecisionLimit is the limit of precision of the fixed point, as a
	// relative change ‖Δβ‖/‖β‖: for a stalled continuation the largest
	// change since its smallest (the wobble of the iterates where rounding
	// dominates), otherwise its last step's change (0 without a step).
	PrecisionLimit float64
	// Fixed is the fixed point β*, the continuation's last iterate.
	Fixed []float64
	// Error is |β_returned − β*| per coefficient.
	Error []float64
	// SE are the standard errors at the fixed point (NaN unless
	// SEReason is SEDefined).
	SE       []float64
	SEReason SEReason
	// ErrorSE is Error/SE per coefficient, MaxErrorSE its maximum; NaN
	// when the standard errors are not defined, 0 for a direct method.
	ErrorSE    []float64
	MaxErrorSE float64
	// Traced reports that the fit's iteration history was recorded (the
	// fit was made with AuditWorkspace.Traced); Rate then uses the fit's
	// steps too and Tolerances is filled.
	Traced bool
	// Rate is the observed convergence rate.
	Rate Rate
	// Tolerances is the table of change tolerances 1e-2 … 1e-14; all rows
	// are unreached when the fit was not traced.
	Tolerances [NumAuditTolerances]ToleranceRow
}

// AuditWorkspace holds the buffers of audits: its own Workspace for the
// continuation (so the audited fit's Workspace is left as it was), the
// recorded history and per-coefficient scratch. The zero value is ready to
// use; after the first audit of a shape it allocates nothing (unless a
// continuation runs longer than any before). It must not be used by two
// fits or audits at once.
type AuditWorkspace struct {
	// MaxIterations caps the continuation; zero means
	// DefaultAuditIterations.
	MaxIterations int

	ws         Workspace
	cont, eval Result
	start, se  []float64

	// The history: the traced fit's steps, then the continuation's.
	changes  []float64 // relative change of each step
	pure     []bool    // the step was a full step of its method
	traced   bool      // Traced was called and the fit's steps are recorded
	table    bool      // steps fill the tolerance table (a traced fit)
	fitSteps int       // steps recorded during the fit
	last     []float64 // the fit's last traced coefficients
	tolIter  [NumAuditTolerances]int
	tolBeta  []float64 // NumAuditTolerances×p: the iterate at each tolerance
	minCh    float64   // smallest continuation change so far
	sinceMin int       // continuation steps since minCh was set
	prev     func(Iteration)
	onFit    func(Iteration)
	onCont   func(Iteration)
	ratios   []float64 // scratch for the median
}

// Traced returns e set up to record its iteration history in a, for the
// rate and the tolerance table of the next Audit. The trace e already has,
// if any, is still called. It starts a new history; the history is kept
// only until the next Traced or Audit.
func (a *AuditWorkspace) Traced(e Estimator) Estimator {
	if a.onFit == nil {
		a.onFit = a.recordFit
		a.onCont = a.recordContinuation
	}
	a.changes, a.pure = a.changes[:0], a.pure[:0]
	a.tolIter = [NumAuditTolerances]int{}
	a.traced, a.table, a.fitSteps = true, true, 0
	a.prev = e.Trace
	e.Trace = a.onFit
	return e
}

// recordFit records one step of the traced fit.
func (a *AuditWorkspace) recordFit(it Iteration) {
	p := len(it.Coefficients)
	a.reserve(p)
	a.record(it)
	a.fitSteps++
	copy(a.last, it.Coefficients)
	if a.prev != nil {
		a.prev(it)
	}
}

// recordContinuation records one step of the continuation and keeps the
// count of steps since the smallest change.
func (a *AuditWorkspace) recordContinuation(it Iteration) {
	a.record(it)
	if it.Change < a.minCh {
		a.minCh, a.sinceMin = it.Change, 0
	} else {
		a.sinceMin++
	}
}

// record appends a step to the history and notes the first step at or
// below each tolerance.
func (a *AuditWorkspace) record(it Iteration) {
	a.changes = append(a.changes, it.Change)
	a.pure = append(a.pure, !it.Fallback && it.Halvings == 0)
	if !a.table {
		return
	}
	p := len(it.Coefficients)
	for i := range a.tolIter {
		if a.tolIter[i] == 0 && it.Change <= AuditTolerance(i) {
			a.tolIter[i] = len(a.changes)
			copy(a.tolBeta[i*p:(i+1)*p], it.Coefficients)
		}
	}
}

// reserve sizes the per-coefficient buffers for p coefficients.
func (a *AuditWorkspace) reserve(p int) {
	a.start = auditResize(a.start, p)
	a.se = auditResize(a.se, p)
	a.last = auditResize(a.last, p)
	a.tolBeta = auditResize(a.tolBeta, NumAuditTolerances*p)
}

// auditResize returns s with length n, reusing its storage when it can.
func auditResize(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	return s[:n]
}

// continuation returns the estimator that continues the fit of e whose
// result is res: the same psi, data and scale rule (the MAD for ScaleMAD,
// otherwise the fit's scale held fixed, as MM's M-step holds the S-scale),
// with the same method (IRLS for MM's M-step).
func continuation(e Estimator, res *Result) Estimator {
	c := Estimator{Method: e.Method, Psi: e.MStepPsi(), Scale: e.Scale}
	if e.Method == MethodMM {
		c.Method = MethodIRLS
		c.Scale = Scale{Rule: ScaleFixed, Value: res.Scale}
	}
	if c.Scale.Rule == ScaleStart {
		c.Scale = Scale{Rule: ScaleFixed, Value: res.Scale}
	}
	return c
}

// Audit audits the fit of e to x and y whose result is res, writing the
// outcome to out (reusing its slices).
//
// An iterative fit (IRLS, Newton, MM's M-step) is continued from
// res.Coefficients with the same method, psi, scale rule and data, a change
// tolerance of the smallest positive float64 (only a step that changes
// nothing meets it; zero would mean the default) and the equation
// tolerance AuditEquationTol, in rounds of a few iterations,
// until a step changes nothing, the equations hold to that tolerance, the
// change stops decreasing (AuditStallWindow) or MaxIterations is reached.
// Its last iterate is the fixed point β*; out.Error is |β − β*| and
// out.ErrorSE the same in the standard errors of Workspace.StandardErrors
// at β* (with its scale: the MAD at β* for ScaleMAD, the fit's fixed scale
// otherwise). Where those are not defined (see SEReason) ErrorSE is NaN.
//
// A direct method (least squares, S, LTS, exact LAD) or an exact fit has
// error 0; a failed fit is not audited (out.Kind says which). When the fit
// was made with the estimator a.Traced(e) returned, out.Rate uses its
// steps too and out.Tolerances is filled; otherwise the rate comes from
// the continuation alone.
//
// Audit returns an error only on misuse: res not of the shape of x, or
// data Fit would refuse.
func (a *AuditWorkspace) Audit(e Estimator, x *mat.Dense, y []float64, res *Result, out *Audit) error {
	n, p := x.Dims()
	traced := a.traced && a.fitSteps == res.Iterations &&
		(a.fitSteps == 0 || slices.Equal(a.last, res.Coefficients))
	a.traced, a.table = false, traced
	a.reset(out, p, res.Status)
	if len(res.Coefficients) != p {
		return fmt.Errorf("result has %d coefficients, design has %d columns", len(res.Coefficients), p)
	}
	if len(y) != n {
		return fmt.Errorf("response has %d values, design has %d rows", len(y), n)
	}
	switch {
	case e.Method.Direct() && e.Method != MethodMM, res.Status == ExactFit, res.Status == Solved:
		out.Kind = AuditDirect
		copy(out.Fixed, res.Coefficients)
		for j := range out.Error {
			out.Error[j], out.ErrorSE[j] = 0, 0
		}
		out.MaxErrorSE = 0
		return nil
	case !res.Status.Converged() && res.Status != IterationLimit:
		out.Kind = AuditFailedFit
		return nil
	}
	out.Kind, out.Traced = AuditIterative, traced
	a.reserve(p)
	if !traced {
		a.changes, a.pure = a.changes[:0], a.pure[:0]
		a.fitSteps = 0
	}
	if err := a.continueFit(continuation(e, res), x, y, res, out); err != nil {
		return err
	}
	a.measure(e, res, out)
	return nil
}

// reset clears out for an audit of p coefficients.
func (a *AuditWorkspace) reset(out *Audit, p int, fit Status) {
	fixed, errs, se, errSE := out.Fixed, out.Error, out.SE, out.ErrorSE
	*out = Audit{
		Fit:        fit,
		Fixed:      auditResize(fixed, p),
		Error:      auditResize(errs, p),
		SE:         auditResize(se, p),
		ErrorSE:    auditResize(errSE, p),
		MaxErrorSE: math.NaN(),
		Rate:       Rate{Value: math.NaN()},
	}
	for _, s := range [][]float64{out.Fixed, out.Error, out.SE, out.ErrorSE} {
		for j := range s {
			s[j] = math.NaN()
		}
	}
	for i := range out.Tolerances {
		out.Tolerances[i] = ToleranceRow{Tolerance: AuditTolerance(i), MaxErrorSE: math.NaN()}
	}
}

// continueFit runs the continuation of c from res.Coefficients in rounds
// of auditRound iterations until it settles, stalls, fails or reaches the
// cap, and evaluates the fit at the fixed point into a.eval (so that a.ws
// holds its residuals).
func (a *AuditWorkspace) continueFit(c Estimator, x *mat.Dense, y []float64, res *Result, out *Audit) error {
	limit := a.MaxIterations
	if limit <= 0 {
		limit = DefaultAuditIterations
	}
	if a.onCont == nil {
		a.onCont = a.recordContinuation
		a.onFit = a.recordFit
	}
	copy(a.start, res.Coefficients)
	c.Start = a.start
	c.Trace = a.onCont
	a.minCh, a.sinceMin = math.Inf(1), 0
	total := 0
	for {
		c.Settings = Settings{
			Rules:         RuleChange | RuleEquations,
			ChangeTol:     math.SmallestNonzeroFloat64, // only a step that changes nothing
			EquationTol:   AuditEquationTol,
			MaxIterations: min(auditRound, limit-total),
		}
		if err := c.Fit(x, y, &a.ws, &a.cont); err != nil {
			return fmt.Errorf("continuing the fit: %w", err)
		}
		total += a.cont.Iterations
		out.ContinuationStatus, out.ContinuationIterations = a.cont.Status, total
		switch {
		case a.cont.Status.Converged():
			out.End = ContinuationSettled
		case a.cont.Status != IterationLimit:
			out.End = ContinuationFailed
		case a.sinceMin >= AuditStallWindow:
			out.End = ContinuationStalled
		case total >= limit:
			out.End = ContinuationAtCap
		default:
			copy(a.start, a.cont.Coefficients)
			continue
		}
		break
	}
	if out.End == ContinuationFailed {
		out.SEReason = SENoFixedPoint
		return nil
	}
	// The precision limit: the wobble of the steps since the smallest
	// change when stalled, otherwise the last step's change.
	cont := a.changes[a.fitSteps:]
	out.PrecisionLimit = 0
	if len(cont) > 0 {
		out.PrecisionLimit = cont[len(cont)-1]
	}
	if out.End == ContinuationStalled {
		for _, ch := range cont[max(0, len(cont)-a.sinceMin-1):] {
			out.PrecisionLimit = max(out.PrecisionLimit, ch)
		}
	}
	copy(out.Fixed, a.cont.Coefficients)
	// Evaluate at β* without a step: an equation tolerance no finite norm
	// exceeds stops the fit before its first step, with ws holding the
	// residuals and the scale at β*.
	copy(a.start, a.cont.Coefficients)
	c.Trace = nil
	c.Settings = Settings{Rules: RuleEquations, EquationTol: math.MaxFloat64, MaxIterations: 1}
	if err := c.Fit(x, y, &a.ws, &a.eval); err != nil {
		return fmt.Errorf("evaluating the fixed point: %w", err)
	}
	out.SEReason = SEDefined
	if !a.ws.StandardErrors(c, x, &a.eval, a.se) {
		out.SEReason = a.seReason(c, x)
		for j := range a.se {
			a.se[j] = math.NaN()
		}
	}
	return nil
}

// seReason says why Workspace.StandardErrors gave no standard errors for
// the fixed point of c.
func (a *AuditWorkspace) seReason(c Estimator, x *mat.Dense) SEReason {
	n, p := x.Dims()
	switch {
	case !a.eval.Status.Converged():
		return SENoFixedPoint
	case n <= p:
		return SENoDegreesOfFreedom
	case psi.Discontinuous(c.Psi):
		return SEPsiJumps
	}
	return SENoCurvature
}

// measure fills the errors, the rate and the tolerance table of out from
// the continuation.
func (a *AuditWorkspace) measure(e Estimator, res *Result, out *Audit) {
	if out.End == ContinuationFailed {
		out.Rate = a.rate(e.Method == MethodNewton)
		return
	}
	p := len(out.Fixed)
	out.MaxErrorSE = 0
	for j := range out.Fixed {
		out.Error[j] = math.Abs(res.Coefficients[j] - out.Fixed[j])
		out.SE[j] = a.se[j]
		out.ErrorSE[j] = out.Error[j] / a.se[j]
		out.MaxErrorSE = auditMax(out.MaxErrorSE, out.ErrorSE[j])
	}
	out.Rate = a.rate(e.Method == MethodNewton)
	if !out.Traced {
		return
	}
	for i := range out.Tolerances {
		row := &out.Tolerances[i]
		if a.tolIter[i] == 0 {
			continue
		}
		row.Reached, row.Iterations, row.MaxErrorSE = true, a.tolIter[i], 0
		beta := a.tolBeta[i*p : (i+1)*p]
		for j := range beta {
			row.MaxErrorSE = auditMax(row.MaxErrorSE, math.Abs(beta[j]-out.Fixed[j])/a.se[j])
		}
	}
}

// auditMax is max that propagates NaN.
func auditMax(a, b float64) float64 {
	if math.IsNaN(a) || math.IsNaN(b) {
		return math.NaN()
	}
	return math.Max(a, b)
}

// rate estimates the convergence rate from the history by the rule
// documented on Rate.
func (a *AuditWorkspace) rate(newton bool) Rate {
	skip := 0
	if a.fitSteps > 0 {
		skip = RateSkip
	}
	used := func(k int) bool {
		return k >= skip && k < len(a.changes) && a.changes[k] >= RateFloor && (!newton || a.pure[k])
	}
	if newton {
		r := Rate{Kind: RateOrder, Value: math.NaN()}
		for k := 0; k+1 < len(a.changes); k++ {
			if !used(k) || !used(k+1) || a.changes[k] >= 1 {
				continue
			}
			r.Used++
			r.Value = math.Log(a.changes[k+1]) / math.Log(a.changes[k])
			r.Change = a.changes[k]
		}
		if r.Used == 0 {
			r.Kind = RateNone
		}
		return r
	}
	a.ratios = a.ratios[:0]
	first := math.NaN() // Δ_k of the first ratio of the tail
	for k := 0; k+1 < len(a.changes); k++ {
		if used(k) && used(k+1) {
			a.ratios = append(a.ratios, a.changes[k+1]/a.changes[k])
		}
	}
	m := len(a.ratios)
	if m == 0 {
		return Rate{Value: math.NaN()}
	}
	for k, i := 0, 0; k+1 < len(a.changes); k++ {
		if used(k) && used(k+1) {
			if i == m/2 {
				first = a.changes[k]
				break
			}
			i++
		}
	}
	tail := a.ratios[m/2:]
	slices.Sort(tail)
	h := len(tail)
	med := tail[h/2]
	if h%2 == 0 {
		med = (tail[h/2-1] + tail[h/2]) / 2
	}
	return Rate{Kind: RateLinear, Value: med, Used: m, Change: first}
}
