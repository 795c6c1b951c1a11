package results

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// WriteTable writes a summary of r for a terminal of the given width (80
// if width ≤ 0). Each cell is a block: a header naming the cell and its
// swept values, then one paragraph per estimator: a line with its
// convergence, and one row per coefficient with bias, empirical SE and
// efficiency against the reference, each as value ± MCSE.
func WriteTable(w io.Writer, r *Results, width int) error {
	if width <= 0 {
		width = 80
	}
	b := &strings.Builder{}
	status := "complete"
	if !r.Complete {
		status = "INCOMPLETE: stopped early"
	}
	fmt.Fprintf(b, "%s · seed %d · %d replicates per cell · %s\n", r.Scenario.Name, r.Seed, r.Replicates, status)
	for _, c := range r.Cells {
		writeCellBlock(b, r, c, width)
	}
	writeBreakdown(b, r, width)
	_, err := io.WriteString(w, b.String())
	return err
}

func writeCellBlock(b *strings.Builder, r *Results, c Cell, width int) {
	b.WriteString("\n")
	rule := "── " + cellNumber(r, c) + " "
	if c.Replicates != int64(r.Replicates) {
		rule += fmt.Sprintf("(%d of %d replicates) ", c.Replicates, r.Replicates)
	}
	b.WriteString(rule + strings.Repeat("─", max(0, width-runeLen(rule))) + "\n")
	for _, s := range c.Settings {
		fmt.Fprintf(b, "   %s = %s\n", s.Path, s.Value)
	}
	for _, e := range c.Estimators {
		b.WriteString("\n")
		writeEstimator(b, r, e, width)
	}
}

// columns of a coefficient row: name, bias, emp SE, efficiency, and the
// gap to theory where there is one.
const (
	colName = 13
	colBias = 19
	colSE   = 19
	colEff  = 18
)

func writeEstimator(b *strings.Builder, r *Results, e Estimator, width int) {
	desc := EstimatorDesc(r, e)
	cv := e.Convergence
	conv := fmt.Sprintf("converged %d/%d", cv.Converged, cv.Fits)
	if cv.MaxIterations > 0 {
		mean, _ := FormatMeasure(cv.MeanIterations, false)
		conv += fmt.Sprintf(" · iterations %s (median %s, max %d)", mean, strconv.FormatFloat(float64(cv.MedianIterations), 'g', -1, 64), cv.MaxIterations)
	}
	hasTheory := !math.IsNaN(float64(e.TheoryEfficiency)) && e.Label != r.Reference
	if hasTheory {
		conv += fmt.Sprintf(" · theory %.4f", float64(e.TheoryEfficiency))
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
	eff := "efficiency"
	if e.Label == r.Reference {
		eff += " (reference)"
	} else {
		eff += " vs " + r.Reference
	}
	gapHead := ""
	if hasTheory {
		gapHead = "gap"
	}
	row(b, "coefficient", "bias", "emp. SE", eff, gapHead)
	heavySE, heavyRE := false, false
	for _, k := range e.Coefficients {
		bias := pm(k.Bias, true)
		se := pm(k.EmpSE, false)
		re := pm(k.RelEff, false)
		if k.HeavyTails {
			heavySE = true
			bias += "*"
			se = notMeaningful
		}
		if k.RelEffHeavyTails && e.Label != r.Reference {
			heavyRE = true
			re = notMeaningful
		}
		if e.Label == r.Reference {
			re = "1"
		}
		name := k.Name
		if runeLen(name) >= colName {
			name = string([]rune(name)[:colName-2]) + "…"
		}
		gap := ""
		if g := float64(k.TheoryGap); hasTheory && !math.IsNaN(g) {
			gap = fmt.Sprintf("%+.1f", g)
			if gap == "-0.0" || gap == "+0.0" {
				gap = "0.0"
			}
		}
		row(b, name, bias, se, re, gap)
	}
	if hasTheory {
		b.WriteString("   (gap: simulated minus asymptotic efficiency, in Monte Carlo SEs)\n")
	}
	switch {
	case heavySE:
		b.WriteString("   * heavy tails: a few replicates carry most of the spread, as when the\n" +
			"     estimates have no finite variance; the emp. SE, the efficiency and\n" +
			"     every Monte Carlo SE resting on a variance (the bias's too) are not\n" +
			"     meaningful (tail_ratio in the JSON)\n")
	case heavyRE:
		b.WriteString("   * heavy tails in the reference's estimates: a few replicates carry most\n" +
			"     of its spread, so the efficiency and its Monte Carlo SE are not\n" +
			"     meaningful (tail_ratio in the JSON)\n")
	}
	writeCoverage(b, e, width)
	if sb := e.SlopeBias; !math.IsNaN(float64(sb.Value)) && len(e.Coefficients) > 2 {
		line := "   slope bias norm " + pm(sb, false)
		if heavySE {
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

// row writes one coefficient row, without trailing blanks; a column whose
// text fills it is followed by one space.
func row(b *strings.Builder, name, bias, se, eff, gap string) {
	cols := []struct {
		text  string
		width int
	}{{name, colName}, {bias, colBias}, {se, colSE}, {eff, colEff}, {gap, 0}}
	line := "  "
	for _, c := range cols {
		line += " " + c.text
		if pad := c.width - runeLen(c.text) - 1; pad > 0 && c.width > 0 {
			line += strings.Repeat(" ", pad)
		}
	}
	b.WriteString(strings.TrimRight(line, " ") + "\n")
}

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
