package results

import (
	"encoding/json"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
)

// The wording of the solver study, shared by the terminal table, the CSV
// and the HTML report.

// HasSolverStudy reports whether any estimator of r was audited or
// searched for roots.
func HasSolverStudy(r *Results) bool {
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			if e.Convergence.StopError != nil || e.Convergence.Roots != nil {
				return true
			}
		}
	}
	return false
}

// FormatSE formats an error in standard errors to two significant digits
// ("—" when it is not a finite number).
func FormatSE(v Num) string {
	f := float64(v)
	switch {
	case math.IsNaN(f) || math.IsInf(f, 0):
		return "—"
	case f == 0:
		return "0"
	}
	return strconv.FormatFloat(f, 'g', 2, 64)
}

// FormatIterations formats a median of iteration counts exactly (11.5,
// 100), "—" where there is none.
func FormatIterations(v Num) string {
	if f := float64(v); !math.IsNaN(f) && !math.IsInf(f, 0) {
		return strconv.FormatFloat(f, 'g', -1, 64)
	}
	return "—"
}

// formatTol formats a tolerance as it would be written in a scenario:
// 1e-6 (not 1e-06 or 0.000001).
func formatTol(t float64) string {
	s := strconv.FormatFloat(t, 'e', -1, 64)
	return strings.Replace(strings.Replace(s, "e-0", "e-", 1), "e+0", "e+", 1)
}

// StoppingRule describes the stopping rules of estimator label in cell c
// as written in the scenario ("change 1e-3", "equations 1e-9, max-iter
// 50", "change 1e-8 and equations 1e-9 (all)"), with the cell's swept
// values in place; "" for a method without one.
func StoppingRule(r *Results, c Cell, label string) string {
	var sc struct {
		Estimators []struct {
			Label string         `json:"label"`
			Stop  map[string]any `json:"stop"`
		} `json:"estimators"`
	}
	if json.Unmarshal(r.Scenario.Normalised, &sc) != nil {
		return ""
	}
	var stop map[string]any
	index := -1
	for i, e := range sc.Estimators {
		if e.Label == label {
			stop, index = e.Stop, i
		}
	}
	if stop == nil {
		return ""
	}
	text := map[string]string{}
	for _, k := range []string{"change", "equations", "max_iter", "require"} {
		if v, ok := stop[k]; ok {
			text[k] = fmt.Sprint(v)
			if f, ok := v.(float64); ok && (k == "change" || k == "equations") {
				text[k] = formatTol(f)
			}
		}
	}
	for _, s := range c.Settings {
		t := s.Target()
		if t.Kind != SweepEstimator || !t.Owns(label, index) {
			continue
		}
		if key, ok := strings.CutPrefix(s.Path, "estimators."+t.Owner+".stop."); ok {
			if k := strings.ReplaceAll(key, "-", "_"); slices.Contains([]string{"change", "equations", "max_iter", "require"}, k) {
				text[k] = s.Value
			}
		}
	}
	var rules []string
	for _, k := range []string{"change", "equations"} {
		if v, ok := text[k]; ok {
			rules = append(rules, k+" "+v)
		}
	}
	out := strings.Join(rules, " and ")
	if len(rules) > 1 {
		if text["require"] == "all" {
			out += " (all)"
		} else {
			out = strings.Join(rules, " or ")
		}
	}
	if v, ok := text["max_iter"]; ok && v != "100" {
		out += ", max-iter " + v
	}
	return out
}

// StopAdvice is what the audit says about an estimator's stopping rule.
type StopAdvice struct {
	// Tolerance is the loosest audited change tolerance at which every
	// settled fit (see Unsettled) was within StopErrorThreshold standard
	// errors of its fixed point; NaN when none was.
	Tolerance float64
	// Iterations is the median iterations it needs minus the median the
	// fits took (positive: more iterations).
	Iterations float64
	// Tighten is set when some fit stopped farther than the threshold.
	Tighten bool
	// Unsettled counts audited fits whose iteration, continued, never
	// got a change below the loosest tolerance (1e-2): they oscillate or
	// crawl, so no tolerance describes them and they are left out of
	// Tolerance (their error is still in the stopping-rule error).
	Unsettled int64
}

// AdviseStop reads e's audit (ok false without one, or for a direct
// method).
func AdviseStop(e Estimator) (StopAdvice, bool) {
	cv := e.Convergence
	se := cv.StopError
	if se == nil || se.Direct || len(cv.Tolerances) == 0 || se.Audited == 0 {
		return StopAdvice{}, false
	}
	a := StopAdvice{Tolerance: math.NaN(), Iterations: math.NaN(), Tighten: se.OverCount > 0}
	settled := cv.Tolerances[0].Reached
	a.Unsettled = max(0, se.Audited-settled)
	for _, row := range cv.Tolerances {
		if row.Reached >= settled && row.Reached > 0 && float64(row.Over) == 0 {
			a.Tolerance = row.Tolerance
			a.Iterations = float64(row.MedianIterations) - float64(cv.MedianIterations)
			break
		}
	}
	return a, true
}

// SolverStudyLine is the answer of the audit for one estimator of one
// cell, in one sentence: where its stopping rule leaves the estimate and
// what to change; "" when it was not audited.
func SolverStudyLine(r *Results, c Cell, e Estimator) string {
	se := e.Convergence.StopError
	if se == nil {
		return ""
	}
	head := e.Label
	if rule := StoppingRule(r, c, e.Label); rule != "" {
		head += " (" + rule + ")"
	}
	if se.Direct {
		return head + ": no stopping rule (a direct method), so no stopping-rule error"
	}
	if se.Audited == 0 {
		return fmt.Sprintf("%s: no fit could be measured (%d failed, %d without standard errors: %s)", head, se.NotAudited, se.Undefined, orNone(se.UndefinedReason))
	}
	line := fmt.Sprintf("%s: stopping rule leaves the estimate %s SE (median; max %s) from its fixed point; ",
		head, FormatSE(se.Median), FormatSE(se.Max))
	w := Wilson(se.OverCount, se.Audited)
	if se.OverCount == 0 {
		line += fmt.Sprintf("no fit over 0.01 SE (0 of %d; 95%% ≤ %s)", se.Audited, percent(float64(w.High)))
	} else {
		line += fmt.Sprintf("%s of fits over 0.01 SE (%d of %d; 95%% %s–%s)", percent(float64(se.Over)), se.OverCount, se.Audited, percent(float64(w.Low)), percent(float64(w.High)))
	}
	if a, ok := AdviseStop(e); ok {
		switch {
		case a.Tighten && math.IsNaN(a.Tolerance):
			line += " — no change tolerance down to 1e-14 brings every fit within 0.01 SE"
		case a.Tighten:
			line += fmt.Sprintf(" — tighten change to %s (needs %s, median)", formatTol(a.Tolerance), iterText(a.Iterations, "more"))
		case !math.IsNaN(a.Tolerance) && a.Iterations < 0:
			line += fmt.Sprintf(" — change %s would do (saves %s, median)", formatTol(a.Tolerance), iterText(-a.Iterations, ""))
		}
		if a.Unsettled > 0 {
			line += fmt.Sprintf(" [%s never settled: the change stayed above 1e-2 even when continued]", fits(a.Unsettled))
		}
	}
	if se.Undefined > 0 {
		line += fmt.Sprintf(" [%s without standard errors: %s]", fits(se.Undefined), orNone(se.UndefinedReason))
	}
	return line
}

// fits says "1 fit" or "n fits".
func fits(n int64) string {
	if n == 1 {
		return "1 fit"
	}
	return strconv.FormatInt(n, 10) + " fits"
}

// iterText writes a difference of median iterations with its noun:
// "1 more iteration", "2.5 fewer iterations".
func iterText(n float64, adj string) string {
	num := "no"
	if n > 0 {
		num = strconv.FormatFloat(n, 'f', -1, 64)
	}
	if adj != "" {
		num += " " + adj
	}
	if n == 1 {
		return num + " iteration"
	}
	return num + " iterations"
}

func orNone(s string) string {
	if s == "" {
		return "none"
	}
	return s
}

// RootsLine is the root search's answer for one estimator of one cell;
// "" when it was not searched.
func RootsLine(e Estimator) string {
	rs := e.Convergence.Roots
	if rs == nil {
		return ""
	}
	n := rs.Searched - rs.Failed
	line := fmt.Sprintf("%s: starts reach different roots in %s of replicates (%d of %d; 95%% %s–%s)",
		e.Label, percent(float64(rs.Multiple.Value)), rs.MultipleCount, n, percent(float64(rs.Multiple.Low)), percent(float64(rs.Multiple.High)))
	var best []string
	for _, s := range rs.Starts {
		if s.Best > 0 {
			best = append(best, fmt.Sprintf("%s %s", s.Start, percent(float64(s.BestRate))))
		}
	}
	if len(best) > 0 {
		line += "; where they differ, the smallest objective is reached from " + strings.Join(best, ", ")
	}
	if rs.Failed > 0 {
		line += fmt.Sprintf("; %d replicates could not be searched (no usable S-scale)", rs.Failed)
	}
	return line
}

// SolverStudyLines returns the solver study's answer for each audited
// or root-searched estimator of cell c (SolverStudyLine, RootsLine), in
// the cell's order.
func SolverStudyLines(r *Results, c Cell) []string {
	var lines []string
	for _, e := range c.Estimators {
		for _, l := range []string{SolverStudyLine(r, c, e), RootsLine(e)} {
			if l != "" {
				lines = append(lines, l)
			}
		}
	}
	return lines
}

// writeSolverSummary writes the solver study's answer over all cells (one
// line per audited estimator), after the verdicts; the cells' detail
// comes with the other details (writeSolverCells).
func writeSolverSummary(b *strings.Builder, r *Results, width int) {
	if !HasSolverStudy(r) {
		return
	}
	b.WriteString("\n")
	rule := "── how close is converged? (solver audit) "
	b.WriteString(rule + strings.Repeat("─", max(0, width-runeLen(rule))) + "\n")
	wrap(b, "Stopping-rule error: the distance of each fit's estimate from the fixed point of the same iteration "+
		"at machine precision, on its worst coefficient, in that coefficient's estimated standard errors. "+
		"Each cell's audit, the change tolerances and the root searches are in the details.", "   ", "   ", width)
	if lines := ScenarioStopLines(r); len(lines) > 0 {
		b.WriteString("\n")
		for _, l := range lines {
			wrap(b, l, "   ", "       ", width)
		}
	}
}

// writeSolverCells writes each cell's solver study: one line per audited
// estimator, the side-by-side table of the stopping rules (iterations,
// error, rate), each iterative estimator's change-tolerance table, then
// the root searches.
func writeSolverCells(b *strings.Builder, r *Results, width int) {
	if !HasSolverStudy(r) {
		return
	}
	for _, c := range r.Cells {
		lines := SolverStudyLines(r, c)
		if len(lines) == 0 {
			continue
		}
		head := fmt.Sprintf("solver audit, cell %d", c.Index)
		if len(c.Settings) > 0 {
			head += " (" + shortSettings(c.Settings, " ", ", ") + ")"
		}
		b.WriteString("\n   " + head + "\n")
		for _, l := range lines {
			wrap(b, l, "   ", "       ", width)
		}
		writeRuleTable(b, r, c, width)
		writeToleranceTables(b, c, width)
		writeRootTable(b, c)
	}
}

// RuleRow is one audited estimator of a cell as the side-by-side table of
// stopping rules shows it, each value formatted.
type RuleRow struct {
	Label string
	// Rule is the stopping rule as written (StoppingRule), "—" for none.
	Rule string
	// Iterations is the median iterations; Median, Max and Over the
	// stopping-rule error (median and largest, in SE) and the share of
	// fits over StopErrorThreshold, OverFlag set when any fit was.
	Iterations, Median, Max, Over string
	OverFlag                      bool
	// RateMedian and RateKind are the observed convergence rate ("" when
	// none), RateNote its explanation, if any.
	RateMedian, RateKind, RateNote string
}

// RuleRows returns the audited estimators of cell c, in the cell's order.
func RuleRows(r *Results, c Cell) []RuleRow {
	var rows []RuleRow
	for _, e := range c.Estimators {
		se := e.Convergence.StopError
		if se == nil {
			continue
		}
		row := RuleRow{Label: e.Label, Rule: StoppingRule(r, c, e.Label), Iterations: FormatIterations(e.Convergence.MedianIterations),
			Median: FormatSE(se.Median), Max: FormatSE(se.Max), Over: percent(float64(se.Over)), OverFlag: se.OverCount > 0}
		if row.Rule == "" {
			row.Rule = "—"
		}
		if rt := e.Convergence.Rate; rt != nil && rt.Fits > 0 {
			row.RateMedian, row.RateKind, row.RateNote = FormatSE(rt.Median), rt.Kind, rt.Note
		}
		rows = append(rows, row)
	}
	return rows
}

// writeRuleTable writes the audited estimators of cell c side by side.
func writeRuleTable(b *strings.Builder, r *Results, c Cell, width int) {
	rows := [][]string{{"estimator", "rule", "iter.", "error SE", "max SE", ">0.01 SE", "rate (median)"}}
	var notes []string
	for _, w := range RuleRows(r, c) {
		rate := "—"
		if w.RateKind != "" {
			rate = w.RateMedian + " " + w.RateKind
			if w.RateNote != "" {
				rate += " *"
				notes = append(notes, "* "+w.Label+": "+w.RateNote)
			}
		}
		rows = append(rows, []string{w.Label, w.Rule, w.Iterations, w.Median, w.Max, w.Over, rate})
	}
	if len(rows) == 1 {
		return
	}
	b.WriteString("\n")
	writeAligned(b, "   ", rows)
	for _, n := range notes {
		wrap(b, n, "   ", "     ", width)
	}
}

// writeAligned writes rows of cells as columns left-aligned by their
// widths in characters, two spaces apart, each line after indent and
// without trailing spaces.
func writeAligned(b *strings.Builder, indent string, rows [][]string) {
	var widths []int
	for _, row := range rows {
		for i, s := range row {
			if i == len(widths) {
				widths = append(widths, 0)
			}
			widths[i] = max(widths[i], runeLen(s))
		}
	}
	for _, row := range rows {
		var l strings.Builder
		for i, s := range row {
			l.WriteString(s + strings.Repeat(" ", widths[i]-runeLen(s)+2))
		}
		b.WriteString(indent + strings.TrimRight(l.String(), " ") + "\n")
	}
}

// writeRootTable writes the bias of each start's root for the estimators
// of cell c searched for roots.
func writeRootTable(b *strings.Builder, c Cell) {
	for _, e := range c.Estimators {
		rs := e.Convergence.Roots
		if rs == nil {
			continue
		}
		fmt.Fprintf(b, "\n   %s: bias of the root reached from each start (mean root − true, ± MCSE)\n", e.Label)
		b.WriteString("   start       converged                best where roots differ\n")
		for _, s := range rs.Starts {
			fmt.Fprintf(b, "   %-11s %-24s %-5s", s.Start, convergedText(s), percent(float64(s.BestRate)))
			for k, m := range s.Bias {
				name := ""
				if k < len(e.Coefficients) {
					name = e.Coefficients[k].Name
				}
				fmt.Fprintf(b, " %s %s", name, pm(m, true))
			}
			b.WriteString("\n")
		}
	}
}

// convergedText is a start's converged refits, with the commonest failure.
func convergedText(s RootStart) string {
	out := strconv.FormatInt(s.Converged, 10)
	var top StatusCount
	for _, f := range s.Failures {
		if f.Count > top.Count {
			top = f
		}
	}
	if top.Count > 0 {
		out += fmt.Sprintf(" (%s %d)", top.Status, top.Count)
	}
	return out
}

// ScenarioStopLines are the audit's answer over all cells, one line per
// audited iterative estimator: the worst cell's share of fits past 0.01 SE
// and the loosest change tolerance that keeps every fit of every cell
// within it. Empty for a run of one cell (the cell's line says it all).
func ScenarioStopLines(r *Results) []string {
	if len(r.Cells) < 2 {
		return nil
	}
	var order []string
	type agg struct {
		rules            map[string]bool
		over, max        float64
		overCell, maxCel int
		overK, overN     int64 // the worst cell's fits over the threshold, of those audited
		tol, cost        float64
		tolKnown         bool
		unsettled        int64
	}
	by := map[string]*agg{}
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			a, ok := AdviseStop(e)
			if !ok {
				continue
			}
			g := by[e.Label]
			if g == nil {
				g = &agg{rules: map[string]bool{}, over: -1, max: -1, tol: math.Inf(1), tolKnown: true, cost: math.Inf(-1)}
				by[e.Label] = g
				order = append(order, e.Label)
			}
			g.rules[StoppingRule(r, c, e.Label)] = true
			g.unsettled += a.Unsettled
			se := e.Convergence.StopError
			if v := float64(se.Over); v > g.over {
				g.over, g.overCell, g.overK, g.overN = v, c.Index, se.OverCount, se.Audited
			}
			if v := float64(se.Max); v > g.max {
				g.max, g.maxCel = v, c.Index
			}
			if math.IsNaN(a.Tolerance) {
				g.tolKnown = false
			} else {
				g.tol = math.Min(g.tol, a.Tolerance)
			}
		}
	}
	// The cost of the common tolerance in each cell: its median
	// iterations there minus the fits' own. The tightest of the cells'
	// own tolerances need not keep every fit of every other cell within
	// the threshold (the error need not fall monotonically), so each cell
	// is checked: every settled fit reached it, none over the threshold.
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			g := by[e.Label]
			if g == nil || !g.tolKnown {
				continue
			}
			if _, ok := AdviseStop(e); !ok {
				continue
			}
			tols := e.Convergence.Tolerances
			i := slices.IndexFunc(tols, func(t ToleranceCost) bool { return t.Tolerance == g.tol })
			if i < 0 || tols[i].Reached < tols[0].Reached || float64(tols[i].Over) != 0 {
				g.tolKnown = false
				continue
			}
			g.cost = math.Max(g.cost, float64(tols[i].MedianIterations)-float64(e.Convergence.MedianIterations))
		}
	}
	var out []string
	for _, label := range order {
		g := by[label]
		head := label
		if len(g.rules) == 1 {
			for rule := range g.rules {
				if rule != "" {
					head += " (" + rule + ")"
				}
			}
		}
		w := Wilson(g.overK, g.overN)
		line := fmt.Sprintf("%s: across the %d cells, at worst %s of fits over 0.01 SE (cell %d: %d of %d; 95%% %s–%s); largest error %s SE (cell %d)",
			head, len(r.Cells), percent(g.over), g.overCell, g.overK, g.overN, percent(float64(w.Low)), percent(float64(w.High)), FormatSE(Num(g.max)), g.maxCel)
		if g.over == 0 {
			line = fmt.Sprintf("%s: across the %d cells, no fit over 0.01 SE; largest error %s SE (cell %d)",
				head, len(r.Cells), FormatSE(Num(g.max)), g.maxCel)
		}
		switch {
		case !g.tolKnown:
			line += " — in some cell no change tolerance down to 1e-14 keeps every fit within 0.01 SE"
		case g.cost > 0:
			line += fmt.Sprintf(" — change %s keeps every fit of every cell within 0.01 SE (up to %s, median per cell)", formatTol(g.tol), iterText(g.cost, "more"))
		case g.cost < 0:
			line += fmt.Sprintf(" — change %s would keep every fit of every cell within 0.01 SE (at least %s, median per cell)", formatTol(g.tol), iterText(-g.cost, "fewer"))
		default:
			line += fmt.Sprintf(" — change %s keeps every fit of every cell within 0.01 SE (as many iterations, median per cell)", formatTol(g.tol))
		}
		if g.unsettled > 0 {
			line += fmt.Sprintf(" [%s never settled, left out]", fits(g.unsettled))
		}
		out = append(out, line)
	}
	return out
}

// solverCSVHeader returns the CSV columns of the solver study, or nil when
// r has none (the CSV is then as without it).
func solverCSVHeader(r *Results) []string {
	if !HasSolverStudy(r) {
		return nil
	}
	return []string{"stop_error_median", "stop_error_max", "stop_error_over_0.01_se",
		"coef_stop_error_median", "coef_stop_error_max", "rate_kind", "rate_median", "roots_multiple"}
}

// solverCSVRow returns the solver-study columns of coefficient k of e.
func solverCSVRow(e Estimator, k int) []string {
	cv := e.Convergence
	out := []string{"NA", "NA", "NA", "NA", "NA", "", "NA", "NA"}
	if se := cv.StopError; se != nil {
		out[0], out[1], out[2] = csvFloat(float64(se.Median)), csvFloat(float64(se.Max)), csvFloat(float64(se.Over))
		if k < len(se.Coefficients) {
			out[3], out[4] = csvFloat(float64(se.Coefficients[k].Median)), csvFloat(float64(se.Coefficients[k].Max))
		}
	}
	if rt := cv.Rate; rt != nil {
		out[5], out[6] = rt.Kind, csvFloat(float64(rt.Median))
	}
	if rs := cv.Roots; rs != nil {
		out[7] = csvFloat(float64(rs.Multiple.Value))
	}
	return out
}

// writeSolverStudyMarkdown writes the solver study's answer for the
// Markdown summary: the lines over all cells, then each cell's.
func writeSolverStudyMarkdown(b *strings.Builder, r *Results) {
	if !HasSolverStudy(r) {
		return
	}
	b.WriteString("\n## How close is converged?\n\nStopping-rule error: the distance of each fit's estimate from the fixed point of its iteration at machine precision, on its worst coefficient, in standard errors.\n\n")
	for _, l := range ScenarioStopLines(r) {
		b.WriteString("- " + mdText(l) + "\n")
	}
	for i, c := range r.Cells {
		if i == markdownMaxCells {
			fmt.Fprintf(b, "\n… and %d more cells (see the HTML report).\n", len(r.Cells)-markdownMaxCells)
			break
		}
		lines := SolverStudyLines(r, c)
		if len(lines) == 0 {
			continue
		}
		fmt.Fprintf(b, "\n**Cell %d**", c.Index)
		if len(c.Settings) > 0 {
			b.WriteString(" (" + mdText(SettingsText(c.Settings)) + ")")
		}
		b.WriteString("\n\n")
		for _, l := range lines {
			b.WriteString("- " + mdText(l) + "\n")
		}
	}
}
