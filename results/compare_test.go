package results

import (
	"bytes"
	"encoding/json"
	"math"
	"strings"
	"testing"
)

func TestFloatJSON(t *testing.T) {
	for _, v := range []float64{0, -1.5, 1e-300, math.Inf(1), math.Inf(-1), math.NaN()} {
		b, err := json.Marshal(Float(v))
		if err != nil {
			t.Fatal(err)
		}
		var back Float
		if err := json.Unmarshal(b, &back); err != nil {
			t.Fatal(err)
		}
		if f := float64(back); f != v && !(math.IsNaN(f) && math.IsNaN(v)) {
			t.Errorf("%v → %s → %v", v, b, f)
		}
	}
	var f Float
	if err := json.Unmarshal([]byte(`"inf"`), &f); err == nil {
		t.Error(`"inf" accepted`)
	}
}

// TestComparisonJSONRoundTrip: a comparison with every part filled in,
// infinities and NaNs included, reads back equal and re-encodes to the
// same bytes.
func TestComparisonJSONRoundTrip(t *testing.T) {
	nan := Float(math.NaN())
	c := &Comparison{Schema: CompareSchemaVersion,
		Baseline:  RunInfo{Path: "base/bench.json", Scenario: "bench", File: "bench.yaml", Hash: "ab", Seed: 7, Replicates: 200, ReplicateFile: "bench.replicates"},
		Candidate: RunInfo{Path: "cand/bench.json", Scenario: "bench", File: "cand/bench.yaml", Hash: "cd", Seed: 7, Replicates: 200},
		Settings:  []SettingChange{{"estimators.bisquare.stop.max_iter", SettingSolver, "100", "20"}},
		Notes:     []string{"a note"},
		Failures: FailureReport{Test: FailurePaired, Alpha: 0.05, Tested: 1, Tests: []FailureTest{{Cell: 1, Settings: []Setting{{"contamination.spikes.fraction", "0.1"}},
			Estimator: "bisquare", BaselineFits: 200, CandidateFits: 200, CandidateFailed: 16, NewFailures: 16, P: Float(PairedExactP(16, 0)), Flagged: true}}},
		Audit: &AuditReport{Alpha: 0.05, Tested: 1, Tests: []AuditTest{{Cell: 2, Estimator: "bisquare", Check: SeveralRoots, Baseline: 3, BaselineOf: 200, Candidate: 30, CandidateOf: 200,
			BaselineMedian: nan, CandidateMedian: nan, P: Float(FisherExactP(3, 200, 30, 200)), Flagged: true}}},
		Threshold: 4, Alpha: math.Erfc(4 / math.Sqrt2), Correction: "Holm", Tested: 2, CriticalZ: Float(holmCriticalZ(math.Erfc(4/math.Sqrt2), 2)),
		Differences: []Difference{{Cell: 0, Estimator: "huber", Coefficient: "volume", Measure: "rel_eff", Baseline: 0.9, Candidate: nan, Diff: nan, MCSE: 0.01, Z: Float(math.Inf(1)), Flagged: true},
			{Cell: 0, Estimator: "huber", Measure: "mean_iterations", Baseline: 7, Candidate: 7, Diff: 0, MCSE: nan, Z: nan}},
		Paired: &PairedReport{Tolerance: 1e-9, Fits: 800, Missing: 0, MaxAbsDiff: Float(math.Inf(1)), Moved: 17, StatusChanged: 16, NewFailures: 16, IterationChanged: 16,
			Transitions: map[string]int{"converged-change → iteration-limit": 16},
			Estimators:  []PairedEstimator{{Cell: 1, Estimator: "bisquare", Fits: 200, MaxAbsDiff: 3e-5, Moved: 17, StatusChanged: 16, NewFailures: 16, CandidateFailed: 16, IterationChanged: 16, MeanIterDelta: -0.4}},
			StatusChanges: []StatusChange{{Cell: 1, Replicate: 17, Estimator: "bisquare", Kind: NewFailure, Baseline: "converged-change", Candidate: "iteration-limit",
				BaselineIterations: 34, CandidateIterations: 20, Coefficient: "volume", Diff: 1e-6, SEUnits: 2e-3}},
			Moves: []Move{{Cell: 1, Replicate: 3, Estimator: "bisquare", Status: "converged-change", Coefficient: "intercept", Baseline: 0.31, Candidate: 0.32, Diff: 0.01, SEUnits: nan}}},
		Replay: "rhomark replay cand/bench.yaml --cell 1 --replicate 17 --estimator bisquare",
	}
	var b bytes.Buffer
	if err := WriteComparisonJSON(&b, []*Comparison{c}); err != nil {
		t.Fatal(err)
	}
	back, err := ReadComparisonJSON(bytes.NewReader(b.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	var again bytes.Buffer
	if err := WriteComparisonJSON(&again, back); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(b.Bytes(), again.Bytes()) {
		t.Errorf("re-encoded JSON differs:\n%s\n%s", b.Bytes(), again.Bytes())
	}
	if len(back) != 1 || !math.IsInf(float64(back[0].Differences[0].Z), 1) || !math.IsNaN(float64(back[0].Differences[0].Candidate)) ||
		!math.IsInf(float64(back[0].Paired.MaxAbsDiff), 1) || back[0].Failures.Test != FailurePaired || back[0].Settings[0].Kind != SettingSolver ||
		back[0].Paired.StatusChanges[0].Kind != NewFailure || back[0].Audit == nil || back[0].Audit.Tests[0].Check != SeveralRoots || back[0].Paired.StatusChanges[0] != c.Paired.StatusChanges[0] {
		t.Errorf("values lost in the round trip: %+v", back[0])
	}
	if _, err := ReadComparisonJSON(strings.NewReader(`[{"compare_schema": 2}]`)); err == nil {
		t.Error("a later schema was accepted")
	}
}
