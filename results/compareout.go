package results

import (
	"encoding/xml"
	"fmt"
	"io"
	"maps"
	"math"
	"slices"
	"strings"
)

// compareVerdict is the one-line outcome of a comparison.
func (c *Comparison) verdict() string {
	switch {
	case c.Flagged():
		return "CHANGED"
	case c.Paired != nil:
		return "unchanged: paired replicates agree to the tolerance, statuses identical"
	}
	return "unchanged within Monte Carlo error"
}

// differenceWhere names a difference's place.
func differenceWhere(d Difference) string {
	s := fmt.Sprintf("cell %d %s", d.Cell, d.Estimator)
	if d.Coefficient != "" {
		s += " " + d.Coefficient
	}
	return s + " " + d.Measure
}

// fmtNum formats a number compactly for comparison tables.
func fmtNum(v Num) string {
	f := float64(v)
	switch {
	case math.IsNaN(f):
		return "—"
	case math.IsInf(f, 1):
		return "+inf"
	case math.IsInf(f, -1):
		return "-inf"
	}
	return fmt.Sprintf("%.4g", f)
}

// WriteComparison writes the comparison for a terminal.
func WriteComparison(w io.Writer, c *Comparison) error {
	b := &strings.Builder{}
	fmt.Fprintf(b, "compare · baseline %s\n        · candidate %s\n", c.Baseline, c.Candidate)
	for _, n := range c.Notes {
		fmt.Fprintf(b, "  note: %s\n", n)
	}
	flagged := c.FlaggedCount()
	fmt.Fprintf(b, "\nsummary: %d measures compared (bias, emp. SE, efficiency, failure rate, iterations)\n", len(c.Differences))
	fmt.Fprintf(b, "  flagged when |z| is past %g after Holm's correction (family-wise level %.2g)\n", c.Threshold, c.Alpha)
	if flagged > 0 {
		fmt.Fprintf(b, "  %-34s %10s %10s %10s %7s\n", "where", "baseline", "candidate", "diff", "z")
		for _, d := range c.Differences {
			if d.Flagged {
				fmt.Fprintf(b, "  ! %-32s %10s %10s %10s %7s\n", differenceWhere(d), fmtNum(d.Baseline), fmtNum(d.Candidate), fmtNum(d.Diff), fmtNum(d.Z))
			}
		}
	}
	unc := c.Uncomparable()
	unchanged := len(c.Differences) - flagged - len(unc)
	fmt.Fprintf(b, "  %d unchanged within Monte Carlo error", unchanged)
	for _, d := range c.Differences {
		if !d.Flagged && !math.IsNaN(float64(d.Z)) && d.Z != 0 {
			fmt.Fprintf(b, " (largest |z| %.2g: %s)", math.Abs(float64(d.Z)), differenceWhere(d))
			break
		}
	}
	b.WriteString("\n")
	if len(unc) > 0 {
		fmt.Fprintf(b, "  %d not testable (Monte Carlo error undefined, e.g. fewer than two fits), such as %s\n", len(unc), differenceWhere(unc[0]))
	}
	if p := c.Paired; p != nil {
		fmt.Fprintf(b, "\npaired: %d fits compared replicate by replicate (tolerance %g)\n", p.Fits, p.Tolerance)
		fmt.Fprintf(b, "  largest |change of an estimate| %.3g · %d fits moved · %d status changes · %d iteration changes",
			p.MaxAbsDiff, p.Moved, p.StatusChanged, p.IterationChanged)
		if p.Missing > 0 {
			fmt.Fprintf(b, " · %d fits in one run only", p.Missing)
		}
		b.WriteString("\n")
		for _, t := range slices.Sorted(maps.Keys(p.Transitions)) {
			fmt.Fprintf(b, "  status %s: %d fits\n", t, p.Transitions[t])
		}
		for _, pe := range p.Estimators {
			if pe.Moved+pe.StatusChanged+pe.IterationChanged == 0 {
				continue
			}
			fmt.Fprintf(b, "  cell %d %-14s max |Δ| %.3g · moved %d · status %d · iterations %d (mean Δ %+.2f)\n",
				pe.Cell, pe.Estimator, pe.MaxAbsDiff, pe.Moved, pe.StatusChanged, pe.IterationChanged, pe.MeanIterDelta)
		}
		if len(p.Examples) > 0 {
			b.WriteString("  first changed replicates (replay one with rhomark replay SCENARIO --cell C --replicate R):\n")
			for _, e := range p.Examples {
				fmt.Fprintf(b, "    cell %d replicate %d %s: |Δ| %.3g %s %s\n", e.Cell, e.Replicate, e.Estimator, e.MaxAbsDiff, e.Status, e.Iterations)
			}
		}
	}
	fmt.Fprintf(b, "\nresult: %s\n", c.verdict())
	_, err := io.WriteString(w, b.String())
	return err
}

// WriteComparisonMarkdown writes the comparison as Markdown for a code
// review.
func WriteComparisonMarkdown(w io.Writer, c *Comparison) error {
	b := &strings.Builder{}
	fmt.Fprintf(b, "### rhomark compare: %s\n\n", c.verdict())
	fmt.Fprintf(b, "- baseline: `%s`\n- candidate: `%s`\n", c.Baseline, c.Candidate)
	for _, n := range c.Notes {
		fmt.Fprintf(b, "- note: %s\n", n)
	}
	fmt.Fprintf(b, "\n**Summary.** %d measures compared; %d flagged (|z| past %g after Holm's correction, family-wise level %.2g)",
		len(c.Differences), c.FlaggedCount(), c.Threshold, c.Alpha)
	if unc := c.Uncomparable(); len(unc) > 0 {
		fmt.Fprintf(b, "; %d not testable (Monte Carlo error undefined)", len(unc))
	}
	b.WriteString(".\n\n")
	if c.FlaggedCount() > 0 {
		b.WriteString("| cell | estimator | coefficient | measure | baseline | candidate | diff | z |\n|---:|---|---|---|---:|---:|---:|---:|\n")
		for _, d := range c.Differences {
			if d.Flagged {
				fmt.Fprintf(b, "| %d | %s | %s | %s | %s | %s | %s | %s |\n", d.Cell, d.Estimator, d.Coefficient, d.Measure,
					fmtNum(d.Baseline), fmtNum(d.Candidate), fmtNum(d.Diff), fmtNum(d.Z))
			}
		}
		b.WriteString("\n")
	}
	if p := c.Paired; p != nil {
		fmt.Fprintf(b, "**Paired.** %d fits compared replicate by replicate at tolerance %g: largest change %.3g, %d moved, %d status changes, %d iteration changes.\n\n",
			p.Fits, p.Tolerance, p.MaxAbsDiff, p.Moved, p.StatusChanged, p.IterationChanged)
		if p.Moved+p.StatusChanged+p.IterationChanged > 0 {
			b.WriteString("| cell | estimator | max abs change | moved | status changed | iterations changed | mean iteration change |\n|---:|---|---:|---:|---:|---:|---:|\n")
			for _, pe := range p.Estimators {
				if pe.Moved+pe.StatusChanged+pe.IterationChanged > 0 {
					fmt.Fprintf(b, "| %d | %s | %.3g | %d | %d | %d | %+.2f |\n", pe.Cell, pe.Estimator, pe.MaxAbsDiff, pe.Moved, pe.StatusChanged, pe.IterationChanged, pe.MeanIterDelta)
				}
			}
			b.WriteString("\n")
		}
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// junit types: the JUnit XML layout CI systems read.
type junitSuites struct {
	XMLName xml.Name     `xml:"testsuites"`
	Suites  []junitSuite `xml:"testsuite"`
}

type junitSuite struct {
	Name     string      `xml:"name,attr"`
	Tests    int         `xml:"tests,attr"`
	Failures int         `xml:"failures,attr"`
	Cases    []junitCase `xml:"testcase"`
}

type junitCase struct {
	Name      string        `xml:"name,attr"`
	ClassName string        `xml:"classname,attr"`
	Failure   *junitFailure `xml:"failure,omitempty"`
}

type junitFailure struct {
	Message string `xml:"message,attr"`
	Text    string `xml:",chardata"`
}

// JUnitRun is one comparison to write as JUnit XML, under a suite name.
type JUnitRun struct {
	// Suite names the comparison's test suites (one per mode).
	Suite string
	// Comparison is the outcome to report.
	Comparison *Comparison
}

// WriteComparisonJUnit writes comparisons as one JUnit XML document: per
// comparison a summary suite and, in paired mode, a paired suite, with one
// test case per cell and estimator, failing when anything of it was
// flagged.
func WriteComparisonJUnit(w io.Writer, runs []JUnitRun) error {
	var out junitSuites
	for _, r := range runs {
		out.Suites = append(out.Suites, junitSuitesOf(r.Comparison, r.Suite)...)
	}
	if _, err := io.WriteString(w, xml.Header); err != nil {
		return err
	}
	enc := xml.NewEncoder(w)
	enc.Indent("", "  ")
	if err := enc.Encode(out); err != nil {
		return err
	}
	_, err := io.WriteString(w, "\n")
	return err
}

// junitSuitesOf returns the suites of one comparison.
func junitSuitesOf(c *Comparison, suite string) []junitSuite {
	type group struct {
		name  string
		fails []string
	}
	var summary []*group
	index := map[string]*group{}
	for _, d := range c.Differences {
		name := fmt.Sprintf("cell %d %s", d.Cell, d.Estimator)
		g, ok := index[name]
		if !ok {
			g = &group{name: name}
			index[name] = g
			summary = append(summary, g)
		}
		if d.Flagged {
			g.fails = append(g.fails, fmt.Sprintf("%s: %s → %s (z %s)", differenceWhere(d), fmtNum(d.Baseline), fmtNum(d.Candidate), fmtNum(d.Z)))
		}
	}
	s := junitSuite{Name: suite + " summary"}
	for _, g := range summary {
		tc := junitCase{Name: g.name, ClassName: suite}
		if len(g.fails) > 0 {
			tc.Failure = &junitFailure{Message: fmt.Sprintf("%d measures changed beyond Monte Carlo error", len(g.fails)), Text: strings.Join(g.fails, "\n")}
			s.Failures++
		}
		s.Cases = append(s.Cases, tc)
	}
	s.Tests = len(s.Cases)
	out := []junitSuite{s}
	if p := c.Paired; p != nil {
		ps := junitSuite{Name: suite + " paired"}
		for _, pe := range p.Estimators {
			tc := junitCase{Name: fmt.Sprintf("cell %d %s", pe.Cell, pe.Estimator), ClassName: suite}
			if pe.Moved > 0 || pe.StatusChanged > 0 {
				tc.Failure = &junitFailure{Message: fmt.Sprintf("%d fits moved beyond %g, %d changed status", pe.Moved, p.Tolerance, pe.StatusChanged),
					Text: fmt.Sprintf("largest change %.3g; %d iteration changes", pe.MaxAbsDiff, pe.IterationChanged)}
				ps.Failures++
			}
			ps.Cases = append(ps.Cases, tc)
		}
		if p.Missing > 0 {
			ps.Cases = append(ps.Cases, junitCase{Name: "replicate coverage", ClassName: suite,
				Failure: &junitFailure{Message: fmt.Sprintf("%d fits are in one run only", p.Missing)}})
			ps.Failures++
		}
		ps.Tests = len(ps.Cases)
		out = append(out, ps)
	}
	return out
}
