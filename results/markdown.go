package results

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// Limits that keep the Markdown summary short; what is left out is counted
// and pointed to the HTML report.
const (
	markdownMaxCells    = 12
	markdownMaxProblems = 20
)

// WriteMarkdownSummary writes a short Markdown summary of r for a code
// review: the scenario, seed, replicates and whether the run completed;
// when a tuning constant is swept, the tuning studies' recommendation (see
// Recommend); the verdict of each cell (what to choose by RMSE, ties within 2 combined
// MCSE, and the estimators not recommended); any
// failed fits by status with their rates; and, where asymptotic theory
// applies, the largest gap between simulation and theory in MCSE units.
func WriteMarkdownSummary(w io.Writer, r *Results) error {
	if r == nil {
		return fmt.Errorf("summary: no results")
	}
	b := &strings.Builder{}
	fmt.Fprintf(b, "# rhomark summary: %s\n\n", mdText(r.Scenario.Name))
	status := "complete"
	if !r.Complete {
		status = "**incomplete: stopped early**"
	}
	fmt.Fprintf(b, "- seed %d · %d replicates per cell · %d cells · %s\n", r.Seed, r.Replicates, len(r.Cells), status)
	if h := r.Scenario.Hash; h != "" {
		if len(h) > 12 {
			h = h[:12]
		}
		fmt.Fprintf(b, "- scenario hash %s · %s\n", mdCode(h), mdText(toolName(r)))
	}
	if r.Reference != "" {
		fmt.Fprintf(b, "- MSE ratios and variance efficiencies relative to %s\n", mdCode(r.Reference))
	}
	if sw := sweepsOf(r); len(sw) > 0 {
		parts := make([]string, len(sw))
		for i, s := range sw {
			parts[i] = mdCode(s.path) + " ∈ {" + mdText(strings.Join(s.values, ", ")) + "}"
		}
		fmt.Fprintf(b, "- sweeps: %s\n", strings.Join(parts, "; "))
	}
	fmt.Fprintf(b, "\n> %s\n", cautionSentence)
	writeRecommendationMarkdown(b, r)
	writeSolverStudyMarkdown(b, r)

	// What did best.
	b.WriteString("\n## What did best\n\n")
	fmt.Fprintf(b, "Per cell, the estimator to choose by RMSE (its worst coefficient's RMSE as a multiple of %s's, ± MCSE), then the smallest RMSE and |bias| per coefficient; *tie* lists the others within %d combined MCSE. Not recommended: more than %s of fits failed, or heavy tails.\n", mdCode(r.Reference), TieMCSE, mdText(percent(MaxFailureRate)))
	for i, c := range r.Cells {
		if i == markdownMaxCells {
			fmt.Fprintf(b, "\n… and %d more cells (see the HTML report).\n", len(r.Cells)-markdownMaxCells)
			break
		}
		head := "\n**" + capitalise(cellNumber(r, c)) + "**"
		if len(c.Settings) > 0 {
			parts := make([]string, len(c.Settings))
			for j, s := range c.Settings {
				parts[j] = mdCode(s.Path) + " = " + mdText(s.Value)
			}
			head += " (" + strings.Join(parts, ", ") + ")"
		}
		if c.Replicates != int64(r.Replicates) {
			head += fmt.Sprintf(" — %d of %d replicates", c.Replicates, r.Replicates)
		}
		b.WriteString(head + "\n\n")
		if note := heavyTailNote(r, c); note != "" {
			b.WriteString(mdText(note) + "\n\n")
		}
		rows := verdictRows(r, c)
		if len(rows) == 0 {
			b.WriteString("- nothing to compare\n")
			continue
		}
		for _, row := range rows {
			line := "- " + mdText(row.what) + ": "
			if row.coefficient != "" {
				line += mdText(row.coefficient) + " "
			}
			line += mdCode(row.best)
			if row.value != "" {
				line += " " + mdText(row.value)
			}
			if len(row.tied) > 0 {
				tied := make([]string, len(row.tied))
				for i, t := range row.tied {
					tied[i] = mdCode(t)
				}
				line += " (*tie* with " + strings.Join(tied, ", ") + ")"
			} else if row.others != "" {
				line += " (" + mdText(row.others) + ")"
			}
			b.WriteString(line + "\n")
		}
	}

	// Convergence problems.
	b.WriteString("\n## Convergence problems\n\n")
	var problems []string
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			for _, s := range e.Convergence.Statuses {
				if !isFailure(s) || s.Count == 0 {
					continue
				}
				problems = append(problems, fmt.Sprintf("- cell %d, %s: %s in %d of %d fits (%s, Wilson 95%% CI %s–%s)",
					c.Index, mdCode(e.Label), mdText(s.Status), s.Count, e.Convergence.Fits,
					percent(float64(s.Rate.Value)), percent(float64(s.Rate.Low)), percent(float64(s.Rate.High))))
			}
		}
	}
	if len(problems) == 0 {
		b.WriteString("None: every fit ended with a usable solution.\n")
	} else {
		for i, p := range problems {
			if i == markdownMaxProblems {
				fmt.Fprintf(b, "- … and %d more (see the HTML report)\n", len(problems)-markdownMaxProblems)
				break
			}
			b.WriteString(p + "\n")
		}
	}

	// Theory.
	if g, ok := largestTheoryGap(r); ok {
		b.WriteString("\n## Simulation against theory\n\n")
		fmt.Fprintf(b, "Largest |theory gap|: %s MCSE (%s).\n",
			strconv.FormatFloat(math.Abs(g.gap), 'f', 1, 64), mdText(g.where(r)))
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// mdCode renders s as a Markdown code span, with a fence longer than any
// run of backticks inside it.
func mdCode(s string) string {
	longest, run := 0, 0
	for _, r := range s {
		if r == '`' {
			run++
			longest = max(longest, run)
		} else {
			run = 0
		}
	}
	fence := strings.Repeat("`", longest+1)
	if longest > 0 || strings.HasPrefix(s, "`") || strings.HasSuffix(s, "`") {
		return fence + " " + s + " " + fence
	}
	return fence + s + fence
}

// mdText escapes the characters that Markdown (CommonMark and GitHub's
// tables) would read as markup, and folds line breaks into spaces.
func mdText(s string) string {
	var b strings.Builder
	for _, r := range s {
		switch r {
		case '\\', '`', '*', '_', '[', ']', '<', '>', '|', '#', '~':
			b.WriteByte('\\')
			b.WriteRune(r)
		case '\n', '\r':
			b.WriteByte(' ')
		default:
			b.WriteRune(r)
		}
	}
	return b.String()
}
