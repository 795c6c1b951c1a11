package results

import (
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
)

// This file holds the wording that every rendering of results shares: the
// terminal table, the Markdown summary and the HTML report (package report).

// CautionSentence is said in every report and summary.
const CautionSentence = "Simulation results hold for the simulated model only; check an estimator on your own data before relying on it for decisions."

const cautionSentence = CautionSentence

// ToolName is "rhomark 0.1.0", or whatever r records as the program that
// wrote it.
func ToolName(r *Results) string {
	s := strings.TrimSpace(r.Tool.Name + " " + r.Tool.Version)
	if s == "" {
		return "rhomark"
	}
	return s
}

func toolName(r *Results) string { return ToolName(r) }

// Sweep is one swept path and its values, in order of first appearance.
type Sweep struct {
	Path   string
	Values []string
}

// Sweeps lists r's swept paths, in the order the cells give them, with
// their values.
func Sweeps(r *Results) []Sweep {
	var out []Sweep
	at := map[string]int{}
	for _, c := range r.Cells {
		for _, s := range c.Settings {
			i, ok := at[s.Path]
			if !ok {
				i = len(out)
				at[s.Path] = i
				out = append(out, Sweep{Path: s.Path})
			}
			if !slices.Contains(out[i].Values, s.Value) {
				out[i].Values = append(out[i].Values, s.Value)
			}
		}
	}
	return out
}

// sweep is Sweep with the field names the summaries use.
type sweep struct {
	path   string
	values []string
}

func sweepsOf(r *Results) []sweep {
	var out []sweep
	for _, s := range Sweeps(r) {
		out = append(out, sweep{path: s.Path, values: s.Values})
	}
	return out
}

// Percent formats a proportion as a percentage with two significant digits
// ("—" when it is not a finite number).
func Percent(p float64) string {
	v := p * 100
	switch {
	case !finite(v):
		return "—"
	case v == 0:
		return "0%"
	case v >= 10:
		return strconv.FormatFloat(v, 'f', 0, 64) + "%"
	}
	return strconv.FormatFloat(v, 'g', 2, 64) + "%"
}

func percent(p float64) string { return Percent(p) }

// PlusMinus formats a measure as "value ± mcse", to the digits the MCSE
// justifies (see FormatMeasure); just the value when the MCSE is null.
func PlusMinus(m Measure, signed bool) string { return pm(m, signed) }

// CellNumber names a cell by its index, the number every command takes
// (run --cell, replay --cell) and every file records: "cell 2 (cells 0–3)".
func CellNumber(r *Results, c Cell) string {
	return fmt.Sprintf("cell %d (cells 0–%d)", c.Index, len(r.Cells)-1)
}

func cellNumber(r *Results, c Cell) string { return CellNumber(r, c) }

// SettingsText renders settings as "a = 1, b = 2".
func SettingsText(settings []Setting) string {
	parts := make([]string, len(settings))
	for i, s := range settings {
		parts[i] = s.Path + " = " + s.Value
	}
	return strings.Join(parts, ", ")
}

// Capitalise upper-cases the first letter of an ASCII sentence.
func Capitalise(s string) string {
	if s == "" || s[0] < 'a' || s[0] > 'z' {
		return s
	}
	return string(s[0]-'a'+'A') + s[1:]
}

func capitalise(s string) string { return Capitalise(s) }

// isFailure reports whether fits that ended with s failed.
func isFailure(s StatusCount) bool { return !s.Converged }

// finite reports whether every value is a finite number.
func finite(vs ...float64) bool {
	for _, v := range vs {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}

// HeavyTailNote says which measures of cell c are not meaningful because
// the estimates behind them are heavy-tailed (Coefficient.HeavyTails,
// RelEffHeavyTails), or returns "" if none are.
func HeavyTailNote(r *Results, c Cell) string {
	var se, eff []string
	for _, e := range c.Estimators {
		var a, b []string
		for _, k := range e.Coefficients {
			if k.HeavyTails {
				a = append(a, k.Name)
			}
			if k.RelEffHeavyTails && !k.HeavyTails && e.Label != r.Reference {
				b = append(b, k.Name)
			}
		}
		if len(a) > 0 {
			se = append(se, e.Label+" ("+strings.Join(a, ", ")+")")
		}
		if len(b) > 0 {
			eff = append(eff, e.Label+" ("+strings.Join(b, ", ")+")")
		}
	}
	if len(se) == 0 && len(eff) == 0 {
		return ""
	}
	var parts []string
	if len(se) > 0 {
		parts = append(parts, "the emp. SE, the RMSE, the MSE ratio, the variance efficiency and every MCSE resting on a variance of "+strings.Join(se, ", "))
	}
	if len(eff) > 0 {
		parts = append(parts, "the MSE ratio and variance efficiency against a heavy-tailed reference of "+strings.Join(eff, ", "))
	}
	return "Heavy tails: a few replicates carry most of the spread, as when the estimates have no finite variance, so " +
		strings.Join(parts, "; and ") + " are not meaningful; such estimators are not recommended."
}

func heavyTailNote(r *Results, c Cell) string { return HeavyTailNote(r, c) }

// TheoryGap locates a gap between simulation and asymptotic theory.
type TheoryGap struct {
	// Gap is (simulated − asymptotic efficiency) in MCSE of the simulated.
	Gap         float64
	Cell        int    // the cell's index
	Estimator   string // the estimator's label
	Coefficient string // the coefficient's name
	RelEff      Measure
	Theory      float64 // the asymptotic efficiency
}

// Where says in words where the gap is and what the two values are.
func (g TheoryGap) Where() string {
	return fmt.Sprintf("cell %d, %s, %s: simulated efficiency %s against %s from theory",
		g.Cell, g.Estimator, g.Coefficient, pm(g.RelEff, false), strconv.FormatFloat(g.Theory, 'f', 4, 64))
}

// theoryGap is TheoryGap as the summaries call it.
type theoryGap struct {
	TheoryGap
	gap float64
}

func (g theoryGap) where(*Results) string { return g.Where() }

// LargestTheoryGap finds the coefficient whose simulated efficiency lies
// farthest, in MCSE units, from the asymptotic efficiency.
func LargestTheoryGap(r *Results) (TheoryGap, bool) {
	var best TheoryGap
	found := false
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			if e.Label == r.Reference || !finite(float64(e.TheoryEfficiency)) {
				continue
			}
			for _, k := range e.Coefficients {
				g := float64(k.TheoryGap)
				if !finite(g) {
					continue
				}
				if !found || math.Abs(g) > math.Abs(best.Gap) {
					best = TheoryGap{Gap: g, Cell: c.Index, Estimator: e.Label, Coefficient: k.Name, RelEff: k.RelEff, Theory: float64(e.TheoryEfficiency)}
					found = true
				}
			}
		}
	}
	return best, found
}

func largestTheoryGap(r *Results) (theoryGap, bool) {
	g, ok := LargestTheoryGap(r)
	return theoryGap{TheoryGap: g, gap: g.Gap}, ok
}
