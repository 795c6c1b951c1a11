package external

import (
	"fmt"
	"strconv"
)

// Status says how one fit by an outside program ended. The zero value is
// OK. Every status other than OK marks the fit as failed; the harness
// counts statuses and never parses messages.
type Status uint8

const (
	// OK: the program replied with p finite coefficients and did not say
	// that it failed to converge.
	OK Status = iota
	// NotConverged: the reply was valid but said "converged": false. The
	// coefficients it gave are kept in the Reply.
	NotConverged
	// ProgramError: the program replied with an "error" message.
	ProgramError
	// BadReply: the reply line was not a JSON object of the protocol (a
	// syntax error, a field of the wrong type, no coefficients, a line
	// longer than MaxReplyBytes). The program is restarted, because its
	// output can no longer be trusted to stay in step with the requests.
	BadReply
	// WrongLength: the reply had a number of coefficients other than p.
	WrongLength
	// NonFinite: a coefficient or the scale was NaN, infinite (NaN,
	// Infinity, a number too large for a float64, or one of the strings
	// "NaN", "NA", "Inf", "-Inf", "Infinity", "-Infinity") or null.
	NonFinite
	// Timeout: no reply line came within the timeout. The program is
	// killed and restarted.
	Timeout
	// Exited: the program ended, or closed its standard output, before
	// replying. It is restarted for the next request.
	Exited
	// StartFailed: the program could not be started again after an
	// earlier failure.
	StartFailed
	// BadRequest: the request itself could not be sent (no rows, a
	// number of names other than the columns of X, a length of Y other
	// than its rows, or a value of X or Y that is not finite). It is
	// never written to the program.
	BadRequest
	// Closed: the Process was closed before the fit was done.
	Closed
)

// Statuses returns every status, in the order of their values.
func Statuses() []Status {
	return []Status{OK, NotConverged, ProgramError, BadReply, WrongLength, NonFinite, Timeout, Exited, StartFailed, BadRequest, Closed}
}

// String returns the status's name: "ok", "not-converged",
// "program-error", "bad-reply", "wrong-length", "non-finite", "timeout",
// "exited", "start-failed", "bad-request" or "closed".
func (s Status) String() string {
	switch s {
	case OK:
		return "ok"
	case NotConverged:
		return "not-converged"
	case ProgramError:
		return "program-error"
	case BadReply:
		return "bad-reply"
	case WrongLength:
		return "wrong-length"
	case NonFinite:
		return "non-finite"
	case Timeout:
		return "timeout"
	case Exited:
		return "exited"
	case StartFailed:
		return "start-failed"
	case BadRequest:
		return "bad-request"
	case Closed:
		return "closed"
	}
	return "unknown-status(" + strconv.Itoa(int(s)) + ")"
}

// restarts reports whether a fit ending with s leaves the program in a
// state that cannot be trusted, so that it must be stopped and started
// again before the next request.
func (s Status) restarts() bool {
	switch s {
	case BadReply, Timeout, Exited, Closed:
		return true
	}
	return false
}

// FitError describes a failed fit: which estimator, which replicate, the
// status and what happened. Reply.Err holds one for every status but OK.
type FitError struct {
	// Label is the estimator's label (Command.Label).
	Label string
	// Replicate is the request's Replicate.
	Replicate int
	// Status is how the fit ended.
	Status Status
	// Detail says what happened, in words.
	Detail string
	// Err is the underlying cause, if any (an I/O error, the program's
	// exit status); nil otherwise.
	Err error
}

// Error returns a message naming the estimator, the replicate, the status
// and the detail, such as
//
//	external estimator "mine", replicate 17: timeout: no reply within 1m0s
func (e *FitError) Error() string {
	msg := fmt.Sprintf("external estimator %q, replicate %d: %s: %s", e.Label, e.Replicate, e.Status, e.Detail)
	if e.Err != nil {
		msg += ": " + e.Err.Error()
	}
	return msg
}

// Unwrap returns the underlying cause.
func (e *FitError) Unwrap() error { return e.Err }
