package results

import (
	"fmt"
	"io"
	"math"
	"slices"
	"strings"
)

// WriteTable writes a summary of r for a terminal of the given width (100
// if width ≤ 0). It leads with the answer: one line per cell saying which
// estimator to choose and how sure that is (see Decide). Then, per cell, a
// compact table with a row per estimator × coefficient: bias, SE, RMSE,
// MSE ratio and variance efficiency against the reference, and coverage,
// each to the digits its MCSE justifies. A run with a solver study puts
// its answer over all cells after the verdicts. Last come the details:
// iterations, failures by status, coverage with its MCSE, the gap to
// theory, each cell's solver study, and the bias curves.
func WriteTable(w io.Writer, r *Results, width int) error {
	if width <= 0 {
		width = 100
	}
	b := &strings.Builder{}
	status := "complete"
	if !r.Complete {
		status = "INCOMPLETE: stopped early"
	}
	fmt.Fprintf(b, "%s · seed %d · %d replicates per cell · %s\n", r.Scenario.Name, r.Seed, r.Replicates, status)
	writeRecommendation(b, r, width)
	writeVerdicts(b, r, width)
	writeSolverSummary(b, r, width)
	for _, c := range r.Cells {
		writeCellTable(b, r, c, width)
	}
	b.WriteString("\n")
	rule := "── details: solvers, coverage, theory "
	b.WriteString(rule + strings.Repeat("─", max(0, width-runeLen(rule))) + "\n")
	for _, c := range r.Cells {
		writeCellDetails(b, r, c, width)
	}
	writeSolverCells(b, r, width)
	writeBreakdown(b, r, width)
	_, err := io.WriteString(w, b.String())
	return err
}

// writeVerdicts writes the answer: one line (wrapped to width) per cell.
func writeVerdicts(b *strings.Builder, r *Results, width int) {
	b.WriteString("\n")
	rule := "── what to choose "
	b.WriteString(rule + strings.Repeat("─", max(0, width-runeLen(rule))) + "\n")
	wrap(b, fmt.Sprintf("By RMSE, which counts bias and spread together (each value ± its MCSE). "+
		"An estimator's score is its RMSE on its worst coefficient as a multiple of %s's on the same datasets; "+
		"×2 after another estimator means twice the choice's score. Tied: within %d combined MCSE. "+
		"Not recommended: more than %s of fits failed, or heavy tails.",
		r.Reference, TieMCSE, percent(MaxFailureRate)), "   ", "   ", width)
	b.WriteString("\n")
	for _, c := range r.Cells {
		wrap(b, verdictLine(r, c), "   ", "       ", width)
	}
}

// verdictLine is the one-line answer for cell c: the choice with its RMSE
// per coefficient, then the tied estimators or the runner-up, each with
// its overall score as a multiple of the choice's, then the estimators
// left out.
func verdictLine(r *Results, c Cell) string {
	v := VerdictOf(r, c)
	head := fmt.Sprintf("cell %d", c.Index)
	if len(c.Settings) > 0 {
		head += " (" + shortSettings(c.Settings, " ", ", ") + ")"
	}
	if c.Replicates != int64(r.Replicates) {
		head += fmt.Sprintf(" [%d of %d replicates]", c.Replicates, r.Replicates)
	}
	if c.Replicates == 0 {
		// Nothing was fitted: saying why each estimator is left out would
		// blame the estimators for a run that stopped.
		return head + ": no replicate finished, so nothing to compare (the run stopped before this cell)"
	}
	var line string
	if v.Choice == "" {
		line = head + ": no estimator to recommend"
	} else {
		best := v.Ranking[0]
		line = head + ": choose " + best.Estimator
		if best.Estimator == r.Reference {
			line += " (the reference)"
		}
		for _, e := range c.Estimators {
			if e.Label != best.Estimator {
				continue
			}
			var parts []string
			for _, k := range e.Coefficients {
				if len(e.Coefficients) <= 3 || k.Name == best.Worst {
					parts = append(parts, k.Name+" "+pm(k.RMSE, false))
				}
			}
			line += ", RMSE " + strings.Join(parts, ", ")
		}
		// Others as multiples of the choice's score (see relativeScore).
		rel := func(k Ranked) string { return k.Estimator + " " + relativeScore(best, k) }
		var tied []string
		next := ""
		for _, k := range v.Ranking[1:] {
			if k.Tied {
				tied = append(tied, rel(k))
			} else if next == "" {
				next = rel(k)
			}
		}
		switch {
		case len(tied) > 0:
			line += "; tied with " + strings.Join(tied, ", ")
			if next != "" {
				line += "; next " + next
			}
		case next != "":
			line += "; next " + next + ", not tied"
		default:
			line += "; the only estimator ranked"
		}
	}
	if len(v.NotRecommended) > 0 {
		var ex []string
		for _, e := range v.NotRecommended {
			ex = append(ex, e.Estimator+" ("+exclusionShort(c, e)+")")
		}
		line += "; not recommended: " + strings.Join(ex, ", ")
	}
	return line
}

// relativeScore formats k's score as a multiple q of best's, "×q ± m",
// with m the MCSE of the difference of the scores, √(m_k² + m_best²),
// over best's score: the quantity Decide's tie rule uses, so k is tied
// exactly when q − 1 ≤ TieMCSE·m. (For the reference as best, m_best is
// 0 and m_k is paired.)
func relativeScore(best, k Ranked) string {
	sb := float64(best.Score.Value)
	q := float64(k.Score.Value) / sb
	m := math.Hypot(nanZero(float64(k.Score.MCSE)), nanZero(float64(best.Score.MCSE))) / sb
	return "×" + pm(Measure{Value: Num(q), MCSE: Num(m)}, false)
}

// nanZero returns x, or 0 when x is not finite (a null MCSE).
func nanZero(x float64) float64 {
	if !finite(x) {
		return 0
	}
	return x
}

// exclusionShort says in a few words why an estimator is left out.
func exclusionShort(c Cell, e Exclusion) string {
	switch e.Reason {
	case TooManyFailures:
		for _, est := range c.Estimators {
			if est.Label == e.Estimator && est.Convergence.Fits > 0 {
				cv := est.Convergence
				return percent(float64(cv.Fits-cv.Converged)/float64(cv.Fits)) + " of fits failed"
			}
		}
		return "too many failed fits"
	case HeavyTailedEstimates:
		return "heavy tails"
	case NoConvergedFit:
		return "no fit converged"
	}
	return e.Reason.String()
}

// wrap writes text as lines of at most width runes, breaking at spaces;
// the first line starts with first, the others with rest.
func wrap(b *strings.Builder, text, first, rest string, width int) {
	// Keep "value ± mcse" and "×value" together on one line.
	const glue = "\x00"
	text = strings.ReplaceAll(text, " ± ", glue+"±"+glue)
	line := first
	fresh := true
	for _, word := range strings.Fields(text) {
		word = strings.ReplaceAll(word, glue, " ")
		if !fresh && runeLen(line)+1+runeLen(word) > width {
			b.WriteString(line + "\n")
			line, fresh = rest, true
		}
		if !fresh {
			line += " "
		}
		line += word
		fresh = false
	}
	b.WriteString(line + "\n")
}

// cellRow is one estimator × coefficient row of a cell's compact table.
type cellRow struct {
	est  int    // index of the estimator; -1 for a heading
	text string // a heading line, when est < 0
	cols [7]string
}

// writeCellTable writes a cell's compact table.
func writeCellTable(b *strings.Builder, r *Results, c Cell, width int) {
	b.WriteString("\n")
	rule := "── " + cellNumber(r, c) + " "
	if c.Replicates != int64(r.Replicates) {
		rule += fmt.Sprintf("(%d of %d replicates) ", c.Replicates, r.Replicates)
	}
	b.WriteString(rule + strings.Repeat("─", max(0, width-runeLen(rule))) + "\n")
	for _, s := range c.Settings {
		fmt.Fprintf(b, "   %s = %s\n", s.Path, s.Value)
	}
	v := VerdictOf(r, c)
	ref := r.Reference
	var rows []cellRow
	heavySE, heavyRatio := false, false
	for i, e := range c.Estimators {
		head := " ▸ " + e.Label
		if e.Label == ref {
			head += " (reference)"
		}
		switch {
		case e.Label == v.Choice:
			head += " ◂ choice"
		case slices.Contains(v.Tied, e.Label):
			head += " ◂ tied with the choice"
		}
		cv := e.Convergence
		head += fmt.Sprintf(" · converged %d/%d", cv.Converged, cv.Fits)
		if f := cv.Fits - cv.Converged; f > 0 {
			head += fmt.Sprintf(" (%s failed)", percent(float64(f)/float64(cv.Fits)))
		}
		if !math.IsNaN(float64(e.TheoryEfficiency)) && e.Label != ref {
			head += fmt.Sprintf(" · theory var. eff. %.3f", float64(e.TheoryEfficiency))
		}
		rows = append(rows, cellRow{est: -1, text: head})
		for _, k := range e.Coefficients {
			bias, se, rmse := pm(k.Bias, true), pm(k.EmpSE, false), pm(k.RMSE, false)
			ratio, eff := pm(k.MSERatio, false), pm(k.RelEff, false)
			if k.HeavyTails {
				heavySE = true
				bias += "*"
				se, rmse = notMeaningful, notMeaningful
			}
			if e.Label == ref {
				ratio, eff = "1", "1"
			} else if k.RelEffHeavyTails {
				heavyRatio = true
				ratio, eff = notMeaningful, notMeaningful
			}
			cover := ""
			if k.Intervals > 0 {
				cover, _ = FormatMeasure(k.Coverage, false)
			}
			name := k.Name
			if runeLen(name) > 12 {
				name = string([]rune(name)[:11]) + "…"
			}
			rows = append(rows, cellRow{est: i, cols: [7]string{name, bias, se, rmse, ratio, eff, cover}})
		}
	}
	header := [2][7]string{
		{"", "", "", "", "MSE ratio", "var. eff.", ""},
		{"coef.", "bias", "SE", "RMSE", "vs " + ref, "vs " + ref, "cover"},
	}
	writeColumns(b, header, rows, width)
	if heavySE || heavyRatio {
		b.WriteString("   * heavy tails: a few replicates carry most of the spread, as when the estimates have\n" +
			"     no finite variance: the measures marked are not meaningful (tail_ratio in the JSON)\n")
	}
}

// writeColumns lays out rows under a two-line header, each column as wide
// as its widest entry. If that exceeds width, it narrows the gaps, then
// drops the spaces around ±, then narrows the gaps again.
func writeColumns(b *strings.Builder, header [2][7]string, rows []cellRow, width int) {
	for _, style := range []struct {
		gap   int
		tight bool
	}{{2, false}, {1, false}, {2, true}, {1, true}} {
		var widths [7]int
		fit := func(cols [7]string) [7]string {
			if style.tight {
				for j := range cols {
					cols[j] = strings.ReplaceAll(cols[j], " ± ", "±")
				}
			}
			return cols
		}
		for _, h := range header {
			for j, t := range h {
				widths[j] = max(widths[j], runeLen(t))
			}
		}
		for _, rw := range rows {
			if rw.est < 0 {
				continue
			}
			for j, t := range fit(rw.cols) {
				widths[j] = max(widths[j], runeLen(t))
			}
		}
		total := 3
		for _, w := range widths {
			total += w + style.gap
		}
		if total-style.gap > width && !(style.tight && style.gap == 1) {
			continue
		}
		line := func(cols [7]string) {
			s := "  "
			for j, t := range cols {
				s += strings.Repeat(" ", style.gap-1) + " " + t + strings.Repeat(" ", widths[j]-runeLen(t))
			}
			b.WriteString(strings.TrimRight(s, " ") + "\n")
		}
		line(header[0])
		line(header[1])
		for _, rw := range rows {
			if rw.est < 0 {
				b.WriteString(rw.text + "\n")
				continue
			}
			line(fit(rw.cols))
		}
		return
	}
}

// writeCellDetails writes, per estimator of cell c, its iterations,
// failures by status, coverage with MCSE, slope bias and gap to theory.
func writeCellDetails(b *strings.Builder, r *Results, c Cell, width int) {
	b.WriteString("\n   " + cellNumber(r, c))
	if len(c.Settings) > 0 {
		b.WriteString(": " + shortSettings(c.Settings, " ", ", "))
	}
	b.WriteString("\n")
	for _, e := range c.Estimators {
		writeEstimator(b, r, e, width)
	}
}

func writeEstimator(b *strings.Builder, r *Results, e Estimator, width int) {
	desc := EstimatorDesc(r, e)
	cv := e.Convergence
	conv := fmt.Sprintf("converged %d/%d", cv.Converged, cv.Fits)
	if cv.MaxIterations > 0 {
		mean, _ := FormatMeasure(cv.MeanIterations, false)
		conv += fmt.Sprintf(" · iterations %s (median %s, max %d)", mean, FormatIterations(cv.MedianIterations), cv.MaxIterations)
	}
	head := fmt.Sprintf(" ▸ %s (%s)", e.Label, desc)
	if runeLen(head)+3+runeLen(conv) <= width {
		b.WriteString(head + "   " + conv + "\n")
	} else {
		b.WriteString(head + "\n   " + conv + "\n")
	}
	for _, s := range cv.Statuses {
		if !isFailure(s) {
			continue
		}
		v, _ := FormatMeasure(Measure{Value: s.Rate.Value * 100, MCSE: 0.05}, false)
		fmt.Fprintf(b, "   ! %s: %d fits (%s%%, 95%% CI %.1f–%.1f%%)\n", s.Status, s.Count, v, float64(s.Rate.Low)*100, float64(s.Rate.High)*100)
	}
	heavy := false
	for _, k := range e.Coefficients {
		heavy = heavy || k.HeavyTails
	}
	writeCoverage(b, e, width)
	if !math.IsNaN(float64(e.TheoryEfficiency)) && e.Label != r.Reference {
		var parts []string
		for _, k := range e.Coefficients {
			if g := float64(k.TheoryGap); !math.IsNaN(g) {
				gap := fmt.Sprintf("%+.1f", g)
				if gap == "-0.0" || gap == "+0.0" {
					gap = "0.0"
				}
				parts = append(parts, k.Name+" "+gap)
			}
		}
		if len(parts) > 0 {
			wrap(b, fmt.Sprintf("var. eff. minus theory %.4f, in MCSEs: %s", float64(e.TheoryEfficiency), strings.Join(parts, ", ")), "   ", "     ", width)
		}
	}
	if sb := e.SlopeBias; !math.IsNaN(float64(sb.Value)) && len(e.Coefficients) > 2 {
		line := "   slope bias norm " + pm(sb, false)
		if heavy {
			line = "   slope bias norm " + notMeaningful
		}
		if pt := e.PastThreshold; pt != nil {
			v, _ := FormatMeasure(Measure{Value: pt.Value * 100, MCSE: 0.05}, false)
			line += fmt.Sprintf(" · past threshold in %s%% of replicates", v)
		}
		b.WriteString(line + "\n")
	}
}

// writeCoverage writes the coverage of the 95% intervals, wrapped to width.
func writeCoverage(b *strings.Builder, e Estimator, width int) {
	var parts []string
	for _, k := range e.Coefficients {
		if k.Intervals == 0 {
			return
		}
		parts = append(parts, k.Name+" "+pm(k.Coverage, false))
	}
	if len(parts) == 0 {
		return
	}
	line := "   95% intervals cover:"
	for _, p := range parts {
		if runeLen(line)+1+runeLen(p)+1 > width {
			b.WriteString(line + "\n")
			line = "     "
		}
		line += " " + p + ","
	}
	b.WriteString(strings.TrimSuffix(line, ",") + "\n")
}

// notMeaningful stands in for a measure that rests on a variance the
// estimates do not appear to have.
const notMeaningful = "not meaningful*"

// pm formats a measure as "value ± mcse".
func pm(m Measure, signed bool) string {
	v, e := FormatMeasure(m, signed)
	if e == "" {
		return v
	}
	return v + " ± " + e
}

func runeLen(s string) int { return len([]rune(s)) }

// writeBreakdown writes the bias curves and breakdown points, if any.
func writeBreakdown(b *strings.Builder, r *Results, width int) {
	bd := r.Breakdown
	if bd == nil || len(bd.Curve) == 0 {
		return
	}
	b.WriteString("\n")
	rule := "── bias curves: slope-bias norm against " + bd.Fraction + " "
	b.WriteString(rule + strings.Repeat("─", max(0, width-runeLen(rule))) + "\n")
	head := fmt.Sprintf("   %-9s %-16s %-22s", "fraction", "estimator", "bias")
	if len(bd.WorstOver) > 0 {
		head += " worst over positions"
	}
	b.WriteString(strings.TrimRight(head, " ") + "\n")
	last := ""
	for _, pt := range bd.Curve {
		var rest []string
		for _, s := range pt.Settings {
			if s.Path != bd.Fraction {
				rest = append(rest, s.Path+" = "+s.Value)
			}
		}
		if key := strings.Join(rest, ", "); key != last && key != "" {
			b.WriteString("   " + key + "\n")
			last = key
		}
		line := fmt.Sprintf("   %-9g %-16s %-22s", pt.Fraction, pt.Estimator, pm(pt.Bias, false))
		if len(bd.WorstOver) > 0 {
			line += " " + pm(pt.Worst, false)
		}
		b.WriteString(strings.TrimRight(line, " ") + "\n")
	}
	if len(bd.Points) > 0 {
		fmt.Fprintf(b, "\n   breakdown (worst slope-bias norm above %g) first reached at:\n", bd.Threshold)
		for _, p := range bd.Points {
			frac := "not within the swept fractions"
			if !math.IsNaN(float64(p.Fraction)) {
				frac = fmt.Sprintf("fraction %g", float64(p.Fraction))
				if p.PastThreshold != nil {
					frac += fmt.Sprintf(" (%.0f%% of replicates past it)", float64(p.PastThreshold.Value)*100)
				}
			}
			var rest []string
			for _, s := range p.Settings {
				rest = append(rest, s.Path+" = "+s.Value)
			}
			where := ""
			if len(rest) > 0 {
				where = " [" + strings.Join(rest, ", ") + "]"
			}
			fmt.Fprintf(b, "   %-16s %s%s\n", p.Estimator, frac, where)
		}
	}
}
