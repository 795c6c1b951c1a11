package scenarios

import (
	"strings"
	"time"

	"github.com/rhomark/rhomark/psi"
)

// The methods of estimators that rhomark does not fit itself.
const (
	// MethodExternal is the method of an estimator fitted by a program of
	// the user's (EstimatorSpec.Command), through package external.
	MethodExternal = "external"
	// MethodGo is the method of an estimator that a Go program registers
	// with the harness under the estimator's label.
	MethodGo = "go"
)

// DefaultExternalTimeout is an external estimator's timeout per fit when
// its entry gives none.
const DefaultExternalTimeout = "60s"

// Outside reports whether the estimator is fitted outside rhomark's own
// methods: by a program (external) or by a Go estimator of the caller's
// (go).
func (e EstimatorSpec) Outside() bool { return e.Method == MethodExternal || e.Method == MethodGo }

// TimeoutDuration returns the external estimator's timeout per fit: its
// Timeout parsed as a duration. An empty Timeout, and one that is not a
// positive duration (which validation refuses, so only an EstimatorSpec
// built by hand can hold one), give DefaultExternalTimeout.
func (e EstimatorSpec) TimeoutDuration() time.Duration {
	if d, err := time.ParseDuration(e.Timeout); err == nil && d > 0 {
		return d
	}
	d, _ := time.ParseDuration(DefaultExternalTimeout)
	return d
}

// HasCommand reports whether any estimator of the study, in any cell, runs
// a program.
func (st *Study) HasCommand() bool {
	for _, c := range st.Cells {
		for _, e := range c.Scenario.Estimators {
			if len(e.Command) > 0 {
				return true
			}
		}
	}
	return false
}

// fillOutsideDefaults fills the tuning constants of a declared psi family
// and the timeout of an external estimator.
func (e *EstimatorSpec) fillOutsideDefaults() {
	if !e.Outside() {
		return
	}
	if f, ok := psi.LookupFamily(e.Psi.Family); ok && len(e.Tuning) == 0 && e.Psi.Custom == nil {
		e.Tuning = append(Numbers(nil), f.Defaults...)
	}
	if e.Method == MethodExternal && e.Timeout == "" {
		e.Timeout = DefaultExternalTimeout
	}
}

// validateOutside checks the keys of estimator e at path that only
// outside estimators take (command, timeout) and, for an outside
// estimator, the rest of its entry. It reports whether the estimator is an
// outside one, whose checks are then complete.
func (s *Scenario) validateOutside(c checker, path string, e *EstimatorSpec) bool {
	// refuse reports the keys only method external takes, given to
	// another method.
	refuse := func(why string, args ...any) {
		for _, key := range []string{"command", "timeout"} {
			if c.d.given(path + "." + key) {
				c.fail(path+"."+key, why, args...)
			}
		}
	}
	if !e.Outside() {
		refuse("is used only by method %s (a program of your own), not by method %s", MethodExternal, e.Method)
		return false
	}
	for _, key := range []string{"scale", "start", "stop", "resampling"} {
		if c.d.given(path + "." + key) {
			c.fail(path+"."+key, "is not used by method %s: the estimator's own code decides it", e.Method)
		}
	}
	if e.Method == MethodGo {
		refuse("is used only by method %s; a go estimator is registered by its label in the Go program that runs the scenario", MethodExternal)
	} else {
		switch {
		case len(e.Command) == 0:
			c.fail(path+".command", "missing: method %s needs the program to run and its arguments, a list such as [python3, fit_mine.py, --k, \"1.2\"]", MethodExternal)
		case strings.TrimSpace(e.Command[0]) == "":
			c.fail(path+".command", "the program (the list's first item) is empty; name a program such as python3 or ./fit_mine")
		}
		if d, err := time.ParseDuration(e.Timeout); err != nil || d <= 0 {
			c.fail(path+".timeout", "want a positive duration such as 60s, 2m or 1m30s, got %q", e.Timeout)
		}
	}
	// The psi is optional here: it only declares what the estimator uses.
	if e.Psi.IsZero() {
		if len(e.Tuning) > 0 {
			c.fail(path+".tuning", "is used only with a declared psi (psi: huber, say)")
		}
		return true
	}
	validatePsi(c, path, e)
	return true
}
