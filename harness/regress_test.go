package harness

import (
	"bytes"
	"context"
	"io"
	"strings"
	"testing"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/psi"
	"github.com/rhomark/rhomark/results"
)

// runKept runs the flow-meter scenario with 64 replicates, keeping
// replicates, with an optional solver adjustment.
func runKept(t *testing.T, workers int, adjust func(int, string, *estimators.Estimator)) (*results.Results, []byte) {
	t.Helper()
	st := parse(t, flowMeterLike)
	var buf bytes.Buffer
	res, err := Run(context.Background(), st, Options{Workers: workers, Replicates: 64, KeepReplicates: &buf, Adjust: adjust})
	if err != nil {
		t.Fatal(err)
	}
	return res, buf.Bytes()
}

const flowMeterLike = `
seed: 31
model:
  n: 40
  intercept: 0.3
  columns: [{name: volume, slope: 0.98, dist: levels, levels: [5, 10, 20, 50, 100]}]
noise: {dist: normal, scale: 0.15, grows-with: {column: volume, rate: 0.01}}
contamination:
  - {label: spikes, kind: vertical, fraction: 0.1, shift: 6, spread: 1}
estimators:
  - {label: ls, method: ls}
  - {label: huber, method: irls, psi: huber}
  - {label: bisquare, method: newton, psi: bisquare}
  - {label: mm, method: mm-estimate, resampling: {subsets: 50}}
`

func source(b []byte) results.ReplicateSource {
	return func() (io.ReadCloser, error) { return io.NopCloser(bytes.NewReader(b)), nil }
}

// TestPairedCatchesPerturbedSolver: an unchanged solver passes the paired
// comparison; a looser stopping tolerance (1e-4 instead of 1e-8), a change
// far below Monte Carlo noise, is caught replicate by replicate.
func TestPairedCatchesPerturbedSolver(t *testing.T) {
	base, baseReps := runKept(t, 2, nil)
	same, sameReps := runKept(t, 1, nil)
	if !bytes.Equal(baseReps, sameReps) {
		t.Fatal("replicate files differ between 1 and 2 workers")
	}
	c, err := results.Compare(base, same, source(baseReps), source(sameReps), results.CompareOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if c.Flagged() || c.Paired == nil || c.Paired.Fits != 64*4 || c.Paired.MaxAbsDiff != 0 {
		t.Fatalf("unchanged solver flagged: %+v", c.Paired)
	}

	loose := func(_ int, label string, e *estimators.Estimator) {
		if label == "huber" {
			e.Settings.ChangeTol = 1e-4
		}
	}
	cand, candReps := runKept(t, 2, loose)
	c, err = results.Compare(base, cand, source(baseReps), source(candReps), results.CompareOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if !c.Flagged() || c.Paired.Moved == 0 || c.Paired.IterationChanged == 0 {
		t.Fatalf("perturbed solver not caught: %+v", c.Paired)
	}
	// The estimates move far below Monte Carlo noise: summary mode flags
	// at most huber's mean iterations, which a looser tolerance really
	// lowers, and no bias, SE or efficiency.
	for _, d := range c.Differences {
		if d.Flagged && !(d.Estimator == "huber" && d.Measure == "mean_iterations") {
			t.Errorf("summary mode flagged %s %s %s", d.Estimator, d.Coefficient, d.Measure)
		}
	}
	for _, pe := range c.Paired.Estimators {
		if pe.Estimator != "huber" && (pe.Moved > 0 || pe.IterationChanged > 0) {
			t.Errorf("estimator %s changed though only huber was perturbed", pe.Estimator)
		}
	}
	var md bytes.Buffer
	results.WriteComparisonMarkdown(&md, c)
	if !bytes.Contains(md.Bytes(), []byte("| huber |")) {
		t.Errorf("Markdown report does not list huber:\n%s", md.String())
	}
}

// TestSummaryFlagsRealChange: a change of the tuning constant moves the
// efficiency and bias beyond Monte Carlo error, and summary mode flags it
// even across different seeds.
func TestSummaryFlagsRealChange(t *testing.T) {
	st := parse(t, flowMeterLike)
	a, err := Run(context.Background(), st, Options{Replicates: 400})
	if err != nil {
		t.Fatal(err)
	}
	seed := uint64(99)
	b, err := Run(context.Background(), st, Options{Replicates: 400, Seed: &seed, Adjust: func(_ int, label string, e *estimators.Estimator) {
		if label == "huber" {
			e.Psi = psi.Huber{K: 0.3}
		}
	}})
	if err != nil {
		t.Fatal(err)
	}
	c, err := results.Compare(a, b, nil, nil, results.CompareOptions{})
	if err != nil {
		t.Fatal(err)
	}
	flaggedHuber := false
	for _, d := range c.Differences {
		if d.Flagged && d.Estimator != "huber" {
			t.Errorf("unchanged estimator flagged: %+v", d)
		}
		flaggedHuber = flaggedHuber || (d.Flagged && d.Estimator == "huber")
	}
	if !flaggedHuber {
		t.Error("k = 0.3 instead of 1.345 not flagged")
	}
	if c.Paired != nil {
		t.Error("paired mode across different seeds")
	}
}

// TestCompareOlderSchema: a results file of schema 1 has no RMSE or MSE
// ratio; compared with a run of this build, those measures are left out,
// not read as zeros and flagged, while the measures both record are still
// compared (and here, the same run, equal).
func TestCompareOlderSchema(t *testing.T) {
	st := parse(t, flowMeterLike)
	run, err := Run(context.Background(), st, Options{Replicates: 64})
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := results.WriteJSON(&b, run); err != nil {
		t.Fatal(err)
	}
	old, err := results.ReadJSON(bytes.NewReader(b.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	old.Schema = 1
	for ci := range old.Cells {
		for ei := range old.Cells[ci].Estimators {
			for ki := range old.Cells[ci].Estimators[ei].Coefficients {
				k := &old.Cells[ci].Estimators[ei].Coefficients[ki]
				k.RMSE, k.MSERatio = results.Measure{}, results.Measure{}
			}
		}
	}
	c, err := results.Compare(old, run, nil, nil, results.CompareOptions{})
	if err != nil {
		t.Fatal(err)
	}
	measures := map[string]int{}
	for _, d := range c.Differences {
		measures[d.Measure]++
		if d.Flagged {
			t.Errorf("flagged against an older schema: %+v", d)
		}
	}
	if measures["rmse"] != 0 || measures["mse_ratio"] != 0 || measures["bias"] == 0 {
		t.Errorf("measures compared: %v", measures)
	}
}

// TestAdjustedEstimatorDescribed: when Options.Adjust swaps an estimator's
// psi or method, the results describe the estimator that was fitted, not
// the scenario's entry; an estimator Adjust leaves alone keeps its entry's
// description.
func TestAdjustedEstimatorDescribed(t *testing.T) {
	st := parse(t, flowMeterLike)
	res, err := Run(context.Background(), st, Options{Replicates: 8, Adjust: func(_ int, label string, e *estimators.Estimator) {
		if label == "huber" {
			e.Psi = psi.Welsch{C: 2.9846}
			e.Method = estimators.MethodNewton
		}
	}})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range res.Cells {
		for _, e := range c.Estimators {
			switch e.Label {
			case "huber":
				if e.Psi != "welsch" || e.Method != "newton" || len(e.Tuning) != 1 || e.Tuning[0] != 2.9846 {
					t.Errorf("adjusted huber described as %s %s %v", e.Method, e.Psi, e.Tuning)
				}
			case "bisquare":
				if e.Psi != "bisquare" || e.Method != "newton" {
					t.Errorf("unadjusted bisquare described as %s %s %v", e.Method, e.Psi, e.Tuning)
				}
			}
		}
	}
	for _, f := range res.Functions {
		if f.Estimator == "huber" && !strings.HasPrefix(f.Psi, "welsch 2.9846") {
			t.Errorf("psi curve of the adjusted huber labelled %q", f.Psi)
		}
	}
}
