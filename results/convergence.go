package results

// The solver study: how far each fit's stopping rule left the estimate from
// the fixed point of its iteration, how fast the iteration converged, what
// each change tolerance would cost, and, for a redescending psi, whether
// the root reached depends on the start. The harness fills these fields
// only for estimators audited (solver-audit: true, or run --audit-solvers)
// or searched for roots (roots: true); otherwise they are absent, so
// results without the study are unchanged.

// StopErrorThreshold is the stopping-rule error, in standard errors of the
// coefficient, above which a fit counts as stopped too early: one
// hundredth of the estimate's own uncertainty.
const StopErrorThreshold = 0.01

// StopError summarises the stopping-rule error of one estimator in one
// cell: per audited fit, the distance |β − β*| of the returned estimate
// from the fixed point β* of the same iteration at machine precision, in
// units of each coefficient's estimated standard error at β*, on its worst
// coefficient.
type StopError struct {
	// Audited is the number of fits whose error is known in standard
	// errors; Median, Max and Over are over these.
	Audited int64 `json:"audited"`
	// Direct is set when the method has no stopping rule on an estimating
	// equation (least squares, S, LTS, LAD): its error is exactly 0.
	Direct bool `json:"direct,omitempty"`
	// Median and Max are the median and the largest error over the
	// audited fits, in standard errors (worst coefficient).
	Median Num `json:"median"`
	Max    Num `json:"max"`
	// Over is the fraction of audited fits whose error exceeds
	// StopErrorThreshold standard errors, OverCount their number.
	Over      Num   `json:"over_0.01_se"`
	OverCount int64 `json:"over_count"`
	// Undefined counts fits that were continued but whose standard errors
	// are not defined (a psi with jumps, no curvature, n = p) or whose
	// continuation failed; UndefinedReason names the commonest reason.
	Undefined       int64  `json:"undefined,omitempty"`
	UndefinedReason string `json:"undefined_reason,omitempty"`
	// NotAudited counts failed fits, which have no estimate to continue.
	NotAudited int64 `json:"not_audited,omitempty"`
	// AtCap counts continuations that reached their iteration cap still
	// making progress (their fixed point is the last iterate).
	AtCap int64 `json:"continuation_at_cap,omitempty"`
	// Coefficients gives the median and largest error of each coefficient.
	Coefficients []CoefficientStopError `json:"coefficients,omitempty"`
}

// CoefficientStopError is the stopping-rule error of one coefficient, in
// its standard errors.
type CoefficientStopError struct {
	Name   string `json:"name"`
	Median Num    `json:"median"`
	Max    Num    `json:"max"`
}

// ObservedRate is the median observed convergence rate of an estimator's
// audited fits (see estimators.Rate).
type ObservedRate struct {
	// Kind is "linear" (IRLS, MM's M-step: the median ratio of successive
	// coefficient changes, in (0, 1); smaller is faster) or "order"
	// (Newton: q in Δ_{k+1} ≈ C Δ_k^q, about 2 near the root with a smooth
	// psi and a fixed scale).
	Kind string `json:"kind"`
	// Median is the median over the fits with a rate, Fits their number.
	Median Num   `json:"median"`
	Fits   int64 `json:"fits"`
	// Note explains a rate that differs from the method's textbook rate.
	Note string `json:"note,omitempty"`
}

// ToleranceCost is what one change tolerance would have cost and left on
// the audited fits: from each fit's own iterations followed by its
// continuation, the first iteration whose relative change ‖Δβ‖/‖β‖ is at
// most Tolerance, and that iterate's distance from the fixed point.
type ToleranceCost struct {
	Tolerance float64 `json:"tolerance"`
	// Reached is the number of fits whose iteration got a change this
	// small; the medians are over them.
	Reached          int64 `json:"reached"`
	MedianIterations Num   `json:"median_iterations"`
	// MedianErrorSE and MaxErrorSE are the error left at that iterate, in
	// standard errors (worst coefficient); Over is the fraction of the
	// fits reached whose error exceeds StopErrorThreshold.
	MedianErrorSE Num `json:"median_error_se"`
	MaxErrorSE    Num `json:"max_error_se"`
	Over          Num `json:"over_0.01_se"`
}

// RootStudy summarises the root searches of an estimator with a
// redescending psi: every replicate refitted by IRLS at one common scale
// (the S-scale) from several starts (estimators.FindRoots).
type RootStudy struct {
	// Searched is the number of replicates searched; Failed those where
	// no search could run (no usable S-scale, for example an exact fit).
	Searched int64 `json:"searched"`
	Failed   int64 `json:"failed,omitempty"`
	// Multiple is the fraction of searched replicates whose converged
	// refits reached more than one root (farther apart than 1e-6
	// relative), with its Wilson 95% interval; MultipleCount their number.
	Multiple      Rate  `json:"multiple"`
	MultipleCount int64 `json:"multiple_count"`
	// Starts gives each start's outcome, in the order ls, lad,
	// s-estimate, truth.
	Starts []RootStart `json:"starts"`
}

// RootStart is the outcome of the refits from one start.
type RootStart struct {
	// Start names the start: ls, lad, s-estimate or truth.
	Start string `json:"start"`
	// Converged counts the refits that converged; Failures the others by
	// status (zero-weights: at the common scale every residual of the
	// start lies beyond the psi's rejection point).
	Converged int64         `json:"converged"`
	Failures  []StatusCount `json:"failures,omitempty"`
	// Best counts the replicates with several roots where this start
	// reached the root with the smallest objective Σ rho(r_i/σ) (several
	// starts can reach it), BestRate their fraction of the replicates with
	// several roots (null when there are none).
	Best     int64 `json:"best"`
	BestRate Num   `json:"best_rate"`
	// Bias is, per coefficient, the mean of root − true coefficient over
	// the converged refits, with its MCSE.
	Bias []Measure `json:"bias"`
}
