package scenarios

import (
	"math"
	"testing"
)

// TestSweepTargets checks that the loader resolves each sweep once, by
// label or by index, into what it sets, and reads each cell's number.
func TestSweepTargets(t *testing.T) {
	src := `
model: {n: 40, columns: [{name: x, slope: 1}]}
noise: {dist: normal, scale: 1}
contamination:
  - {label: spikes, kind: vertical, fraction: 0.1, shift: 5}
  - {kind: vertical, fraction: 0, shift: -5}
estimators:
  - {method: ls}
  - {label: hub, method: irls, psi: huber, tuning: 1.345, stop: {change: 1e-8}}
  - {label: mine, method: irls, psi: {expr: r / (1 + abs(r)/c), constants: {c: 1.5}}}
vary:
  estimators.hub.tuning: [1, 2]
  estimators.mine.psi.constants.c: [1.2]
  estimators.1.stop.change: [1e-6]
  estimators.hub.psi: [bisquare]
  contamination.spikes.fraction: [0, 0.1]
  contamination.1.fraction: [0.05]
  contamination.spikes.shift: [4]
  noise.scale: [2]
  model.n: [50]
  model.columns.x.slope: [3]
`
	st, err := Parse("sweeps.yaml", []byte(src), Limits{})
	if err != nil {
		t.Fatal(err)
	}
	want := []SweepTarget{
		{Kind: SweepTuning, Index: 1},
		{Kind: SweepPsiConstant, Index: 2, Name: "c"},
		{Kind: SweepEstimator, Index: 1},
		{Kind: SweepPsi, Index: 1, Name: "psi"},
		{Kind: SweepFraction, Index: 0},
		{Kind: SweepFraction, Index: 1},
		{Kind: SweepContamination, Index: 0},
		{Kind: SweepNoiseScale, Index: -1},
		{Kind: SweepN, Index: -1},
		{Kind: SweepOther, Index: -1},
	}
	if len(st.Base.Vary) != len(want) {
		t.Fatalf("%d sweeps, want %d", len(st.Base.Vary), len(want))
	}
	for i, sw := range st.Base.Vary {
		if sw.Target != want[i] {
			t.Errorf("%s: target %+v, want %+v", sw.Path, sw.Target, want[i])
		}
	}
	// The last cell: hub.tuning 2, spikes.fraction 0.1; every other sweep
	// has one value.
	last := st.Cells[len(st.Cells)-1]
	wantNum := []float64{2, 1.2, 1e-6, math.NaN(), 0.1, 0.05, 4, 2, 50, 3}
	for i, s := range last.Settings {
		if s.Target != want[i] {
			t.Errorf("cell setting %s: target %+v, want %+v", s.Path, s.Target, want[i])
		}
		if s.Number != wantNum[i] && !(math.IsNaN(s.Number) && math.IsNaN(wantNum[i])) {
			t.Errorf("cell setting %s = %s: number %v, want %v", s.Path, s.Value, s.Number, wantNum[i])
		}
	}
	if i, ok := want[1].Estimator(); !ok || i != 2 {
		t.Errorf("Estimator() of a psi constant = %d, %v; want 2, true", i, ok)
	}
	if _, ok := want[4].Estimator(); ok {
		t.Error("a contamination fraction reports an estimator")
	}
}
