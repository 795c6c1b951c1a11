package harness

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"runtime"
	"slices"
	"testing"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

func parse(t testing.TB, src string) *scenarios.Study {
	t.Helper()
	st, err := scenarios.Parse("test.yaml", []byte(src), scenarios.Limits{})
	if err != nil {
		t.Fatal(err)
	}
	return st
}

func csvOf(t testing.TB, r *results.Results) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := results.WriteCSV(&b, r); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// TestDeterministicAcrossWorkers: every statistical figure must be
// bit-identical for 1 and 4 workers (and for 3, which splits blocks
// unevenly).
func TestDeterministicAcrossWorkers(t *testing.T) {
	st, err := scenarios.LoadLibrary("flow-meter")
	if err != nil {
		t.Fatal(err)
	}
	var want []byte
	var wantCells []byte
	for _, w := range []int{1, 4, 3} {
		res, err := Run(context.Background(), st, Options{Workers: w, Replicates: 150})
		if err != nil {
			t.Fatal(err)
		}
		got := csvOf(t, res)
		cells, _ := json.Marshal(res.Cells)
		if want == nil {
			want, wantCells = got, cells
			continue
		}
		if !bytes.Equal(got, want) {
			t.Errorf("CSV with %d workers differs from 1 worker", w)
		}
		if !bytes.Equal(cells, wantCells) {
			t.Errorf("JSON cells with %d workers differ from 1 worker", w)
		}
	}
}

const efficiencyScenario = `
seed: 20261201
model:
  n: 400
  intercept: 1
  columns:
    - {name: x1, slope: 1, dist: normal}
    - {name: x2, slope: -0.5, dist: normal}
noise: {dist: normal, scale: 1}
estimators:
  - {label: ls, method: ls}
  - {label: huber, method: irls, psi: huber, tuning: 1.345}
  - {label: bisquare, method: irls, psi: bisquare, tuning: 4.685}
`

// TestEfficiencyAtNormal: with normal errors and n = 400, the simulated
// efficiency of each slope against least squares must lie within 4 MCSE of
// the asymptotic 0.95.
// Huber (1981), Robust Statistics, and Holland & Welsch (1977), Comm.
// Statist. Theory Methods 6:813-827: Huber k = 1.345 and bisquare c = 4.685
// give 95% asymptotic efficiency at the normal model.
func TestEfficiencyAtNormal(t *testing.T) {
	st := parse(t, efficiencyScenario)
	res, err := Run(context.Background(), st, Options{Replicates: 4000})
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range res.Cells[0].Estimators[1:] {
		if e.Convergence.Converged != e.Convergence.Fits {
			t.Errorf("%s: %d of %d fits did not converge", e.Label, e.Convergence.Fits-e.Convergence.Converged, e.Convergence.Fits)
		}
		for _, c := range e.Coefficients[1:] {
			re, se := float64(c.RelEff.Value), float64(c.RelEff.MCSE)
			if math.Abs(re-0.95) > 4*se {
				t.Errorf("%s %s: efficiency %.4f ± %.4f, want 0.95 within 4 MCSE", e.Label, c.Name, re, se)
			}
			t.Logf("%s %s: efficiency %.4f ± %.4f (MCSE)", e.Label, c.Name, re, se)
		}
	}
}

// TestCancel: a cancelled run returns the finished replicates, marked
// incomplete, with the context's error.
func TestCancel(t *testing.T) {
	st := parse(t, efficiencyScenario)
	ctx, cancel := context.WithCancel(context.Background())
	var once bool
	res, err := Run(ctx, st, Options{Workers: 2, Replicates: 100000, Progress: func(r ProgressReport) {
		if r.Done >= 200 && !once {
			once = true
			cancel()
		}
	}})
	if err == nil {
		t.Fatal("no error from a cancelled run")
	}
	if res == nil || res.Complete {
		t.Fatal("cancelled run not marked incomplete")
	}
	got := res.Cells[0].Replicates
	if got < 200 || got >= 100000 || got%blockSize != 0 {
		t.Errorf("cancelled run kept %d replicates; want whole blocks, at least 200", got)
	}
	if res.Cells[0].Estimators[0].Coefficients[0].Used != got {
		t.Errorf("summaries do not cover exactly the finished replicates")
	}
}

// TestMemoryFlatInReplicates: the run's allocations must not grow with the
// number of replicates (summaries are accumulated as the run goes).
func TestMemoryFlatInReplicates(t *testing.T) {
	st := parse(t, efficiencyScenario)
	alloc := func(reps int) uint64 {
		var a, b runtime.MemStats
		runtime.GC()
		runtime.ReadMemStats(&a)
		if _, err := Run(context.Background(), st, Options{Workers: 2, Replicates: reps}); err != nil {
			t.Fatal(err)
		}
		runtime.ReadMemStats(&b)
		return b.TotalAlloc - a.TotalAlloc
	}
	small, large := alloc(64), alloc(1024)
	// 16 times the replicates may cost a few blocks' merges more, never
	// bytes per replicate: allow 64 KiB, far below 1000 × the 6 KiB of one
	// dataset.
	if large > small+64<<10 {
		t.Errorf("allocation grew from %d to %d bytes between 64 and 1024 replicates", small, large)
	}
}

// TestReplicateStreamsDistinct: the streams of different data keys,
// replicates and estimators never coincide.
func TestReplicateStreamsDistinct(t *testing.T) {
	seen := map[[2]uint64]bool{}
	for key := uint64(0); key < 20; key++ {
		for rep := 0; rep < 500; rep++ {
			a, b := ReplicateStream(7, key, rep)
			if seen[[2]uint64{a, b}] {
				t.Fatalf("stream of data key %d replicate %d repeats", key, rep)
			}
			seen[[2]uint64{a, b}] = true
			for _, label := range []string{"ls", "huber", "mm"} {
				a, b := EstimatorStream(7, key, rep, EstimatorKey(label))
				if seen[[2]uint64{a, b}] {
					t.Fatalf("estimator %s's stream of data key %d replicate %d repeats", label, key, rep)
				}
				seen[[2]uint64{a, b}] = true
			}
		}
	}
}

func TestHistMedian(t *testing.T) {
	cases := []struct {
		hist []int64
		want float64
	}{
		{[]int64{0, 1}, 1},
		{[]int64{1, 1}, 0.5},
		{[]int64{0, 0, 3, 1}, 2},
		{[]int64{2, 0, 0, 2}, 1.5},
		{[]int64{0, 5, 0, 0, 0, 4}, 1},
	}
	for _, c := range cases {
		var n int64
		for _, k := range c.hist {
			n += k
		}
		if got := histMedian(c.hist, n); got != c.want {
			t.Errorf("median of %v = %v, want %v", c.hist, got, c.want)
		}
	}
}

// TestIterationHistogramExact: fits with more iterations than the old
// 10,000-bin histogram held keep their exact counts, so the median of a
// run where every fit took 100,000 iterations is 100,000, also after a
// merge and a round trip through a partial's encoding; only counts beyond
// the largest iteration cap a scenario accepts share the last bin.
func TestIterationHistogramExact(t *testing.T) {
	cases := []struct {
		iters  []int
		median float64
	}{
		{[]int{100000, 100000, 100000}, 100000},
		{[]int{3, 3, 25000}, 3},
		{[]int{12000, 25000, 40000, 70000}, 32500},
	}
	for _, tc := range cases {
		e := newEstTally(1, 0)
		for _, k := range tc.iters {
			e.record(&estimators.Result{Iterations: k, Status: estimators.IterationLimit})
		}
		c := convergence(&e)
		if float64(c.MedianIterations) != tc.median {
			t.Errorf("%v: median %v, want %v", tc.iters, c.MedianIterations, tc.median)
		}
		last := slices.Max(tc.iters)
		if c.MaxIterations != int64(last) || len(c.IterationHistogram) != last+1 {
			t.Errorf("%v: max %d, histogram of %d bins", tc.iters, c.MaxIterations, len(c.IterationHistogram))
		}
		// Merge into a fresh tally, then through a partial's encoding.
		ct := newCellTally(1, 1, 0)
		ct.ests[0].merge(&e)
		back := newCellTally(1, 1, 0)
		if err := back.decode(ct.encode(), nil); err != nil {
			t.Fatalf("%v: %v", tc.iters, err)
		}
		if m := histMedian(back.ests[0].iterHist, back.ests[0].fits); m != tc.median {
			t.Errorf("%v: median %v after merge and decode", tc.iters, m)
		}
	}
	// Beyond the cap, the last bin; the mean and the maximum stay exact.
	e := newEstTally(1, 0)
	for _, k := range []int{3, 3, iterHistCap + 5} {
		e.record(&estimators.Result{Iterations: k, Status: estimators.IterationLimit})
	}
	if len(e.iterHist) != iterHistCap+1 || e.iterHist[iterHistCap] != 1 || e.iterHist[3] != 2 {
		t.Fatalf("histogram of %d bins, last %d", len(e.iterHist), e.iterHist[len(e.iterHist)-1])
	}
	c := convergence(&e)
	if c.MaxIterations != iterHistCap+5 || float64(c.MeanIterations.Value) != (3+3+iterHistCap+5)/3.0 {
		t.Errorf("max %d, mean %v", c.MaxIterations, c.MeanIterations.Value)
	}
}

// TestIterationCapWithinHistogram: the largest stop.max-iter a scenario
// accepts must fit the histogram, or the median of an iterative fit could
// land in the shared last bin.
func TestIterationCapWithinHistogram(t *testing.T) {
	const scen = `
model: {n: 20, intercept: 1, columns: [{name: x, slope: 1}]}
noise: {dist: normal}
estimators:
  - {label: h, method: irls, psi: huber, stop: {max-iter: %d}}
`
	if _, err := scenarios.Parse("cap.yaml", []byte(fmt.Sprintf(scen, iterHistCap)), scenarios.Limits{}); err != nil {
		t.Errorf("max-iter %d refused: %v", iterHistCap, err)
	}
	if _, err := scenarios.Parse("cap.yaml", []byte(fmt.Sprintf(scen, iterHistCap+1)), scenarios.Limits{}); err == nil {
		t.Errorf("max-iter %d accepted, beyond the histogram", iterHistCap+1)
	}
}

// TestNonFiniteDatasetsDeterministic: a model heavy-tailed enough that some
// datasets overflow float64. Those fits end NonFinite with NaN estimates
// and nothing carried over from the worker's previous fit, so the results
// and the kept replicates are the same bytes for any number of workers.
func TestNonFiniteDatasetsDeterministic(t *testing.T) {
	st := parse(t, `
seed: 7
model:
  n: 30
  columns:
    - {name: x, slope: 1, dist: student-t, df: 0.015}
noise: {dist: normal}
estimators:
  - {label: ls, method: ls}
  - {label: nb, method: newton, psi: bisquare}
  - {label: h, method: irls, psi: huber}
`)
	var want, wantReps []byte
	for _, w := range []int{1, 2, 5} {
		var reps bytes.Buffer
		res, err := Run(context.Background(), st, Options{Workers: w, Replicates: 640, KeepReplicates: &reps})
		if err != nil {
			t.Fatal(err)
		}
		nonFinite := false
		for _, s := range res.Cells[0].Estimators[0].Convergence.Statuses {
			nonFinite = nonFinite || (s.Status == estimators.NonFinite.String() && s.Count > 0)
		}
		if !nonFinite {
			t.Fatal("no dataset overflowed; the test needs a heavier tail")
		}
		cells, _ := json.Marshal(res.Cells)
		if want == nil {
			want, wantReps = cells, reps.Bytes()
			continue
		}
		if !bytes.Equal(cells, want) {
			t.Errorf("%d workers: results differ from 1 worker", w)
		}
		if !bytes.Equal(reps.Bytes(), wantReps) {
			t.Errorf("%d workers: kept replicates differ from 1 worker", w)
		}
	}
}
