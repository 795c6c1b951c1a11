package results

import (
	"fmt"
	"math"
	"sort"
	"strings"
)

// AuditCheck names a count of the solver study that Compare tests.
type AuditCheck int

const (
	// StoppedEarly counts the audited fits whose stopping rule left the
	// estimate more than StopErrorThreshold standard errors from the fixed
	// point of its iteration (StopError.OverCount of StopError.Audited).
	StoppedEarly AuditCheck = iota
	// SeveralRoots counts the searched replicates whose refits reached
	// more than one root (RootStudy.MultipleCount of RootStudy.Searched).
	SeveralRoots
)

// String returns the check's name as written in JSON.
func (k AuditCheck) String() string {
	switch k {
	case StoppedEarly:
		return "stopped-early"
	case SeveralRoots:
		return "several-roots"
	}
	return fmt.Sprintf("AuditCheck(%d)", int(k))
}

// MarshalText encodes the check by name.
func (k AuditCheck) MarshalText() ([]byte, error) { return []byte(k.String()), nil }

// UnmarshalText decodes a check's name.
func (k *AuditCheck) UnmarshalText(b []byte) error {
	for _, c := range []AuditCheck{StoppedEarly, SeveralRoots} {
		if c.String() == string(b) {
			*k = c
			return nil
		}
	}
	return fmt.Errorf("unknown audit check %q (want stopped-early or several-roots)", b)
}

// what says in words what the check counts, for tables.
func (k AuditCheck) what() string {
	if k == StoppedEarly {
		return fmt.Sprintf("fits stopped > %g SE early", StopErrorThreshold)
	}
	return "replicates with several roots"
}

// AuditTest compares one count of the solver study of one estimator in one
// cell between the runs.
type AuditTest struct {
	Cell      int        `json:"cell"`               // the baseline cell's index, from 0
	Settings  []Setting  `json:"settings,omitempty"` // the cell's swept values
	Estimator string     `json:"estimator"`          // the estimator's label
	Check     AuditCheck `json:"check"`              // what is counted
	// Baseline of BaselineOf and Candidate of CandidateOf are the counts:
	// fits stopped early of the fits audited, or replicates with several
	// roots of those searched.
	Baseline    int64 `json:"baseline"`
	BaselineOf  int64 `json:"baseline_of"`
	Candidate   int64 `json:"candidate"`
	CandidateOf int64 `json:"candidate_of"`
	// BaselineMedian and CandidateMedian are, for StoppedEarly, the
	// median stopping-rule error in standard errors; NaN otherwise.
	BaselineMedian  Float `json:"baseline_median"`
	CandidateMedian Float `json:"candidate_median"`
	// P is Fisher's exact test's two-sided p-value.
	P Float `json:"p"`
	// Flagged is set when Holm's procedure rejects at AuditReport.Alpha.
	Flagged bool `json:"flagged"`
}

// Rise reports whether the count's rate is higher in the candidate.
func (a AuditTest) Rise() bool { return a.Candidate*a.BaselineOf > a.Baseline*a.CandidateOf }

// informative reports whether the test could reject (see canDiffer).
func (a AuditTest) informative() bool {
	return canDiffer(a.Baseline, a.BaselineOf, a.Candidate, a.CandidateOf)
}

// AuditReport tests the solver studies of estimators audited (or searched
// for roots) in both runs, per cell × estimator × check, by Fisher's exact
// test with Holm's procedure across them at CompareOptions.FailureAlpha.
// In paired mode the runs fit the same datasets, so the test, which
// assumes independent runs, is conservative.
type AuditReport struct {
	// Alpha is the family-wise level of Holm's procedure.
	Alpha float64 `json:"alpha"`
	// Tested counts the tests that could reject: fits in both runs, and
	// counted in some but not all of them.
	Tested int `json:"tested"`
	// Tests holds every test: flagged rises first, then other flagged
	// changes, then by p-value.
	Tests []AuditTest `json:"tests"`
}

// auditTests pairs the solver studies of the estimators of paired cells;
// oneSided names the estimators (with a cell) audited in one run only.
func auditTests(pairs []cellPair) (tests []AuditTest, oneSided []string) {
	seen := map[string]bool{}
	side := func(label string, cell int, check AuditCheck, which string) {
		if key := label + "\x00" + check.String(); !seen[key] {
			seen[key] = true
			oneSided = append(oneSided, fmt.Sprintf("%s of %s (cell %d and perhaps others) only in the %s", check.noun(), label, cell, which))
		}
	}
	for cell, e := range estimatorPairs(pairs) {
		be, ce := e[0], e[1]
		t := AuditTest{Cell: cell.Index, Settings: cell.Settings, Estimator: be.Label}
		b, c := be.Convergence.StopError, ce.Convergence.StopError
		switch {
		case b != nil && c != nil && !b.Direct && !c.Direct:
			s := t
			s.Check = StoppedEarly
			s.Baseline, s.BaselineOf, s.Candidate, s.CandidateOf = b.OverCount, b.Audited, c.OverCount, c.Audited
			s.BaselineMedian, s.CandidateMedian = Float(b.Median), Float(c.Median)
			tests = append(tests, s)
		case b != nil && c == nil:
			side(be.Label, t.Cell, StoppedEarly, "baseline")
		case b == nil && c != nil:
			side(be.Label, t.Cell, StoppedEarly, "candidate")
		}
		br, cr := be.Convergence.Roots, ce.Convergence.Roots
		switch {
		case br != nil && cr != nil:
			s := t
			s.Check = SeveralRoots
			s.Baseline, s.BaselineOf, s.Candidate, s.CandidateOf = br.MultipleCount, br.Searched, cr.MultipleCount, cr.Searched
			s.BaselineMedian, s.CandidateMedian = Float(math.NaN()), Float(math.NaN())
			tests = append(tests, s)
		case br != nil:
			side(be.Label, t.Cell, SeveralRoots, "baseline")
		case cr != nil:
			side(be.Label, t.Cell, SeveralRoots, "candidate")
		}
	}
	for i := range tests {
		a := &tests[i]
		a.P = Float(FisherExactP(a.Baseline, a.BaselineOf, a.Candidate, a.CandidateOf))
	}
	return tests, oneSided
}

// noun names what a run records for the check, for notes.
func (k AuditCheck) noun() string {
	if k == StoppedEarly {
		return "the solver audit (--audit-solvers)"
	}
	return "the root search (roots: true)"
}

// compareAudits fills c.Audit from the paired cells, or leaves it nil when
// no estimator has a solver study in both runs; studies in one run only
// are noted.
func (c *Comparison) compareAudits(pairs []cellPair, alpha float64) {
	tests, oneSided := auditTests(pairs)
	for _, s := range oneSided {
		c.Notes = append(c.Notes, s+": not compared")
	}
	if len(tests) == 0 {
		return
	}
	a := &AuditReport{Alpha: alpha, Tests: tests}
	a.Tested = holmStepDown(len(tests), func(i int) float64 { return float64(tests[i].P) }, func(i int) bool { return tests[i].informative() },
		func(i int) { tests[i].Flagged = true }, alpha)
	sort.SliceStable(tests, func(i, j int) bool {
		x, y := tests[i], tests[j]
		if rx, ry := x.Flagged && x.Rise(), y.Flagged && y.Rise(); rx != ry {
			return rx
		}
		if x.Flagged != y.Flagged {
			return x.Flagged
		}
		return x.P < y.P
	})
	c.Audit = a
}

// auditFlagged reports whether a solver-study count changed.
func (c *Comparison) auditFlagged() bool {
	if c.Audit == nil {
		return false
	}
	for _, a := range c.Audit.Tests {
		if a.Flagged {
			return true
		}
	}
	return false
}

// auditVerdict returns the verdict's phrases for the flagged audit tests:
// rises by check (in capitals, as failures), then the falls.
func (c *Comparison) auditVerdict() []string {
	if c.Audit == nil {
		return nil
	}
	var out []string
	for _, check := range []AuditCheck{StoppedEarly, SeveralRoots} {
		var r rises
		falls := 0
		for _, a := range c.Audit.Tests {
			switch {
			case !a.Flagged || a.Check != check:
			case a.Rise():
				r.add(a.Estimator, a.Cell, a.Candidate-a.Baseline)
			default:
				falls++
			}
		}
		if len(r.order) > 0 {
			out = append(out, "MORE "+strings.ToUpper(check.what())+" ("+r.phrase("")+")")
		}
		if falls > 0 {
			out = append(out, fmt.Sprintf("fewer %s in %d cell × estimator", check.what(), falls))
		}
	}
	return out
}

// auditRows returns the audit tests worth a row: those that counted
// something in either run.
func (c *Comparison) auditRows() []AuditTest {
	return rowsWhere(c.Audit.Tests, func(a AuditTest) bool { return a.Baseline+a.Candidate > 0 })
}

// auditNote is the verdict of one audit test for a table.
func auditNote(a AuditTest) string { return testNote(a.Flagged, a.Rise(), "") }

// auditCells returns a row's before and after columns: the counts and,
// for StoppedEarly, the median error in standard errors.
func auditCells(a AuditTest) (string, string) {
	cell := func(k, of int64, med Float) string {
		s := fmt.Sprintf("%d/%d", k, of)
		if a.Check == StoppedEarly {
			s += " (median " + FormatSE(Num(med)) + " SE)"
		}
		return s
	}
	return cell(a.Baseline, a.BaselineOf, a.BaselineMedian), cell(a.Candidate, a.CandidateOf, a.CandidateMedian)
}

// auditDetail describes the audit tests for the section's heading.
func (c *Comparison) auditDetail() string {
	return fmt.Sprintf("per cell × estimator (Fisher's exact test; Holm at family-wise level %g over the %d tests that could reject)", c.Audit.Alpha, c.Audit.Tested)
}

// auditNone says why the audit section has no rows.
const auditNone = "no audited fit stopped early and no root search found several roots, in either run"

// auditJUnit returns the failure text of a flagged audit test.
func auditJUnit(a AuditTest) string {
	before, after := auditCells(a)
	return fmt.Sprintf("cell %d %s %s: %s → %s (%s, p %.2g)", a.Cell, a.Estimator, a.Check.what(), before, after, auditNote(a), float64(a.P))
}
