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

// tuningGrid is a study's table in parts: the level tags and their
// legend ("A = shifted.fraction 0 (clean)"), and per row (the header
// first, then one per constant) the constant, its level cells and its
// summary cells (worst case, clean efficiency, theory, marks); excluded
// lists the constants left out, with the reason.
type tuningGrid struct {
	tags, legend           []string
	names, levels, summary [][]string
	excluded               []string
}

// newTuningGrid builds the table of a study.
func newTuningGrid(ts TuningStudy) tuningGrid {
	letters := "ABCDEFGHIJKLMNOPQRSTUVWXYZ"
	var g tuningGrid
	for l, lv := range ts.Levels {
		tag := string(letters[l%len(letters)])
		if l >= len(letters) {
			tag += strconv.Itoa(l / len(letters))
		}
		name := levelName(lv)
		if lv.Clean {
			name += " (clean)"
		}
		g.tags = append(g.tags, tag)
		g.legend = append(g.legend, tag+" = "+name)
	}
	if len(ts.Levels) == 1 {
		g.tags[0] = "score"
	}
	// Per constant: its name, its level cells and its summary cells.
	g.names = [][]string{{ts.Name}}
	g.levels = [][]string{g.tags}
	g.summary = [][]string{{"worst case", "clean eff.", "theory", ""}}
	for _, tc := range ts.Constants {
		g.names = append(g.names, []string{tc.Value})
		var row []string
		for _, pt := range tc.Points {
			switch {
			case pt.Excluded != "":
				row = append(row, "excluded")
			default:
				row = append(row, cellScore(pt.Score))
			}
		}
		g.levels = append(g.levels, row)
		worst := cellScore(tc.WorstCase)
		if tc.Excluded != "" {
			worst = "—"
			g.excluded = append(g.excluded, tc.Value+": "+tc.Excluded)
		}
		theory := "—"
		if t := float64(tc.TheoryEfficiency); !math.IsNaN(t) {
			theory = fmt.Sprintf("%.4f", t)
		}
		var marks []string
		if tc.Value == ts.RecommendedValue {
			marks = append(marks, "choice")
		} else if tc.InRange {
			marks = append(marks, "within 2 MCSE")
		}
		if tc.Value == ts.Target.Value {
			marks = append(marks, "target")
		}
		mark := ""
		if len(marks) > 0 {
			mark = "◂ " + strings.Join(marks, ", ")
		}
		g.summary = append(g.summary, []string{worst, pm(tc.Efficiency, false), theory, mark})
	}
	return g
}

// table returns the rows with the level columns from to to, and the
// summary columns when withSummary.
func (g tuningGrid) table(from, to int, withSummary bool) [][]string {
	rows := make([][]string, len(g.names))
	for i := range g.names {
		rows[i] = append(append([]string{}, g.names[i]...), g.levels[i][from:to]...)
		if withSummary {
			rows[i] = append(rows[i], g.summary[i]...)
		}
	}
	return rows
}

// writeTuningTable writes a study's table: a row per constant, a column
// per level, the worst case and the efficiency on clean data. Levels that
// do not fit in width go to continuation tables below, each with the
// constants again.
func writeTuningTable(b *strings.Builder, ts TuningStudy, target float64, width int) {
	g := newTuningGrid(ts)
	if len(ts.Levels) > 1 {
		if line := "   levels: " + strings.Join(g.legend, " · "); runeLen(line) <= width {
			b.WriteString(line + "\n")
		} else {
			b.WriteString("   levels:\n")
			for _, l := range g.legend {
				wrap(b, l, "     ", "         ", width)
			}
		}
	}
	table, excluded := g.table, g.excluded
	n := len(ts.Levels)
	if gridWidth(table(0, n, true), false) <= width || gridWidth(table(0, n, true), true) <= width {
		writeGrid(b, table(0, n, true), width)
	} else {
		// As many levels as fit beside the summary, then the rest.
		to := 1
		for to < n && gridWidth(table(0, to+1, true), true) <= width {
			to++
		}
		writeGrid(b, table(0, to, true), width)
		for from := to; from < n; {
			next := from + 1
			for next < n && gridWidth(table(from, next+1, false), true) <= width {
				next++
			}
			b.WriteString("\n")
			writeGrid(b, table(from, next, false), width)
			from = next
		}
	}
	for _, x := range excluded {
		wrap(b, "excluded "+x, "   ", "     ", width)
	}
}

// cellScore formats a score for a table cell: "best" when exactly the
// best, otherwise "value ± MCSE".
func cellScore(m Measure) string {
	if float64(m.Value) == 1 && float64(m.MCSE) == 0 {
		return "best"
	}
	return pm(m, false)
}

// gridWidth returns the width writeGrid gives rows, the last column (the
// marks) included, with or without the spaces around ±.
func gridWidth(rows [][]string, tight bool) int {
	var widths []int
	for _, row := range rows {
		for j, t := range row {
			if tight {
				t = strings.ReplaceAll(t, " ± ", "±")
			}
			if j >= len(widths) {
				widths = append(widths, 0)
			}
			widths[j] = max(widths[j], runeLen(t))
		}
	}
	total := 2
	for _, w := range widths {
		total += w + 2
	}
	return total - 2
}

// writeGrid writes rows as left-aligned columns two spaces apart, indented
// by three; when that is wider than width it drops the spaces around ±.
func writeGrid(b *strings.Builder, rows [][]string, width int) {
	tight := gridWidth(rows, false) > width
	widths := make([]int, 0)
	cells := make([][]string, len(rows))
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
			widths[j] = max(widths[j], runeLen(t))
		}
	}
	for _, row := range cells {
		s := "  "
		for j, t := range row {
			s += " " + t + strings.Repeat(" ", max(0, widths[j]-runeLen(t))+1)
		}
		b.WriteString(strings.TrimRight(s, " ") + "\n")
	}
}

// writeRecommendationMarkdown writes the tuning studies of r, if any, as
// Markdown: the same sentences and table as the terminal (see
// TuningSummaries), the level tags spelt out in the header.
func writeRecommendationMarkdown(b *strings.Builder, r *Results) {
	studies, notes := TuningSummaries(r)
	rec := RecommendationOf(r)
	for si, s := range studies {
		ts := rec.Studies[si]
		fmt.Fprintf(b, "\n## Tuning study: %s, %s\n\n", mdCode(ts.Estimator), mdCode(ts.Path))
		for _, line := range s.Lines {
			b.WriteString("- " + mdText(line) + "\n")
		}
		for i, row := range s.Table {
			cells := make([]string, len(row))
			for j, v := range row {
				cells[j] = mdText(v)
			}
			if i == 0 {
				for l, lv := range ts.Levels {
					name := levelName(lv)
					if lv.Clean {
						name += " (clean)"
					}
					cells[1+l] = "score at " + mdText(name)
				}
				b.WriteString("\n| " + strings.Join(cells, " | ") + " |\n|" + strings.Repeat("---|", len(cells)) + "\n")
				continue
			}
			b.WriteString("| " + strings.Join(cells, " | ") + " |\n")
		}
		for _, x := range s.Excluded {
			b.WriteString("\n" + mdText("Excluded "+x) + "\n")
		}
	}
	for _, n := range notes {
		b.WriteString("\n" + mdText("Tuning: "+n) + "\n")
	}
}

// TuningSummary is one tuning study as every output shows it: a title, the
// answer in sentences, and a table.
type TuningSummary struct {
	// Title names the estimator and the swept path.
	Title string
	// Lines are the answer's sentences, as the terminal prints them.
	Lines []string
	// Legend names the levels ("A = shifted.fraction 0 (clean)"); empty
	// when there is one level.
	Legend []string
	// Table is the header row, then a row per constant: the constant, its
	// score at each level, its worst case, clean efficiency (simulated ±
	// MCSE), asymptotic efficiency and marks (choice, within 2 MCSE,
	// target).
	Table [][]string
	// Excluded lists the constants left out, with the reason.
	Excluded []string
}

// TuningSummaries returns the tuning studies of r in the words and table
// of the terminal and the Markdown summary, for other formats (the HTML
// report), and the notes on sweeps that could not be studied.
func TuningSummaries(r *Results) ([]TuningSummary, []string) {
	rec := RecommendationOf(r)
	if rec == nil {
		return nil, nil
	}
	var out []TuningSummary
	for _, ts := range rec.Studies {
		g := newTuningGrid(ts)
		s := TuningSummary{Title: ts.Estimator + ", " + ts.Path, Lines: recommendationLines(ts, rec.TargetEfficiency),
			Table: g.table(0, len(ts.Levels), true), Excluded: g.excluded}
		if len(ts.Levels) > 1 {
			s.Legend = g.legend
		}
		out = append(out, s)
	}
	return out, rec.Notes
}
