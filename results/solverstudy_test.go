package results

import (
	"encoding/json"
	"strings"
	"testing"
)

// TestStoppingRule: the rule is the scenario's, with the cell's swept
// values in place whether the sweep names the estimator by label or by its
// position in the list.
func TestStoppingRule(t *testing.T) {
	r := &Results{Scenario: ScenarioInfo{Name: "bench", Normalised: json.RawMessage(
		`{"estimators": [{"label": "ls", "stop": {}}, {"label": "hub", "stop": {"change": 0.001, "max_iter": 100}},
		  {"label": "both", "stop": {"change": 1e-8, "equations": 1e-9, "max_iter": 50, "require": "all"}}]}`)}}
	for _, tc := range []struct {
		label    string
		settings []Setting
		want     string
	}{
		{"hub", nil, "change 1e-3"},
		{"hub", []Setting{{"estimators.hub.stop.change", "1e-6"}}, "change 1e-6"},
		{"hub", []Setting{{"estimators.1.stop.change", "1e-6"}}, "change 1e-6"},
		{"hub", []Setting{{"estimators.2.stop.change", "1e-6"}}, "change 1e-3"},
		{"hub", []Setting{{"estimators.1.stop.max-iter", "20"}}, "change 1e-3, max-iter 20"},
		{"both", nil, "change 1e-8 and equations 1e-9 (all), max-iter 50"},
		{"both", []Setting{{"estimators.2.stop.require", "any"}}, "change 1e-8 or equations 1e-9, max-iter 50"},
		{"ls", nil, ""},
		{"missing", nil, ""},
	} {
		if got := StoppingRule(r, Cell{Settings: tc.settings}, tc.label); got != tc.want {
			t.Errorf("%s %v: %q, want %q", tc.label, tc.settings, got, tc.want)
		}
	}
}

// stopCell is a cell with one estimator "hub" audited on 100 fits, over of
// them beyond the threshold, and the tolerance table rows (tolerance,
// reached, over fraction, median iterations).
func stopCell(index int, over int64, rows [][4]float64) Cell {
	e := Estimator{Label: "hub", Method: "irls"}
	e.Convergence.MedianIterations = 10
	e.Convergence.StopError = &StopError{Audited: 100, OverCount: over, Over: Num(float64(over) / 100), Max: 0.5}
	for _, r := range rows {
		e.Convergence.Tolerances = append(e.Convergence.Tolerances,
			ToleranceCost{Tolerance: r[0], Reached: int64(r[1]), Over: Num(r[2]), MedianIterations: Num(r[3])})
	}
	return Cell{Index: index, Estimators: []Estimator{e}}
}

// TestScenarioStopLines: the common tolerance is the tightest of the
// cells' own, it is offered only when it keeps every fit of every cell
// within the threshold, and the worst cell's share comes with its count
// and Wilson interval (3 of 100: 1.0%–8.5%, Wilson (1927), J. Amer.
// Statist. Assoc. 22:209-212, computed by hand from its formula). A run
// of one cell has no such line.
func TestScenarioStopLines(t *testing.T) {
	grid := func(over2, over3, over4 float64) [][4]float64 {
		return [][4]float64{{1e-2, 100, 0.5, 3}, {1e-3, 100, over2, 5}, {1e-4, 100, over3, 7}, {1e-5, 100, over4, 9}}
	}
	for _, tc := range []struct {
		name  string
		cells []Cell
		want  []string
	}{
		{"cheapest of each cell, the tighter kept",
			[]Cell{stopCell(0, 0, grid(0, 0, 0)), stopCell(1, 3, grid(0.2, 0, 0))},
			[]string{"at worst 3% of fits over 0.01 SE (cell 1: 3 of 100; 95% 1%–8.5%)", "change 1e-4 would keep every fit of every cell within 0.01 SE (at least 3 fewer iterations"}},
		{"the common tolerance fails in another cell",
			[]Cell{stopCell(0, 0, grid(0, 0.1, 0)), stopCell(1, 0, grid(0.2, 0, 0))},
			[]string{"in some cell no change tolerance down to 1e-14 keeps every fit within 0.01 SE"}},
		{"a cell has no such tolerance",
			[]Cell{stopCell(0, 0, grid(0, 0, 0)), stopCell(1, 5, grid(0.3, 0.2, 0.1))},
			[]string{"in some cell no change tolerance"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			r := &Results{Scenario: ScenarioInfo{Normalised: json.RawMessage(`{"estimators": [{"label": "hub", "stop": {"change": 1e-8}}]}`)}, Cells: tc.cells}
			if one := ScenarioStopLines(&Results{Scenario: r.Scenario, Cells: tc.cells[:1]}); one != nil {
				t.Errorf("one cell: %q, want none", one)
			}
			lines := ScenarioStopLines(r)
			if len(lines) != 1 {
				t.Fatalf("%d lines, want 1: %q", len(lines), lines)
			}
			for _, want := range tc.want {
				if !strings.Contains(lines[0], want) {
					t.Errorf("%q lacks %q", lines[0], want)
				}
			}
		})
	}
}
