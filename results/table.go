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
	_, err := io.WriteString(w, b.String())
	return err
}

func writeCellBlock(b *strings.Builder, r *Results, c Cell, width int) {
	b.WriteString("\n")
	rule := fmt.Sprintf("── cell %d of %d ", c.Index+1, len(r.Cells))
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
	desc := e.Method
	if e.Psi != "" {
		desc += " · " + e.Psi
		for _, t := range e.Tuning {
			desc += " " + strconv.FormatFloat(t, 'g', -1, 64)
		}
	}
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
		if s.Status == "solved" || strings.HasPrefix(s.Status, "converged") || s.Status == "exact-fit" {
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
	for _, k := range e.Coefficients {
		bias := pm(k.Bias, true)
		se := pm(k.EmpSE, false)
		re := pm(k.RelEff, false)
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
}

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
