package results

import (
	"math"
	"strings"
	"testing"
)

// issueResults is an invented cell like the one in the issue: least
// squares has the smallest spread and the highest variance efficiency but
// a bias of −0.71, so its RMSE is the largest. The verdict is stored or
// left to be computed, as chosen.
func issueResults(stored bool) *Results {
	nan := math.NaN()
	ests := []Estimator{
		vest("ls", 0, vcoef("intercept", 0.02, 0.003, 0.1, 0.002, 0.1, nan), vcoef("gain", -0.71, 0.0016, 0.7118, 0.0017, 0.7118, nan)),
		vest("huber", 0, vcoef("intercept", 0.01, 0.003, 0.09, 0.002, 0.1, 0.03), vcoef("gain", 0.05, 0.003, 0.103, 0.0025, 0.7118, 2.0)),
		vest("lts", 30, vcoef("intercept", 0.0, 0.003, 0.05, 0.002, 0.1, 0.03), vcoef("gain", 0.0, 0.003, 0.05, 0.0025, 0.7118, 2.0)),
	}
	for i := range ests {
		for j := range ests[i].Coefficients {
			k := &ests[i].Coefficients[j]
			k.EmpSE = Measure{Value: Num(0.05 * float64(i+1)), MCSE: 0.002}
			k.RelEff = Measure{Value: Num(1 / float64((i+1)*(i+1))), MCSE: 0.01}
			k.Intervals = 1000
			k.Coverage = Proportion(900, 1000)
		}
	}
	ests[0].Coefficients[0].RelEff = Measure{Value: 1, MCSE: 0}
	ests[0].Coefficients[1].RelEff = Measure{Value: 1, MCSE: 0}
	ests[1].TheoryEfficiency = Num(nan)
	ests[2].TheoryEfficiency = Num(nan)
	ests[0].TheoryEfficiency = 1
	for i, m := range []string{"ls", "irls", "lts"} {
		ests[i].Method = m
	}
	c := Cell{Index: 0, Replicates: 1000, Estimators: ests,
		Settings: []Setting{{Path: "contamination.spikes.fraction", Value: "0.1"}, {Path: "contamination.mislabelled.fraction", Value: "0.03"}}}
	if stored {
		v := Decide(c, "ls")
		c.Verdict = &v
	}
	return &Results{Scenario: ScenarioInfo{Name: "bench"}, Replicates: 1000, Complete: true, Reference: "ls", Cells: []Cell{c}}
}

// TestTableLeadsWithTheAnswer: the first thing after the title is the
// verdict, which must name huber (not the biased least squares with the
// smaller spread, nor lts with 3% failed fits), before any per-cell
// table; the reference is never shown ranked against itself; labels say
// variance efficiency; lines fit 100 columns.
func TestTableLeadsWithTheAnswer(t *testing.T) {
	for _, stored := range []bool{true, false} {
		var b strings.Builder
		if err := WriteTable(&b, issueResults(stored), 100); err != nil {
			t.Fatal(err)
		}
		out := b.String()
		choose := strings.Index(out, "choose huber")
		table := strings.Index(out, "── cell 0")
		if choose < 0 || table < 0 || choose > table {
			t.Errorf("stored %v: the verdict 'choose huber' does not come before the cell table:\n%s", stored, out)
		}
		flat := strings.Join(strings.Fields(out), " ") // the verdict lines wrap
		for _, want := range []string{"what to choose", "not recommended: lts (3% of fits failed)", "var. eff.", "MSE ratio", "RMSE", "◂ choice", "details"} {
			if !strings.Contains(flat, want) {
				t.Errorf("stored %v: output lacks %q:\n%s", stored, want, out)
			}
		}
		for _, bad := range []string{"choose ls", " 1 ± 0", "efficiency vs", "×1 ±"} {
			if strings.Contains(out, bad) {
				t.Errorf("stored %v: output contains %q:\n%s", stored, bad, out)
			}
		}
		for _, line := range strings.Split(out, "\n") {
			if n := runeLen(line); n > 100 {
				t.Errorf("line of %d columns: %q", n, line)
			}
		}
	}
}

// TestUnfinishedCellBlamesNoEstimator: a cell the run stopped before has no
// fits; its verdict says so instead of listing every estimator as having
// no converged fit.
func TestUnfinishedCellBlamesNoEstimator(t *testing.T) {
	r := issueResults(false)
	r.Complete = false
	c := &r.Cells[0]
	c.Replicates = 0
	for i := range c.Estimators {
		c.Estimators[i].Convergence = Convergence{}
	}
	var b strings.Builder
	if err := WriteTable(&b, r, 100); err != nil {
		t.Fatal(err)
	}
	flat := strings.Join(strings.Fields(b.String()), " ")
	if !strings.Contains(flat, "no replicate finished, so nothing to compare") || strings.Contains(flat, "no fit converged") {
		t.Errorf("unfinished cell:\n%s", b.String())
	}
}
