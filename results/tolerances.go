package results

import (
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// The change-tolerance table of the solver audit: for each audited
// iterative estimator, what each change tolerance from 1e-2 to 1e-14 would
// have cost (median iterations) and left (error from the fixed point, in
// standard errors), so that a user can pick a tolerance.

// HasToleranceStudy reports whether any estimator of r has a
// change-tolerance table (it was audited and is iterative).
func HasToleranceStudy(r *Results) bool {
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			if len(e.Convergence.Tolerances) > 0 {
				return true
			}
		}
	}
	return false
}

// CheapestTolerance is the change tolerance that AdviseStop recommends
// for e: the loosest, and so the one needing fewest iterations, at which
// every audited fit that settled was within StopErrorThreshold standard
// errors of its fixed point. ok is false when e was not audited, is a
// direct method, or no tolerance down to 1e-14 keeps every fit within it.
func CheapestTolerance(e Estimator) (tol float64, ok bool) {
	a, audited := AdviseStop(e)
	if !audited || math.IsNaN(a.Tolerance) {
		return 0, false
	}
	return a.Tolerance, true
}

// toleranceRows returns the indices of the tolerance rows that the
// terminal shows, given the cheapest tolerance (NaN for none). All 13 rows of a full table would double the audit's
// length for every estimator of every cell, and the rows far past the
// answer say only that a tighter tolerance costs about one more iteration
// per decade. So the table starts at the loosest tolerance that some fit
// reached (looser rows have no fit to describe), runs to the cheapest
// tolerance keeping every fit within 0.01 SE, and adds the next two
// tighter ones: enough to see the price of a safety margin. When no
// tolerance keeps every fit within 0.01 SE, every reached row is shown,
// since then the whole table is the answer.
func toleranceRows(rows []ToleranceCost, cheapest float64) []int {
	first := -1
	for i, row := range rows {
		if row.Reached > 0 {
			first = i
			break
		}
	}
	if first < 0 {
		return nil
	}
	last := len(rows) - 1
	if !math.IsNaN(cheapest) {
		for i, row := range rows {
			if row.Tolerance == cheapest {
				last = min(len(rows)-1, i+2)
				break
			}
		}
	}
	var out []int
	for i := first; i <= last; i++ {
		if rows[i].Reached > 0 {
			out = append(out, i)
		}
	}
	return out
}

// writeToleranceTables writes, for the audited iterative estimators of
// cell c, the change tolerances they could have used: median iterations,
// median and largest error left, and the share of fits over 0.01 SE, the
// cheapest tolerance keeping every fit within 0.01 SE marked. Estimators
// whose tables read the same (the same method and psi stopped by
// different rules iterate alike) share one table, to keep the block short.
func writeToleranceTables(b *strings.Builder, c Cell, width int) {
	var order []string
	labels := map[string][]string{}
	for _, e := range c.Estimators {
		body := toleranceTable(e)
		if body == "" {
			continue
		}
		if labels[body] == nil {
			order = append(order, body)
		}
		labels[body] = append(labels[body], e.Label)
	}
	for _, body := range order {
		b.WriteString("\n")
		wrap(b, strings.Join(labels[body], ", ")+": by change tolerance (medians over the fits that reached it)", "   ", "     ", width)
		b.WriteString(body)
	}
}

// toleranceTable renders the rows of e's table that toleranceRows picks,
// under their head; "" when there are none.
func toleranceTable(e Estimator) string {
	const mark = "◂ cheapest with every fit within 0.01 SE"
	a, audited := AdviseStop(e)
	tol := math.NaN()
	if audited {
		tol = a.Tolerance
	}
	rows := e.Convergence.Tolerances
	idx := toleranceRows(rows, tol)
	if len(idx) == 0 {
		return ""
	}
	ok := !math.IsNaN(tol)
	table := [][]string{{"change", "fits", "iter.", "error SE", "max SE", ">0.01 SE"}}
	for _, i := range idx {
		row := rows[i]
		line := []string{formatTol(row.Tolerance), strconv.FormatInt(row.Reached, 10), FormatIterations(row.MedianIterations),
			FormatSE(row.MedianErrorSE), FormatSE(row.MaxErrorSE), percent(float64(row.Over))}
		if ok && row.Tolerance == tol {
			line = append(line, mark)
		}
		table = append(table, line)
	}
	var b strings.Builder
	writeAligned(&b, "     ", table)
	if !ok {
		b.WriteString("     no change tolerance down to 1e-14 keeps every fit within 0.01 SE\n")
	}
	if audited && a.Unsettled > 0 {
		fmt.Fprintf(&b, "     (%s never settled below 1e-2 and %s not in this table)\n", fits(a.Unsettled), map[bool]string{true: "is", false: "are"}[a.Unsettled == 1])
	}
	return b.String()
}

// WriteTolerancesCSV writes the change-tolerance tables of r as tidy CSV,
// one row per cell × estimator × tolerance, for the estimators audited
// (see ToleranceCost); it reports whether r had any. cheapest is true on
// the row of CheapestTolerance. Floats are written in full precision, so
// the file reads back the JSON's values exactly, and in cell and
// estimator order, so it does not depend on workers or shards.
func WriteTolerancesCSV(w io.Writer, r *Results) (bool, error) {
	if !HasToleranceStudy(r) {
		return false, nil
	}
	cw := csv.NewWriter(w)
	header := []string{"scenario", "cell"}
	if len(r.Cells) > 0 {
		for _, s := range r.Cells[0].Settings {
			header = append(header, s.Path)
		}
	}
	header = append(header, "estimator", "stopping_rule", "audited", "tolerance", "reached",
		"median_iterations", "median_error_se", "max_error_se", "over_0.01_se", "cheapest")
	if err := cw.Write(header); err != nil {
		return true, err
	}
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			if len(e.Convergence.Tolerances) == 0 {
				continue
			}
			audited := "NA"
			if se := e.Convergence.StopError; se != nil {
				audited = strconv.FormatInt(se.Audited, 10)
			}
			tol, ok := CheapestTolerance(e)
			rule := StoppingRule(r, c, e.Label)
			for _, row := range e.Convergence.Tolerances {
				rec := []string{r.Scenario.Name, strconv.Itoa(c.Index)}
				for _, s := range c.Settings {
					rec = append(rec, s.Value)
				}
				rec = append(rec, e.Label, rule, audited, csvFloat(row.Tolerance),
					strconv.FormatInt(row.Reached, 10), csvFloat(float64(row.MedianIterations)),
					csvFloat(float64(row.MedianErrorSE)), csvFloat(float64(row.MaxErrorSE)),
					csvFloat(float64(row.Over)), strconv.FormatBool(ok && row.Tolerance == tol))
				if err := cw.Write(rec); err != nil {
					return true, err
				}
			}
		}
	}
	cw.Flush()
	if err := cw.Error(); err != nil {
		return true, fmt.Errorf("tolerances CSV: %w", err)
	}
	return true, nil
}
