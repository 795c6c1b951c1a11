package harness

import (
	"bytes"
	"context"
	"errors"
	"io"
	"reflect"
	"sort"
	"strconv"
	"strings"
	"testing"

	"github.com/rhomark/rhomark/results"
)

// flowMeterSolver is a flow-meter bench (our demo setting) with a bisquare
// fitted by IRLS, whose iteration count varies enough from replicate to
// replicate that a lower cap makes some fits stop early. SOLVER is
// replaced by each test's stop rules; NOISE by the noise scale.
const flowMeterSolver = `
name: bench
seed: 7
model:
  n: 40
  intercept: 0.3
  columns: [{name: volume, slope: 0.98, dist: levels, levels: [5, 10, 20, 50, 100]}]
noise: {dist: normal, scale: NOISE, grows-with: {column: volume, rate: 0.01}}
contamination:
  - {label: spikes, kind: vertical, fraction: 0.1, shift: 6, spread: 1}
estimators:
  - {label: ls, method: ls}
  - {label: huber, method: irls, psi: huber}
  - {label: bisquare, method: irls, psi: bisquare, SOLVER}
vary:
  contamination.spikes.fraction: [0, 0.1]
`

// runBench runs the bench with the given bisquare stop rules and noise
// scale, keeping replicates.
func runBench(t *testing.T, stop, noise string) (*results.Results, []byte) {
	t.Helper()
	src := strings.NewReplacer("SOLVER", stop, "NOISE", noise).Replace(flowMeterSolver)
	var buf bytes.Buffer
	res, err := Run(context.Background(), parse(t, src), Options{Replicates: 150, KeepReplicates: &buf})
	if err != nil {
		t.Fatal(err)
	}
	return res, buf.Bytes()
}

// readAll returns every record of a replicate file by (cell, replicate,
// estimator label).
func readAll(t *testing.T, b []byte) map[[2]int]map[string]results.ReplicateRecord {
	t.Helper()
	r, err := results.NewReplicateReader(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	out := map[[2]int]map[string]results.ReplicateRecord{}
	for {
		rec, err := r.Next()
		if errors.Is(err, io.EOF) {
			return out
		}
		if err != nil {
			t.Fatal(err)
		}
		k := [2]int{rec.Cell, rec.Replicate}
		if out[k] == nil {
			out[k] = map[string]results.ReplicateRecord{}
		}
		out[k][r.Header.Cells[rec.Cell].Estimators[rec.Estimator]] = rec
	}
}

// TestCapCutFlagsNewFailures: lowering the bisquare's iteration cap in
// the scenario is a solver change, compared paired without any option; the
// fits that now stop at the cap are counted per cell by an exact test,
// flagged on their own, and listed by replicate. The counts are checked
// against a direct reading of both replicate files.
func TestCapCutFlagsNewFailures(t *testing.T) {
	base, baseReps := runBench(t, "stop: {max-iter: 100}", "0.15")
	cand, candReps := runBench(t, "stop: {max-iter: 20}", "0.15")
	c, err := results.Compare(base, cand, source(baseReps), source(candReps), results.CompareOptions{List: 1000})
	if err != nil {
		t.Fatalf("a cap cut is a solver setting, yet: %v", err)
	}
	if c.Paired == nil {
		t.Fatal("not compared paired")
	}
	if len(c.Settings) != 1 || c.Settings[0].Path != "estimators.bisquare.stop.max_iter" || c.Settings[0].Kind != results.SettingSolver ||
		c.Settings[0].Baseline != "100" || c.Settings[0].Candidate != "20" {
		t.Errorf("settings: %+v", c.Settings)
	}
	// The truth, from the files: fits converged before and stopped at the
	// cap after, per cell.
	a, b := readAll(t, baseReps), readAll(t, candReps)
	want := map[int]int{}
	total := 0
	for k, fits := range a {
		ra, rb := fits["bisquare"], b[k]["bisquare"]
		if ra.Status != "iteration-limit" && rb.Status == "iteration-limit" {
			want[k[0]]++
			total++
		}
		for label, r := range fits {
			if label != "bisquare" && r.Status != b[k][label].Status {
				t.Errorf("cell %d replicate %d: %s changed status though only the bisquare's cap changed", k[0], k[1], label)
			}
		}
	}
	if total == 0 {
		t.Fatal("the cap cut made no fit fail; the test needs a lower cap")
	}
	t.Logf("new failures per cell: %v", want)
	if c.Paired.NewFailures != total || c.Paired.Recovered != 0 || len(c.Paired.StatusChanges) != total {
		t.Errorf("paired: %d new failures, %d recovered, %d listed; the files show %d new failures",
			c.Paired.NewFailures, c.Paired.Recovered, len(c.Paired.StatusChanges), total)
	}
	for _, s := range c.Paired.StatusChanges {
		ra, rb := a[[2]int{s.Cell, s.Replicate}]["bisquare"], b[[2]int{s.Cell, s.Replicate}]["bisquare"]
		if s.Estimator != "bisquare" || s.Kind != results.NewFailure || s.Baseline != ra.Status || s.Candidate != rb.Status ||
			s.BaselineIterations != ra.Iterations || s.CandidateIterations != 20 {
			t.Errorf("listed %+v; the files say %s (%d) → %s (%d)", s, ra.Status, ra.Iterations, rb.Status, rb.Iterations)
		}
	}
	// A short list keeps the new failures whose estimates moved most, in
	// SE units, largest first.
	short, err := results.Compare(base, cand, source(baseReps), source(candReps), results.CompareOptions{List: 5})
	if err != nil {
		t.Fatal(err)
	}
	all := append([]results.StatusChange(nil), c.Paired.StatusChanges...)
	sort.SliceStable(all, func(i, j int) bool { return abs(float64(all[i].SEUnits)) > abs(float64(all[j].SEUnits)) })
	if got := short.Paired.StatusChanges; len(got) != 5 || !reflect.DeepEqual(got, all[:5]) {
		t.Errorf("--list 5 kept\n%+v\nwant\n%+v", got, all[:5])
	}
	// Each cell with new failures is tested exactly: McNemar with b new
	// failures and no recovery has p = 2·2^−b, and a rise is flagged when
	// Holm's procedure rejects at 0.05.
	flagged := 0
	for _, f := range c.Failures.Tests {
		if f.Estimator != "bisquare" {
			if f.Flagged {
				t.Errorf("failures flagged for %s", f.Estimator)
			}
			continue
		}
		b := want[f.Cell]
		if f.NewFailures != int64(b) {
			t.Errorf("cell %d: %d new failures, want %d", f.Cell, f.NewFailures, b)
		}
		if got, p := float64(f.P), results.PairedExactP(int64(b), 0); got != p {
			t.Errorf("cell %d: p %g, want %g", f.Cell, got, p)
		}
		if f.Flagged {
			flagged++
			if !f.Rise() {
				t.Errorf("cell %d: flagged but not a rise: %+v", f.Cell, f)
			}
		}
	}
	if flagged == 0 || len(c.FailureRises()) != flagged || !c.Flagged() {
		t.Errorf("the rise in failures was not flagged: %+v", c.Failures)
	}
	// Flagged rises come first.
	if !c.Failures.Tests[0].Flagged {
		t.Errorf("failure tests not ordered flagged first: %+v", c.Failures.Tests[0])
	}
	var out bytes.Buffer
	if err := results.WriteComparison(&out, c); err != nil {
		t.Fatal(err)
	}
	first := c.Paired.StatusChanges[0]
	for _, s := range []string{"MORE FAILURES", "estimators.bisquare.stop.max_iter: 100 → 20", "rhomark replay test.yaml --cell"} {
		if !strings.Contains(out.String(), s) {
			t.Errorf("the report lacks %q:\n%s", s, out.String())
		}
	}
	if !strings.Contains(c.Replay, "--replicate "+strconv.Itoa(first.Replicate)+" --estimator bisquare") {
		t.Errorf("replay command %q does not name the first status change %+v", c.Replay, first)
	}

	// Without replicate files the failure rates are compared by Fisher's
	// exact test, and the rise is still flagged on its own.
	s, err := results.Compare(base, cand, nil, nil, results.CompareOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if s.Paired != nil || s.Failures.Test != results.FailureFisher || len(s.FailureRises()) == 0 {
		t.Errorf("summary mode: %+v", s.Failures)
	}
	for _, f := range s.Failures.Tests {
		if got := float64(f.P); got != results.FisherExactP(f.BaselineFailed, f.BaselineFits, f.CandidateFailed, f.CandidateFits) {
			t.Errorf("summary p %g for %+v", got, f)
		}
	}
}

// TestToleranceChangeIsPaired: a looser stopping tolerance in the scenario
// is compared paired without --any-scenario, names the setting, and finds
// the moves; a changed noise scale is refused, naming the setting.
func TestToleranceChangeIsPaired(t *testing.T) {
	base, baseReps := runBench(t, "stop: {change: 1e-8}", "0.15")
	cand, candReps := runBench(t, "stop: {change: 1e-3}", "0.15")
	c, err := results.Compare(base, cand, source(baseReps), source(candReps), results.CompareOptions{})
	if err != nil {
		t.Fatalf("a tolerance change is a solver setting, yet: %v", err)
	}
	if c.Paired == nil || c.Paired.Moved == 0 || len(c.Paired.Moves) == 0 {
		t.Fatalf("paired moves not found: %+v", c.Paired)
	}
	if len(c.Settings) != 1 || c.Settings[0].Path != "estimators.bisquare.stop.change" || c.Settings[0].Kind != results.SettingSolver {
		t.Errorf("settings: %+v", c.Settings)
	}
	// Moves are ranked by their size in SE units, largest first.
	for i, m := range c.Paired.Moves {
		if m.Estimator != "bisquare" {
			t.Errorf("move of %s", m.Estimator)
		}
		if i > 0 && abs(float64(m.SEUnits)) > abs(float64(c.Paired.Moves[i-1].SEUnits)) {
			t.Errorf("moves not ranked: %v after %v", m.SEUnits, c.Paired.Moves[i-1].SEUnits)
		}
		if d := float64(m.Candidate - m.Baseline); d != float64(m.Diff) {
			t.Errorf("diff %v is not candidate − baseline %v", m.Diff, d)
		}
	}

	noisy, noisyReps := runBench(t, "stop: {change: 1e-8}", "0.3")
	_, err = results.Compare(base, noisy, source(baseReps), source(noisyReps), results.CompareOptions{})
	var mm *results.ScenarioMismatch
	if !errors.Is(err, results.ErrDifferentScenarios) || !errors.As(err, &mm) || !strings.Contains(err.Error(), "noise.scale") {
		t.Fatalf("a noise change was not refused by name: %v", err)
	}
	if len(mm.Changes) != 1 || mm.Changes[0].Kind != results.SettingData {
		t.Errorf("changes: %+v", mm.Changes)
	}
	// Allowed, it is compared in summary mode: the datasets differ.
	c, err = results.Compare(base, noisy, source(baseReps), source(noisyReps), results.CompareOptions{AnyScenario: true})
	if err != nil || c.Paired != nil {
		t.Errorf("--any-scenario: %v, paired %v", err, c != nil && c.Paired != nil)
	}
}

func abs(x float64) float64 {
	if x < 0 {
		return -x
	}
	return x
}
