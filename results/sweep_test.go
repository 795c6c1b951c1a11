package results

import "testing"

func TestTargetOf(t *testing.T) {
	for _, c := range []struct {
		path string
		want SweepTarget
	}{
		{"estimators.huber.tuning", SweepTarget{Kind: SweepTuning, Owner: "huber"}},
		{"estimators.hampel.tuning.1", SweepTarget{Kind: SweepTuning, Owner: "hampel", Name: "1"}},
		{"estimators.mine.psi.constants.c", SweepTarget{Kind: SweepPsiConstant, Owner: "mine", Name: "c"}},
		{"estimators.mine.psi.constants", SweepTarget{Kind: SweepPsi, Owner: "mine", Name: "constants"}},
		{"estimators.m.psi", SweepTarget{Kind: SweepPsi, Owner: "m", Name: "psi"}},
		{"estimators.1.stop.change", SweepTarget{Kind: SweepEstimator, Owner: "1"}},
		{"estimators.m", SweepTarget{Kind: SweepEstimator, Owner: "m"}},
		{"contamination.spikes.fraction", SweepTarget{Kind: SweepFraction, Owner: "spikes"}},
		{"contamination.0.fraction", SweepTarget{Kind: SweepFraction, Owner: "0"}},
		{"contamination.spikes.shift", SweepTarget{Kind: SweepContamination, Owner: "spikes"}},
		{"noise.scale", SweepTarget{Kind: SweepNoiseScale}},
		{"noise.mix-fraction", SweepTarget{Kind: SweepOther}},
		{"model.n", SweepTarget{Kind: SweepN}},
		{"model.columns.x.slope", SweepTarget{Kind: SweepOther}},
		{"estimators", SweepTarget{Kind: SweepOther}},
	} {
		if got := TargetOf(c.path); got != c.want {
			t.Errorf("TargetOf(%q) = %+v, want %+v", c.path, got, c.want)
		}
	}
}

func TestShortPath(t *testing.T) {
	for path, want := range map[string]string{
		"contamination.spikes.fraction":   "spikes.fraction",
		"estimators.mine.psi.constants.c": "mine.psi.constants.c",
		"noise.scale":                     "noise.scale",
		"model":                           "model",
	} {
		if got := ShortPath(path); got != want {
			t.Errorf("ShortPath(%q) = %q, want %q", path, got, want)
		}
	}
}
