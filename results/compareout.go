package results

import (
	"encoding/json"
	"encoding/xml"
	"fmt"
	"io"
	"maps"
	"math"
	"slices"
	"strconv"
	"strings"
	"text/tabwriter"
)

// verdict is the one-line outcome of a comparison, the most serious change
// first.
func (c *Comparison) verdict() string {
	if !c.Flagged() {
		if c.Paired != nil {
			return "unchanged: paired replicates agree to the tolerance, statuses identical"
		}
		return "unchanged within Monte Carlo error"
	}
	var why []string
	if rs := c.FailureRises(); len(rs) > 0 {
		var r rises
		for _, f := range rs {
			r.add(f.Estimator, f.Cell, f.CandidateFailed-f.BaselineFailed)
		}
		why = append(why, "MORE FAILURES ("+r.phrase("failed fits ")+")")
	}
	nf := 0
	for _, f := range c.Failures.Tests {
		if f.Flagged && !f.Rise() {
			nf++
		}
	}
	if nf > 0 {
		why = append(why, fmt.Sprintf("fewer failures in %d cell × estimator", nf))
	}
	why = append(why, c.auditVerdict()...)
	if p := c.Paired; p != nil {
		if p.StatusChanged > 0 {
			why = append(why, fmt.Sprintf("%d fit%s changed status", p.StatusChanged, plural(p.StatusChanged)))
		}
		if p.Moved > 0 {
			why = append(why, fmt.Sprintf("%d fit%s moved beyond %g", p.Moved, plural(p.Moved), p.Tolerance))
		}
		if p.Missing > 0 {
			why = append(why, fmt.Sprintf("%d fit%s in one run only", p.Missing, plural(p.Missing)))
		}
	}
	if n := c.FlaggedCount(); n > 0 {
		why = append(why, fmt.Sprintf("%d measure%s changed beyond Monte Carlo error", n, plural(n)))
	}
	return "CHANGED: " + strings.Join(why, "; ")
}

// rises gathers the flagged rises of a count by estimator, in order of
// first appearance, for the verdict.
type rises struct {
	order []string
	cells map[string][]int
	added map[string]int64
}

// add records a rise of by in one cell of an estimator.
func (r *rises) add(estimator string, cell int, by int64) {
	if r.cells == nil {
		r.cells, r.added = map[string][]int{}, map[string]int64{}
	}
	if _, ok := r.cells[estimator]; !ok {
		r.order = append(r.order, estimator)
	}
	r.cells[estimator] = append(r.cells[estimator], cell)
	r.added[estimator] += by
}

// phrase writes the rises as "huber: +10 unit in cells 0, 3; ...".
func (r *rises) phrase(unit string) string {
	parts := make([]string, len(r.order))
	for k, e := range r.order {
		slices.Sort(r.cells[e])
		ids := make([]string, len(r.cells[e]))
		for i, c := range r.cells[e] {
			ids[i] = strconv.Itoa(c)
		}
		parts[k] = fmt.Sprintf("%s: %+d %sin cell%s %s", e, r.added[e], unit, plural(len(ids)), strings.Join(ids, ", "))
	}
	return strings.Join(parts, "; ")
}

func plural(n int) string {
	if n == 1 {
		return ""
	}
	return "s"
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
func fmtNum(v Float) string {
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

// fmtSigned formats a difference with its sign.
func fmtSigned(v Float) string {
	if f := float64(v); !math.IsNaN(f) && !math.IsInf(f, 0) {
		return fmt.Sprintf("%+.3g", f)
	}
	return fmtNum(v)
}

// settingsOf returns the differing settings of the given kinds.
func (c *Comparison) settingsOf(kinds ...SettingKind) []SettingChange {
	var out []SettingChange
	for _, s := range c.Settings {
		if slices.Contains(kinds, s.Kind) {
			out = append(out, s)
		}
	}
	return out
}

// failureRows returns the failure tests worth a row: flagged ones and
// those with a failure (in paired mode, a fit whose outcome changed).
func (c *Comparison) failureRows() []FailureTest {
	return rowsWhere(c.Failures.Tests, func(f FailureTest) bool {
		if c.Failures.Test == FailurePaired {
			return f.Flagged || f.NewFailures+f.Recovered > 0
		}
		return f.Flagged || f.BaselineFailed+f.CandidateFailed > 0
	})
}

// rowsWhere returns the tests a table shows.
func rowsWhere[T any](tests []T, show func(T) bool) []T {
	var out []T
	for _, t := range tests {
		if show(t) {
			out = append(out, t)
		}
	}
	return out
}

// failureNote is the verdict of one failure test for a table.
func failureNote(f FailureTest) string { return testNote(f.Flagged, f.Rise(), "failures") }

// testNote is the verdict of an exact test of a count for a table: "MORE"
// or "fewer" and what is counted when flagged, else "not significant".
func testNote(flagged, rise bool, what string) string {
	switch {
	case flagged && rise:
		return strings.TrimSpace("MORE " + strings.ToUpper(what))
	case flagged:
		return strings.TrimSpace("fewer " + what)
	}
	return "not significant"
}

// failureCounts returns the "failed before/after" columns of a test.
func failureCounts(f FailureTest) (string, string) {
	return fmt.Sprintf("%d/%d", f.BaselineFailed, f.BaselineFits), fmt.Sprintf("%d/%d", f.CandidateFailed, f.CandidateFits)
}

// failureTestDescription names the failure test for a heading.
func (c *Comparison) failureTestDescription() string {
	if c.Failures.Test == FailurePaired {
		return "exact McNemar test on the fits whose outcome changed"
	}
	return "Fisher's exact test of two independent failure rates"
}

// WriteComparison writes the comparison for a terminal: what was
// compared, the verdict, then failures, status changes, the largest moves
// and the other measures.
func WriteComparison(w io.Writer, c *Comparison) error {
	b := &strings.Builder{}
	fmt.Fprintf(b, "compare %s\n  baseline  %s\n  candidate %s\n", c.Baseline.Scenario, c.Baseline.Path, c.Candidate.Path)
	if p := c.Paired; p != nil {
		fmt.Fprintf(b, "paired: %d fits present in both runs, compared replicate by replicate (seed %d, tolerance %g)\n", p.Fits, c.Baseline.Seed, p.Tolerance)
	} else {
		fmt.Fprintf(b, "summary mode (not paired: %s): measures compared through their Monte Carlo errors\n", c.Unpaired)
	}
	if sv := c.settingsOf(SettingSolver); len(sv) > 0 {
		b.WriteString("solver settings that differ:\n")
		for _, s := range sv {
			fmt.Fprintf(b, "  %s: %s → %s\n", s.Path, s.Baseline, s.Candidate)
		}
	}
	if other := c.settingsOf(SettingEstimator, SettingAnalysis, SettingData, SettingName); len(other) > 0 {
		b.WriteString("other settings that differ:\n")
		for _, s := range other {
			fmt.Fprintf(b, "  %s (%s): %s → %s\n", s.Path, s.Kind, s.Baseline, s.Candidate)
		}
	}
	for _, n := range c.Notes {
		fmt.Fprintf(b, "note: %s\n", n)
	}
	fmt.Fprintf(b, "\nresult: %s\n", c.verdict())

	// Failures, on their own.
	f := c.Failures
	fmt.Fprintf(b, "\nfailures, per cell × estimator (%s; Holm at family-wise level %g over the %d tests that could reject):\n", c.failureTestDescription(), f.Alpha, f.Tested)
	if rows := c.failureRows(); len(rows) > 0 {
		tw := tabwriter.NewWriter(b, 0, 0, 2, ' ', 0)
		if f.Test == FailurePaired {
			fmt.Fprintln(tw, "  cell\tsettings\testimator\tfits\tnew failures\trecovered\tp\t")
			for _, r := range rows {
				fmt.Fprintf(tw, "  %d\t%s\t%s\t%d\t%d\t%d\t%.2g\t%s\n", r.Cell, shortSettings(r.Settings, "=", " "), r.Estimator, r.BaselineFits, r.NewFailures, r.Recovered, float64(r.P), failureNote(r))
			}
		} else {
			fmt.Fprintln(tw, "  cell\tsettings\testimator\tfailed before\tfailed after\tp\t")
			for _, r := range rows {
				before, after := failureCounts(r)
				fmt.Fprintf(tw, "  %d\t%s\t%s\t%s\t%s\t%.2g\t%s\n", r.Cell, shortSettings(r.Settings, "=", " "), r.Estimator, before, after, float64(r.P), failureNote(r))
			}
		}
		tw.Flush()
	} else if f.Test == FailurePaired {
		b.WriteString("  no fit changed between converged and failed\n")
	} else {
		b.WriteString("  no failures in either run\n")
	}

	if c.Audit != nil {
		fmt.Fprintf(b, "\nsolver studies, %s:\n", c.auditDetail())
		if rows := c.auditRows(); len(rows) > 0 {
			tw := tabwriter.NewWriter(b, 0, 0, 2, ' ', 0)
			fmt.Fprintln(tw, "  cell\tsettings\testimator\tcounted\tbefore\tafter\tp\t")
			for _, r := range rows {
				before, after := auditCells(r)
				fmt.Fprintf(tw, "  %d\t%s\t%s\t%s\t%s\t%s\t%.2g\t%s\n", r.Cell, shortSettings(r.Settings, "=", " "), r.Estimator, r.Check.what(), before, after, float64(r.P), auditNote(r))
			}
			tw.Flush()
		} else {
			b.WriteString("  " + auditNone + "\n")
		}
	}

	if p := c.Paired; p != nil {
		writeStatusChanges(b, c, p)
		writeMoves(b, c, p)
	}

	// The other measures, Holm-corrected.
	flagged := c.FlaggedCount()
	fmt.Fprintf(b, "\nmeasures (%s): %d compared, %d testable; Holm at family-wise level %.2g (|z| past %g)",
		strings.Join(measureNames(), ", "), len(c.Differences), c.Tested, c.Alpha, c.Threshold)
	if c.Tested > 0 {
		fmt.Fprintf(b, ": the largest |z| had to pass %.2f", float64(c.CriticalZ))
	}
	b.WriteString("\n")
	if flagged > 0 {
		tw := tabwriter.NewWriter(b, 0, 0, 2, ' ', 0)
		fmt.Fprintln(tw, "  \tcell\testimator\tcoefficient\tmeasure\tbaseline\tcandidate\tdiff\tz\t")
		for _, d := range c.Differences {
			if d.Flagged {
				fmt.Fprintf(tw, "  !\t%d\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t\n", d.Cell, d.Estimator, orDash(d.Coefficient), d.Measure, fmtNum(d.Baseline), fmtNum(d.Candidate), fmtSigned(d.Diff), fmtNum(d.Z))
			}
		}
		tw.Flush()
	}
	unc := c.Uncomparable()
	fmt.Fprintf(b, "  %d unchanged within Monte Carlo error", len(c.Differences)-flagged-len(unc))
	for _, d := range c.Differences {
		if !d.Flagged && !math.IsNaN(float64(d.Z)) && d.Z != 0 {
			fmt.Fprintf(b, " (largest |z| %.3g: %s)", math.Abs(float64(d.Z)), differenceWhere(d))
			break
		}
	}
	b.WriteString("\n")
	if len(unc) > 0 {
		fmt.Fprintf(b, "  %d not testable (Monte Carlo error undefined, e.g. fewer than two fits), such as %s\n", len(unc), differenceWhere(unc[0]))
	}
	if p := c.Paired; p != nil {
		fmt.Fprintf(b, "\npaired totals: largest |change of an estimate| %.3g · %d moved · %d status changes (%d new failures, %d recovered) · %d iteration changes",
			float64(p.MaxAbsDiff), p.Moved, p.StatusChanged, p.NewFailures, p.Recovered, p.IterationChanged)
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
				pe.Cell, pe.Estimator, float64(pe.MaxAbsDiff), pe.Moved, pe.StatusChanged, pe.IterationChanged, pe.MeanIterDelta)
		}
	}
	_, err := io.WriteString(w, trimLines(b.String()))
	return err
}

// trimLines removes the spaces that aligned columns leave at line ends.
func trimLines(s string) string {
	lines := strings.Split(s, "\n")
	for i, l := range lines {
		lines[i] = strings.TrimRight(l, " ")
	}
	return strings.Join(lines, "\n")
}

func orDash(s string) string {
	if s == "" {
		return "-"
	}
	return s
}

// writeStatusChanges lists the fits whose status changed.
func writeStatusChanges(b *strings.Builder, c *Comparison, p *PairedReport) {
	if p.StatusChanged == 0 {
		return
	}
	fmt.Fprintf(b, "\nstatus changes: %d fit%s (%d new failures, %d recovered); %d listed, new failures first, largest move first\n",
		p.StatusChanged, plural(p.StatusChanged), p.NewFailures, p.Recovered, len(p.StatusChanges))
	if len(p.StatusChanges) == 0 {
		return
	}
	tw := tabwriter.NewWriter(b, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "  cell\treplicate\testimator\tbaseline → candidate status\titerations\tlargest move\tdiff\tdiff/SE")
	for _, s := range p.StatusChanges {
		fmt.Fprintf(tw, "  %d\t%d\t%s\t%s → %s\t%d → %d\t%s\t%s\t%s\n", s.Cell, s.Replicate, s.Estimator, s.Baseline, s.Candidate, s.BaselineIterations, s.CandidateIterations,
			orDash(s.Coefficient), fmtSigned(s.Diff), fmtSigned(s.SEUnits))
	}
	tw.Flush()
	if c.Replay != "" {
		fmt.Fprintf(b, "  replay the first: %s\n", c.Replay)
	}
}

// writeMoves lists the largest moves.
func writeMoves(b *strings.Builder, c *Comparison, p *PairedReport) {
	if len(p.Moves) == 0 {
		if p.StatusChanged > 0 {
			b.WriteString("\nlargest moves: no fit whose status stayed the same moved beyond the tolerance\n")
		}
		return
	}
	fmt.Fprintf(b, "\nlargest moves among fits whose status did not change (%d listed; diff/SE in units of the coefficient's empirical SE)\n", len(p.Moves))
	tw := tabwriter.NewWriter(b, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "  cell\treplicate\testimator\tcoefficient\tbaseline\tcandidate\tdiff\tdiff/SE")
	for _, m := range p.Moves {
		fmt.Fprintf(tw, "  %d\t%d\t%s\t%s\t%.6g\t%.6g\t%s\t%s\n", m.Cell, m.Replicate, m.Estimator, m.Coefficient, float64(m.Baseline), float64(m.Candidate), fmtSigned(m.Diff), fmtSigned(m.SEUnits))
	}
	tw.Flush()
	if len(p.StatusChanges) == 0 && c.Replay != "" {
		fmt.Fprintf(b, "  replay the first: %s\n", c.Replay)
	}
}

// WriteComparisonMarkdown writes the comparison as Markdown for a code
// review, with the same parts as WriteComparison.
func WriteComparisonMarkdown(w io.Writer, c *Comparison) error {
	b := &strings.Builder{}
	fmt.Fprintf(b, "### rhomark compare %s: %s\n\n", c.Baseline.Scenario, c.verdict())
	fmt.Fprintf(b, "- baseline: `%s`\n- candidate: `%s`\n", c.Baseline.Path, c.Candidate.Path)
	if c.Paired != nil {
		fmt.Fprintf(b, "- paired: %d fits compared replicate by replicate (tolerance %g)\n", c.Paired.Fits, c.Paired.Tolerance)
	} else {
		fmt.Fprintf(b, "- summary mode (not paired: %s)\n", c.Unpaired)
	}
	for _, n := range c.Notes {
		fmt.Fprintf(b, "- note: %s\n", n)
	}
	if len(c.Settings) > 0 {
		b.WriteString("\n| setting | kind | baseline | candidate |\n|---|---|---|---|\n")
		for _, s := range c.Settings {
			fmt.Fprintf(b, "| `%s` | %s | `%s` | `%s` |\n", s.Path, s.Kind, s.Baseline, s.Candidate)
		}
	}
	f := c.Failures
	fmt.Fprintf(b, "\n**Failures**, per cell × estimator (%s; Holm at family-wise level %g over the %d tests that could reject).\n\n", c.failureTestDescription(), f.Alpha, f.Tested)
	if rows := c.failureRows(); len(rows) > 0 {
		if f.Test == FailurePaired {
			b.WriteString("| cell | settings | estimator | fits | new failures | recovered | p | |\n|---:|---|---|---:|---:|---:|---:|---|\n")
			for _, r := range rows {
				fmt.Fprintf(b, "| %d | %s | %s | %d | %d | %d | %.2g | %s |\n", r.Cell, shortSettings(r.Settings, "=", " "), r.Estimator, r.BaselineFits, r.NewFailures, r.Recovered, float64(r.P), failureNote(r))
			}
		} else {
			b.WriteString("| cell | settings | estimator | failed before | failed after | p | |\n|---:|---|---|---:|---:|---:|---|\n")
			for _, r := range rows {
				before, after := failureCounts(r)
				fmt.Fprintf(b, "| %d | %s | %s | %s | %s | %.2g | %s |\n", r.Cell, shortSettings(r.Settings, "=", " "), r.Estimator, before, after, float64(r.P), failureNote(r))
			}
		}
		b.WriteString("\n")
	}
	if c.Audit != nil {
		fmt.Fprintf(b, "**Solver studies**, %s.\n\n", c.auditDetail())
		if rows := c.auditRows(); len(rows) > 0 {
			b.WriteString("| cell | settings | estimator | counted | before | after | p | |\n|---:|---|---|---|---:|---:|---:|---|\n")
			for _, r := range rows {
				before, after := auditCells(r)
				fmt.Fprintf(b, "| %d | %s | %s | %s | %s | %s | %.2g | %s |\n", r.Cell, shortSettings(r.Settings, "=", " "), r.Estimator, r.Check.what(), before, after, float64(r.P), auditNote(r))
			}
			b.WriteString("\n")
		} else {
			b.WriteString(strings.ToUpper(auditNone[:1]) + auditNone[1:] + ".\n\n")
		}
	}
	if p := c.Paired; p != nil && len(p.StatusChanges) > 0 {
		fmt.Fprintf(b, "**Status changes.** %d fits (%d new failures, %d recovered); %d listed, new failures first, largest move first.\n\n", p.StatusChanged, p.NewFailures, p.Recovered, len(p.StatusChanges))
		b.WriteString("| cell | replicate | estimator | baseline status | candidate status | iterations | largest move | diff | diff/SE |\n|---:|---:|---|---|---|---:|---|---:|---:|\n")
		for _, s := range p.StatusChanges {
			fmt.Fprintf(b, "| %d | %d | %s | %s | %s | %d → %d | %s | %s | %s |\n", s.Cell, s.Replicate, s.Estimator, s.Baseline, s.Candidate, s.BaselineIterations, s.CandidateIterations,
				orDash(s.Coefficient), fmtSigned(s.Diff), fmtSigned(s.SEUnits))
		}
		b.WriteString("\n")
	}
	if c.Replay != "" {
		fmt.Fprintf(b, "Replay the first: `%s`\n\n", c.Replay)
	}
	if p := c.Paired; p != nil && len(p.Moves) > 0 {
		fmt.Fprintf(b, "**Largest moves** among fits whose status did not change (%d listed; diff/SE in units of the coefficient's empirical SE).\n\n", len(p.Moves))
		b.WriteString("| cell | replicate | estimator | coefficient | baseline | candidate | diff | diff/SE |\n|---:|---:|---|---|---:|---:|---:|---:|\n")
		for _, m := range p.Moves {
			fmt.Fprintf(b, "| %d | %d | %s | %s | %.6g | %.6g | %s | %s |\n", m.Cell, m.Replicate, m.Estimator, m.Coefficient, float64(m.Baseline), float64(m.Candidate), fmtSigned(m.Diff), fmtSigned(m.SEUnits))
		}
		b.WriteString("\n")
	}
	fmt.Fprintf(b, "**Measures** (%s): %d compared; %d flagged (Holm over %d testable at family-wise level %.2g",
		strings.Join(measureNames(), ", "), len(c.Differences), c.FlaggedCount(), c.Tested, c.Alpha)
	if c.Tested > 0 {
		fmt.Fprintf(b, "; the largest |z| had to pass %.2f", float64(c.CriticalZ))
	}
	b.WriteString(")")
	if unc := c.Uncomparable(); len(unc) > 0 {
		fmt.Fprintf(b, "; %d not testable (Monte Carlo error undefined)", len(unc))
	}
	b.WriteString(".\n\n")
	if c.FlaggedCount() > 0 {
		b.WriteString("| cell | estimator | coefficient | measure | baseline | candidate | diff | z |\n|---:|---|---|---|---:|---:|---:|---:|\n")
		for _, d := range c.Differences {
			if d.Flagged {
				fmt.Fprintf(b, "| %d | %s | %s | %s | %s | %s | %s | %s |\n", d.Cell, d.Estimator, d.Coefficient, d.Measure,
					fmtNum(d.Baseline), fmtNum(d.Candidate), fmtSigned(d.Diff), fmtNum(d.Z))
			}
		}
		b.WriteString("\n")
	}
	if p := c.Paired; p != nil {
		fmt.Fprintf(b, "**Paired totals.** %d fits at tolerance %g: largest change %.3g, %d moved, %d status changes, %d iteration changes.\n\n",
			p.Fits, p.Tolerance, float64(p.MaxAbsDiff), p.Moved, p.StatusChanged, p.IterationChanged)
		if p.Moved+p.StatusChanged+p.IterationChanged > 0 {
			b.WriteString("| cell | estimator | max abs change | moved | status changed | new failures | iterations changed | mean iteration change |\n|---:|---|---:|---:|---:|---:|---:|---:|\n")
			for _, pe := range p.Estimators {
				if pe.Moved+pe.StatusChanged+pe.IterationChanged > 0 {
					fmt.Fprintf(b, "| %d | %s | %.3g | %d | %d | %d | %d | %+.2f |\n", pe.Cell, pe.Estimator, float64(pe.MaxAbsDiff), pe.Moved, pe.StatusChanged, pe.NewFailures, pe.IterationChanged, pe.MeanIterDelta)
				}
			}
			b.WriteString("\n")
		}
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// WriteComparisonJSON writes comparisons as a JSON array, one object per
// compared pair of runs (the layout is documented in the README, section
// "Regression-testing a solver change"; version CompareSchemaVersion).
func WriteComparisonJSON(w io.Writer, cs []*Comparison) error {
	if cs == nil {
		cs = []*Comparison{}
	}
	b, err := json.MarshalIndent(cs, "", "  ")
	if err != nil {
		return err
	}
	_, err = w.Write(append(b, '\n'))
	return err
}

// ReadComparisonJSON reads what WriteComparisonJSON writes.
func ReadComparisonJSON(r io.Reader) ([]*Comparison, error) {
	var cs []*Comparison
	d := json.NewDecoder(r)
	d.DisallowUnknownFields()
	if err := d.Decode(&cs); err != nil {
		return nil, fmt.Errorf("comparison JSON: %w", err)
	}
	for i, c := range cs {
		if c == nil || c.Schema != CompareSchemaVersion {
			return nil, fmt.Errorf("comparison JSON: entry %d is not a comparison of version %d", i, CompareSchemaVersion)
		}
	}
	return cs, nil
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
	groupOf := func(cell int, estimator string) *group {
		name := fmt.Sprintf("cell %d %s", cell, estimator)
		g, ok := index[name]
		if !ok {
			g = &group{name: name}
			index[name] = g
			summary = append(summary, g)
		}
		return g
	}
	for _, d := range c.Differences {
		g := groupOf(d.Cell, d.Estimator)
		if d.Flagged {
			g.fails = append(g.fails, fmt.Sprintf("%s: %s → %s (z %s)", differenceWhere(d), fmtNum(d.Baseline), fmtNum(d.Candidate), fmtNum(d.Z)))
		}
	}
	for _, f := range c.Failures.Tests {
		if f.Flagged {
			g := groupOf(f.Cell, f.Estimator)
			before, after := failureCounts(f)
			g.fails = append(g.fails, fmt.Sprintf("cell %d %s failures: %s → %s (%s, p %.2g)", f.Cell, f.Estimator, before, after, failureNote(f), float64(f.P)))
		}
	}
	if c.Audit != nil {
		for _, a := range c.Audit.Tests {
			if a.Flagged {
				g := groupOf(a.Cell, a.Estimator)
				g.fails = append(g.fails, auditJUnit(a))
			}
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
