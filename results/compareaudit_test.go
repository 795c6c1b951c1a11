package results

import (
	"bytes"
	"encoding/json"
	"strings"
	"testing"
)

// auditRun is a one-cell run of two estimators: huber with a solver audit
// (over of 200 fits stopped early; none when over < 0, direct when over
// is -2) and bisquare with a root search (roots of 200 replicates with
// several roots; none when roots < 0).
func auditRun(over, roots int64) *Results {
	h := Estimator{Label: "huber", Method: "irls", Psi: "huber"}
	h.Convergence.Fits, h.Convergence.Converged = 200, 200
	switch {
	case over >= 0:
		h.Convergence.StopError = &StopError{Audited: 200, OverCount: over, Median: 1e-6, Max: 0.2}
	case over == -2:
		h.Convergence.StopError = &StopError{Audited: 200, Direct: true}
	}
	b := Estimator{Label: "bisquare", Method: "irls", Psi: "bisquare"}
	b.Convergence.Fits, b.Convergence.Converged = 200, 200
	if roots >= 0 {
		b.Convergence.Roots = &RootStudy{Searched: 200, MultipleCount: roots}
	}
	return &Results{Schema: SchemaVersion, Scenario: ScenarioInfo{Name: "bench", Normalised: json.RawMessage(`{"name":"bench"}`)},
		Seed: 7, Replicates: 200, Complete: true, Reference: "huber",
		Cells: []Cell{{Index: 0, Replicates: 200, Estimators: []Estimator{h, b}}}}
}

// TestCompareAudits: the counts of the solver studies are compared by
// Fisher's exact test where both runs have them, flagged changes enter the
// verdict (a rise in capitals, as failures do) and the exit status, and a
// study in one run only is noted instead.
func TestCompareAudits(t *testing.T) {
	for _, tc := range []struct {
		name               string
		base, cand         *Results
		tests              int    // audit tests made; -1 for no audit section
		flagged            bool   // whether the comparison is flagged
		verdict, note, row string // in the verdict, a note and the text output
	}{
		{"a rise of fits stopped early", auditRun(0, 5), auditRun(12, 5), 2, true,
			"MORE FITS STOPPED > 0.01 SE EARLY (huber: +12 in cell 0)", "", "0/200 (median 1e-06 SE)"},
		{"a fall of fits stopped early", auditRun(12, 5), auditRun(0, 5), 2, true,
			"fewer fits stopped > 0.01 SE early in 1 cell × estimator", "", "fewer"},
		{"a rise of several roots", auditRun(0, 0), auditRun(0, 15), 2, true,
			"MORE REPLICATES WITH SEVERAL ROOTS (bisquare: +15 in cell 0)", "", "replicates with several roots"},
		{"equal counts", auditRun(3, 40), auditRun(3, 40), 2, false, "unchanged", "", "not significant"},
		{"no counts in either run", auditRun(0, 0), auditRun(0, 0), 2, false, "unchanged", "", auditNone},
		{"audited in the baseline only", auditRun(12, -1), auditRun(-1, -1), -1, false, "unchanged",
			"the solver audit (--audit-solvers) of huber (cell 0 and perhaps others) only in the baseline: not compared", ""},
		{"a root search in the candidate only", auditRun(-1, -1), auditRun(-1, 9), -1, false, "unchanged",
			"the root search (roots: true) of bisquare (cell 0 and perhaps others) only in the candidate: not compared", ""},
		{"a direct method has no stopping rule to test", auditRun(-2, -1), auditRun(-2, -1), -1, false, "unchanged", "", ""},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c, err := Compare(tc.base, tc.cand, nil, nil, CompareOptions{})
			if err != nil {
				t.Fatal(err)
			}
			switch {
			case tc.tests < 0 && c.Audit != nil:
				t.Errorf("an audit section without studies in both runs: %+v", c.Audit)
			case tc.tests >= 0 && (c.Audit == nil || len(c.Audit.Tests) != tc.tests):
				t.Fatalf("audit %+v, want %d tests", c.Audit, tc.tests)
			}
			if c.Flagged() != tc.flagged {
				t.Errorf("Flagged() = %v, want %v", c.Flagged(), tc.flagged)
			}
			if v := c.verdict(); !strings.Contains(v, tc.verdict) {
				t.Errorf("verdict %q, want it to contain %q", v, tc.verdict)
			}
			if tc.note != "" && !strings.Contains(strings.Join(c.Notes, "\n"), tc.note) {
				t.Errorf("notes %q, want %q", c.Notes, tc.note)
			}
			var text, md bytes.Buffer
			if err := WriteComparison(&text, c); err != nil {
				t.Fatal(err)
			}
			if err := WriteComparisonMarkdown(&md, c); err != nil {
				t.Fatal(err)
			}
			if tc.row != "" && !strings.Contains(text.String(), tc.row) {
				t.Errorf("the text output lacks %q:\n%s", tc.row, text.String())
			}
			if has := strings.Contains(md.String(), "**Solver studies**"); has != (c.Audit != nil) {
				t.Errorf("the Markdown has a solver-studies section: %v, want %v:\n%s", has, c.Audit != nil, md.String())
			}
		})
	}
}

// TestCompareAuditsHolm: the audit tests are one family under Holm's
// procedure; a change significant alone (p about 0.03 by Fisher's exact
// test) is not flagged among several tests that could reject, and is
// among tests that could not.
func TestCompareAuditsHolm(t *testing.T) {
	p := FisherExactP(0, 200, 6, 200)
	if !(p < 0.05 && p > 0.05/2) {
		t.Fatalf("the test's premise: Fisher's p for 0/200 vs 6/200 is %g, want in (0.025, 0.05)", p)
	}
	alone, err := Compare(auditRun(0, -1), auditRun(6, -1), nil, nil, CompareOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if !alone.Audit.Tests[0].Flagged || alone.Audit.Tested != 1 {
		t.Errorf("alone: %+v, want flagged in a family of 1", alone.Audit)
	}
	two, err := Compare(auditRun(0, 3), auditRun(6, 3), nil, nil, CompareOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if two.Audit.Tested != 2 || two.Flagged() {
		t.Errorf("with a second test that could reject: %+v, want unflagged in a family of 2", two.Audit)
	}
	// Every replicate with several roots in both runs: p is 1 whatever
	// happens, so that test cannot reject and must not join the family.
	all, err := Compare(auditRun(0, 200), auditRun(6, 200), nil, nil, CompareOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if all.Audit.Tested != 1 || !all.Flagged() {
		t.Errorf("with a second test that cannot reject: %+v, want flagged in a family of 1", all.Audit)
	}
}

// TestAuditCheckText: the checks' names round-trip and an unknown one is
// refused naming the valid ones.
func TestAuditCheckText(t *testing.T) {
	for _, k := range []AuditCheck{StoppedEarly, SeveralRoots} {
		b, _ := k.MarshalText()
		var back AuditCheck
		if err := back.UnmarshalText(b); err != nil || back != k {
			t.Errorf("%v: back %v, %v", k, back, err)
		}
	}
	var k AuditCheck
	if err := k.UnmarshalText([]byte("late")); err == nil || !strings.Contains(err.Error(), "stopped-early or several-roots") {
		t.Errorf("an unknown check: %v", err)
	}
}
