package harness

import (
	"context"
	"math"
	"testing"
)

// familiesScenario fits every psi family at its default tuning to the same
// clean normal datasets with n = 400. The defaults are the 95%-efficiency
// constants of Holland & Welsch (1977), Comm. Statist. Theory Methods
// 6:813-827, for andrews, bisquare, cauchy, fair, huber, logistic, talwar
// and welsch; hampel (2, 4, 8) and lad are checked against the theory
// rhomark computes for them.
const familiesScenario = `
seed: 424242
model:
  n: 400
  intercept: 0.5
  columns:
    - {name: x1, slope: 1, dist: normal}
    - {name: x2, slope: -1, dist: uniform, min: -2, max: 2}
noise: {dist: normal, scale: 2}
estimators:
  - {label: ls, method: ls}
  - {label: andrews, psi: andrews}
  - {label: bisquare, psi: bisquare}
  - {label: cauchy, psi: cauchy}
  - {label: fair, psi: fair}
  - {label: hampel, psi: hampel, stop: {max-iter: 500}}
  - {label: huber, psi: huber}
  - {label: logistic, psi: logistic}
  - {label: talwar, psi: talwar, stop: {max-iter: 500}}
  - {label: welsch, psi: welsch}
  - {label: lad, psi: lad, stop: {change: 1e-7, max-iter: 5000}}
`

// TestSimulatedEfficiencyMatchesTheory: for each family the simulated
// efficiency of each slope against least squares must lie within 4 MCSE of
// the asymptotic efficiency rhomark's theory gives (which the estimators
// tests tie to the published constants).
func TestSimulatedEfficiencyMatchesTheory(t *testing.T) {
	st := parse(t, familiesScenario)
	res, err := Run(context.Background(), st, Options{Replicates: 2000})
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range res.Cells[0].Estimators[1:] {
		th := float64(e.TheoryEfficiency)
		if math.IsNaN(th) {
			t.Errorf("%s: no theory in a clean normal cell", e.Label)
			continue
		}
		fail := e.Convergence.Fits - e.Convergence.Converged
		if e.Label == "talwar" {
			// Hard rejection with a MAD scale re-estimated at every
			// iteration can cycle between two sets of kept residuals;
			// that must show as the iteration limit, not as a wrong
			// answer (about 1.5% of fits here).
			for _, s := range e.Convergence.Statuses {
				if s.Status != "converged-change" && s.Status != "iteration-limit" {
					t.Errorf("talwar: unexpected status %s", s.Status)
				}
			}
			t.Logf("talwar: %d of %d fits cycled to the iteration limit", fail, e.Convergence.Fits)
		} else if float64(fail) > 0.01*float64(e.Convergence.Fits) {
			// Our requirement of the solvers, not a sampled figure: at most
			// 1% of fits of a clean normal model may fail to converge.
			t.Errorf("%s: %d of %d fits did not converge", e.Label, fail, e.Convergence.Fits)
		}
		for _, c := range e.Coefficients[1:] {
			re, se := float64(c.RelEff.Value), float64(c.RelEff.MCSE)
			if math.Abs(re-th) > 4*se {
				t.Errorf("%s %s: simulated efficiency %.4f ± %.4f, theory %.4f (gap %.1f MCSE)", e.Label, c.Name, re, se, th, float64(c.TheoryGap))
			}
			t.Logf("%-9s %s: simulated %.4f ± %.4f, theory %.4f", e.Label, c.Name, re, se, th)
		}
	}
}
