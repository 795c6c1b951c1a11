package results

import (
	"fmt"
	"math"
	"strconv"
	"strings"
)

// writeRecommendation writes the tuning studies of r, if any, for a
// terminal of the given width: per study a short block with the answer
// (the recommended constant, its worst-case score ± MCSE, the constants
// within 2 MCSE of it, the smallest constant meeting the target efficiency,
// the caveat), then a table with a row per constant: its score at each
// level, its worst case and its efficiency on clean data.
func writeRecommendation(b *strings.Builder, r *Results, width int) {
	rec := RecommendationOf(r)
	if rec == nil {
		return
	}
	for _, ts := range rec.Studies {
		b.WriteString("\n")
		rule := "── tuning study: " + ts.Estimator + ", " + ts.Path + " "
		b.WriteString(rule + strings.Repeat("─", max(0, width-runeLen(rule))) + "\n")
		for _, line := range recommendationLines(ts, rec.TargetEfficiency) {
			wrap(b, line, "   ", "     ", width)
		}
		b.WriteString("\n")
		writeTuningTable(b, ts, rec.TargetEfficiency, width)
	}
	for _, n := range rec.Notes {
		wrap(b, "tuning: "+n, "   ", "     ", width)
	}
}

// constantName is how a study's constant is named in sentences:
// "huber.tuning", "mine.c".
func constantName(ts TuningStudy) string { return ts.Estimator + "." + ts.Name }

// recommendationLines are the sentences of a study's answer, shared by the
// terminal and the Markdown summary.
func recommendationLines(ts TuningStudy, target float64) []string {
	name := constantName(ts)
	var lines []string
	if math.IsNaN(float64(ts.Recommended)) {
		lines = append(lines, "no "+name+" can be recommended: each is excluded at some level (see the table)")
	} else {
		line := fmt.Sprintf("choose %s = %s: at worst its RMSE is %s times that of the best swept constant", name, ts.RecommendedValue, scoreText(ts.Score))
		exact := float64(ts.Score.Value) == 1 && float64(ts.Score.MCSE) == 0
		if exact {
			line = fmt.Sprintf("choose %s = %s: of the swept constants it has the smallest RMSE on every coefficient at every level", name, ts.RecommendedValue)
		}
		for _, tc := range ts.Constants {
			if tc.Value != ts.RecommendedValue {
				continue
			}
			if tc.WorstLevel >= 0 && !exact {
				pt := tc.Points[tc.WorstLevel]
				line += " (" + pt.Worst + ", at " + levelName(ts.Levels[tc.WorstLevel]) + ")"
			}
			if eff := cleanEfficiency(tc); eff != "" && tc.Value != ts.Target.Value {
				line += "; its efficiency on clean data is " + eff
			}
		}
		switch ts.GridEnd {
		case LowEnd:
			line += "; it is the smallest swept: extend the grid downwards"
		case HighEnd:
			line += "; it is the largest swept: extend the grid upwards"
		}
		lines = append(lines, line)
		var rng []string
		for _, tc := range ts.Constants {
			if tc.InRange {
				rng = append(rng, tc.Value)
			}
		}
		if len(ts.Range) == 1 {
			lines = append(lines, fmt.Sprintf("no other swept constant is within %d combined MCSE of it", TieMCSE))
		} else {
			lines = append(lines, fmt.Sprintf("within %d combined MCSE of it, so not told apart by this run: %s (more replicates narrow this)", TieMCSE, strings.Join(rng, ", ")))
		}
	}
	tp := ts.Target
	head := fmt.Sprintf("smallest constant with efficiency ≥ %s on clean data", strconv.FormatFloat(target, 'g', -1, 64))
	switch {
	case tp.Basis == NoBasis:
		lines = append(lines, head+": none to measure, "+tp.Note)
	case math.IsNaN(float64(tp.Constant)):
		lines = append(lines, head+": "+tp.Note)
	default:
		line := head + ": " + tp.Value
		if tp.Basis == Asymptotic {
			line += fmt.Sprintf(" (asymptotic %.4f", float64(tp.Efficiency.Value))
			for _, tc := range ts.Constants {
				if tc.Value == tp.Value && !math.IsNaN(float64(tc.Efficiency.Value)) {
					line += ", simulated " + pm(tc.Efficiency, false)
				}
			}
			line += ")"
		} else {
			line += " (simulated " + pm(tp.Efficiency, false) + ", not below the target by more than " + strconv.Itoa(TieMCSE) + " MCSE; no asymptotic figure applies)"
		}
		for _, tc := range ts.Constants {
			if tc.Value == tp.Value && tc.Value != ts.RecommendedValue && tc.Excluded == "" {
				line += "; at worst its RMSE is " + scoreText(tc.WorstCase) + " times the best's"
			}
		}
		if tp.Note != "" {
			line += "; " + tp.Note
		}
		lines = append(lines, line)
	}
	lines = append(lines, "score: RMSE on the worst coefficient ÷ the best swept constant's at that level, same datasets. "+
		"MCSEs of differences treat the constants as independent, so the range is if anything too wide")
	return lines
}

// cleanEfficiency describes a constant's efficiency on clean data: the
// asymptotic figure where there is one, otherwise the simulated one; ""
// without a clean level.
func cleanEfficiency(tc TuningConstant) string {
	if t := float64(tc.TheoryEfficiency); !math.IsNaN(t) {
		return fmt.Sprintf("%.4f (asymptotic)", t)
	}
	if !math.IsNaN(float64(tc.Efficiency.Value)) {
		return pm(tc.Efficiency, false) + " (simulated)"
	}
	return ""
}

// scoreText formats a score: "1 (the best)" when exactly the best,
// otherwise "value ± MCSE".
func scoreText(m Measure) string {
	if float64(m.Value) == 1 && float64(m.MCSE) == 0 {
		return "1 (the best)"
	}
	return pm(m, false)
}

// writeTuningTable writes a study's table: a row per constant, a column
// per level, the worst case and the efficiency on clean data.
func writeTuningTable(b *strings.Builder, ts TuningStudy, target float64, width int) {
	letters := "ABCDEFGHIJKLMNOPQRSTUVWXYZ"
	var legend []string
	for l, lv := range ts.Levels {
		tag := string(letters[l%len(letters)])
		if l >= len(letters) {
			tag += strconv.Itoa(l / len(letters))
		}
		name := levelName(lv)
		if lv.Clean {
			name += " (clean)"
		}
		legend = append(legend, tag+" = "+name)
	}
	if len(ts.Levels) > 1 {
		wrap(b, "levels: "+strings.Join(legend, " · "), "   ", "     ", width)
	}
	head := []string{ts.Name}
	for l := range ts.Levels {
		if len(ts.Levels) == 1 {
			head = append(head, "score")
		} else {
			head = append(head, strings.SplitN(legend[l], " ", 2)[0])
		}
	}
	head = append(head, "worst case", "clean eff.", "theory", "")
	rows := [][]string{head}
	var excluded []string
	for _, tc := range ts.Constants {
		row := []string{tc.Value}
		for _, pt := range tc.Points {
			switch {
			case pt.Excluded != "":
				row = append(row, "excluded")
			default:
				row = append(row, scoreText(pt.Score))
			}
		}
		if tc.Excluded != "" {
			row = append(row, "—")
			excluded = append(excluded, tc.Value+": "+tc.Excluded)
		} else {
			row = append(row, scoreText(tc.WorstCase))
		}
		eff, theory := pm(tc.Efficiency, false), "—"
		if t := float64(tc.TheoryEfficiency); !math.IsNaN(t) {
			theory = fmt.Sprintf("%.4f", t)
		}
		row = append(row, eff, theory)
		var marks []string
		if tc.Value == ts.RecommendedValue {
			marks = append(marks, "choice")
		} else if tc.InRange {
			marks = append(marks, "within 2 MCSE")
		}
		if tc.Value == ts.Target.Value {
			marks = append(marks, "target "+strconv.FormatFloat(target, 'g', -1, 64))
		}
		mark := ""
		if len(marks) > 0 {
			mark = "◂ " + strings.Join(marks, ", ")
		}
		rows = append(rows, append(row, mark))
	}
	writeGrid(b, rows, width)
	for _, x := range excluded {
		wrap(b, "excluded "+x, "   ", "     ", width)
	}
}

// writeGrid writes rows as left-aligned columns two spaces apart, indented
// by three; when that is wider than width it drops the spaces around ±.
func writeGrid(b *strings.Builder, rows [][]string, width int) {
	for _, tight := range []bool{false, true} {
		cells := make([][]string, len(rows))
		var widths []int
		for i, row := range rows {
			cells[i] = make([]string, len(row))
			for j, t := range row {
				if tight {
					t = strings.ReplaceAll(t, " ± ", "±")
				}
				cells[i][j] = t
				if j >= len(widths) {
					widths = append(widths, 0)
				}
				if j < len(row)-1 { // the last column (the marks) may run on
					widths[j] = max(widths[j], runeLen(t))
				}
			}
		}
		total := 3
		for _, w := range widths {
			total += w + 2
		}
		if total > width && !tight {
			continue
		}
		for _, row := range cells {
			s := "  "
			for j, t := range row {
				s += " " + t + strings.Repeat(" ", max(0, widths[j]-runeLen(t))+1)
			}
			b.WriteString(strings.TrimRight(s, " ") + "\n")
		}
		return
	}
}

// writeRecommendationMarkdown writes the tuning studies of r, if any, as
// Markdown: the same sentences as the terminal, then a table with a row
// per constant.
func writeRecommendationMarkdown(b *strings.Builder, r *Results) {
	rec := RecommendationOf(r)
	if rec == nil {
		return
	}
	for _, ts := range rec.Studies {
		fmt.Fprintf(b, "\n## Tuning study: %s, %s\n\n", mdCode(ts.Estimator), mdCode(ts.Path))
		for _, line := range recommendationLines(ts, rec.TargetEfficiency) {
			b.WriteString("- " + mdText(line) + "\n")
		}
		head := []string{mdText(ts.Name)}
		for _, lv := range ts.Levels {
			name := levelName(lv)
			if lv.Clean {
				name += " (clean)"
			}
			head = append(head, "score at "+mdText(name))
		}
		head = append(head, "worst case", "efficiency (clean)", "theory", "")
		b.WriteString("\n| " + strings.Join(head, " | ") + " |\n|" + strings.Repeat("---|", len(head)) + "\n")
		for _, tc := range ts.Constants {
			row := []string{mdText(tc.Value)}
			for _, pt := range tc.Points {
				if pt.Excluded != "" {
					row = append(row, "excluded")
				} else {
					row = append(row, mdText(scoreText(pt.Score)))
				}
			}
			if tc.Excluded != "" {
				row = append(row, "excluded: "+mdText(tc.Excluded))
			} else {
				row = append(row, mdText(scoreText(tc.WorstCase)))
			}
			theory := "—"
			if t := float64(tc.TheoryEfficiency); !math.IsNaN(t) {
				theory = fmt.Sprintf("%.4f", t)
			}
			var marks []string
			if tc.Value == ts.RecommendedValue {
				marks = append(marks, "**choice**")
			} else if tc.InRange {
				marks = append(marks, "within 2 MCSE")
			}
			if tc.Value == ts.Target.Value {
				marks = append(marks, "target "+strconv.FormatFloat(rec.TargetEfficiency, 'g', -1, 64))
			}
			row = append(row, mdText(pm(tc.Efficiency, false)), theory, strings.Join(marks, ", "))
			b.WriteString("| " + strings.Join(row, " | ") + " |\n")
		}
	}
	for _, n := range rec.Notes {
		b.WriteString("\n" + mdText("Tuning: "+n) + "\n")
	}
}
