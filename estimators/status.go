package estimators

// Status says how a fit ended: by which stopping rule, or by which failure.
// A fit that fails still returns a Result; errors are reserved for misuse
// (mismatched dimensions, non-finite data).
type Status int

const (
	// NotRun is the zero Status: no fit has been made into this Result.
	NotRun Status = iota
	// Solved: a direct method (least squares) computed the solution.
	Solved
	// ConvergedChange: the relative change in the coefficients fell below
	// its tolerance.
	ConvergedChange
	// ConvergedEquations: the norm of the estimating equations fell below
	// its tolerance.
	ConvergedEquations
	// ConvergedAll: every active stopping rule held at once (when the
	// settings require all rules).
	ConvergedAll
	// ExactFit: every residual is zero, so the scale is zero and the
	// least-squares fit is the M-estimate.
	ExactFit
	// IterationLimit: the iteration cap was reached before any stopping
	// rule held. The coefficients are the last iterate.
	IterationLimit
	// SingularDesign: the (weighted) design matrix is numerically rank
	// deficient, so a least-squares step has no unique solution.
	SingularDesign
	// ZeroWeights: every IRLS weight is zero; a redescending psi rejected
	// every observation.
	ZeroWeights
	// ZeroScale: the residual scale estimate is zero while some residuals
	// are not (more than half the observations are fitted exactly), so
	// residuals cannot be standardised.
	ZeroScale
	// NonFinite: an iterate, the scale or the objective became NaN or
	// infinite.
	NonFinite
	// Diverged: the coefficients grew beyond 1e12 times the size of the
	// start.
	Diverged
	// NoDescent: Newton's method found no step, after halving and an IRLS
	// fallback, that did not increase the objective.
	NoDescent
	// ElementalFailure: a resampling estimator found no elemental subset
	// of full rank among the subsets it drew.
	ElementalFailure
	// ExternalOK: an outside estimator (a program of the user's, see
	// package external) replied with p finite coefficients.
	ExternalOK
	// ExternalNotConverged: an outside estimator said that its fit did
	// not converge.
	ExternalNotConverged
	// ExternalProgramError: an outside estimator replied with an error.
	ExternalProgramError
	// ExternalBadReply: an outside estimator's reply was not a reply of
	// the protocol; the program was restarted.
	ExternalBadReply
	// ExternalWrongLength: an outside estimator replied with a number of
	// coefficients other than p.
	ExternalWrongLength
	// ExternalNonFinite: an outside estimator replied with a coefficient
	// or scale that is not finite.
	ExternalNonFinite
	// ExternalTimeout: an outside estimator did not reply within its
	// timeout; the program was killed and restarted.
	ExternalTimeout
	// ExternalExited: an outside estimator's program ended before it
	// replied; it was restarted.
	ExternalExited
	// ExternalStartFailed: an outside estimator's program could not be
	// started again after a failure.
	ExternalStartFailed
	// ExternalBadRequest: the dataset could not be sent to an outside
	// estimator (a value of it is not finite).
	ExternalBadRequest
	numStatuses
)

// NumStatuses is the number of Status values, NotRun included: every
// Status s satisfies 0 ≤ s < NumStatuses, so it can index an array.
const NumStatuses = int(numStatuses)

// String returns the status name used in results files, for example
// "converged-change".
func (s Status) String() string {
	switch s {
	case NotRun:
		return "not-run"
	case Solved:
		return "solved"
	case ConvergedChange:
		return "converged-change"
	case ConvergedEquations:
		return "converged-equations"
	case ConvergedAll:
		return "converged-all"
	case ExactFit:
		return "exact-fit"
	case IterationLimit:
		return "iteration-limit"
	case SingularDesign:
		return "singular-design"
	case ZeroWeights:
		return "zero-weights"
	case ZeroScale:
		return "zero-scale"
	case NonFinite:
		return "non-finite"
	case Diverged:
		return "diverged"
	case NoDescent:
		return "no-descent"
	case ElementalFailure:
		return "elemental-failure"
	case ExternalOK:
		return "external-ok"
	case ExternalNotConverged:
		return "external-not-converged"
	case ExternalProgramError:
		return "external-program-error"
	case ExternalBadReply:
		return "external-bad-reply"
	case ExternalWrongLength:
		return "external-wrong-length"
	case ExternalNonFinite:
		return "external-non-finite"
	case ExternalTimeout:
		return "external-timeout"
	case ExternalExited:
		return "external-exited"
	case ExternalStartFailed:
		return "external-start-failed"
	case ExternalBadRequest:
		return "external-bad-request"
	}
	return "unknown-status"
}

// Converged reports whether the fit ended with a usable solution: solved
// directly, converged by a stopping rule, or an exact fit.
func (s Status) Converged() bool {
	switch s {
	case Solved, ConvergedChange, ConvergedEquations, ConvergedAll, ExactFit, ExternalOK:
		return true
	}
	return false
}

// Statuses returns every Status a fit can end with, in declaration order.
func Statuses() []Status {
	out := make([]Status, 0, numStatuses-1)
	for s := Solved; s < numStatuses; s++ {
		out = append(out, s)
	}
	return out
}

// ParseStatus returns the Status whose String is name.
func ParseStatus(name string) (Status, bool) {
	for s := NotRun; s < numStatuses; s++ {
		if s.String() == name {
			return s, true
		}
	}
	return NotRun, false
}
