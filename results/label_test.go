package results

import (
	"encoding/json"
	"testing"
)

// TestEstimatorDesc: descriptions show the psi and its constants to six
// digits, a custom psi's named constants from the recorded scenario, and
// no constants where a cell sweeps the psi.
func TestEstimatorDesc(t *testing.T) {
	norm := json.RawMessage(`{"estimators": [{"label": "mine", "method": "irls",
		"psi": {"expr": "r / (1 + abs(r)/c) * d", "constants": {"d": 1, "c": 1.23456789}}},
		{"label": "bis", "method": "irls", "psi": "bisquare", "tuning": [4.685064948543376]}]}`)
	r := &Results{Scenario: ScenarioInfo{Normalised: norm}}
	swept := &Results{Scenario: ScenarioInfo{Normalised: norm},
		Cells: []Cell{{Settings: []Setting{{Path: "estimators.mine.psi.constants.c", Value: "2"}}}}}
	for _, tc := range []struct {
		r    *Results
		e    Estimator
		want string
	}{
		{r, Estimator{Label: "ls", Method: "ls"}, "ls"},
		{r, Estimator{Label: "h", Method: "irls", Psi: "huber", Tuning: []float64{1.345}}, "irls · huber 1.345"},
		{r, Estimator{Label: "bis", Method: "mm-estimate", Psi: "bisquare", Tuning: []float64{4.685064948543376}}, "mm-estimate · bisquare 4.68506"},
		{r, Estimator{Label: "hp", Method: "newton", Psi: "hampel", Tuning: []float64{2, 4, 8}}, "newton · hampel 2 4 8"},
		{r, Estimator{Label: "mine", Method: "irls", Psi: "custom"}, "irls · custom d = 1 c = 1.23457"},
		{swept, Estimator{Label: "mine", Method: "irls", Psi: "custom"}, "irls · custom"},
		{&Results{Scenario: ScenarioInfo{Normalised: json.RawMessage(`not json`)}}, Estimator{Label: "mine", Method: "irls", Psi: "custom"}, "irls · custom"},
	} {
		if got := EstimatorDesc(tc.r, tc.e); got != tc.want {
			t.Errorf("%s: %q, want %q", tc.e.Label, got, tc.want)
		}
	}
}
