package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/rhomark/rhomark/results"
)

// TestRunAuditSolvers runs a scenario with --audit-solvers and reads the
// audit back from the JSON and the CSV the run wrote.
func TestRunAuditSolvers(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "bench.yaml")
	os.WriteFile(path, []byte(`name: bench
seed: 3
model: {n: 40, intercept: 20, columns: [{name: volume, slope: 0.98, dist: levels, levels: [5, 10, 20, 50, 100]}]}
noise: {dist: normal, scale: 0.5}
estimators:
  - {label: ls, method: ls}
  - {label: huber-loose, method: irls, psi: huber, stop: {change: 1e-3}}
  - {label: huber-equations, method: irls, psi: huber, stop: {equations: 1e-9}}
`), 0o644)
	code, out, errs := rhomark(t, "run", path, "--replicates", "20", "--audit-solvers", "--quiet", "--out", dir)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if !strings.Contains(out, "how close is converged?") || !strings.Contains(out, "huber-equations (equations 1e-9): stopping rule leaves the estimate") {
		t.Errorf("the table does not show the audit:\n%s", out)
	}
	f, err := os.Open(filepath.Join(dir, "bench.json"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var raw struct {
		Cells []struct {
			Estimators []struct {
				Label       string `json:"label"`
				Convergence struct {
					StopError map[string]json.RawMessage `json:"stop_error"`
				} `json:"convergence"`
			} `json:"estimators"`
		} `json:"cells"`
	}
	if err := json.NewDecoder(f).Decode(&raw); err != nil {
		t.Fatal(err)
	}
	for _, e := range raw.Cells[0].Estimators {
		for _, key := range []string{"median", "max", "over_0.01_se"} {
			if _, ok := e.Convergence.StopError[key]; !ok {
				t.Errorf("%s: convergence.stop_error has no %s", e.Label, key)
			}
		}
	}
	csv, _ := os.ReadFile(filepath.Join(dir, "bench.csv"))
	if !strings.Contains(strings.SplitN(string(csv), "\n", 2)[0], "stop_error_median") {
		t.Error("the CSV has no stop_error_median column")
	}
}

// TestReplayRoots: replay traces each start of an estimator with
// roots: true on the replicate asked for.
func TestReplayRoots(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "roots.yaml")
	os.WriteFile(path, []byte(`name: roots
seed: 16
model: {n: 40, intercept: 0.3, columns: [{name: volume, slope: 0.98, dist: levels, levels: [5, 10, 20, 50, 100]}]}
noise: {dist: normal, scale: 0.15}
contamination: [{label: mislabelled, kind: bad-leverage, fraction: 0.15, at: 200, response: 19.9, spread: 0.3}]
estimators:
  - {label: bisquare, method: irls, psi: bisquare, roots: true}
`), 0o644)
	code, out, errs := rhomark(t, "replay", path, "--cell", "0", "--replicate", "0", "--json")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var got struct {
		Fits []struct {
			Roots []struct {
				Start string            `json:"start"`
				Root  int               `json:"root"`
				Trace []json.RawMessage `json:"trace"`
			} `json:"roots"`
		} `json:"fits"`
	}
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatal(err)
	}
	roots := got.Fits[0].Roots
	if len(roots) != 4 || roots[2].Start != "s-estimate" || len(roots[2].Trace) == 0 {
		t.Fatalf("roots %+v: want four starts with the S start traced", roots)
	}
	distinct := map[int]bool{}
	for _, r := range roots {
		if r.Root >= 0 {
			distinct[r.Root] = true
		}
	}
	// 15% bad leverage points: LAD is drawn to them, the S start is not.
	if len(distinct) < 2 {
		t.Errorf("roots %+v: want two distinct roots on this replicate", roots)
	}
	// Run and replay agree: the run's search of this replicate is the
	// one replayed.
	code, runOut, errs := rhomark(t, "run", path, "--replicates", "1", "--json", "--quiet")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var res results.Results
	if err := json.Unmarshal([]byte(runOut), &res); err != nil {
		t.Fatal(err)
	}
	rs := res.Cells[0].Estimators[0].Convergence.Roots
	if rs == nil || (rs.MultipleCount == 1) != (len(distinct) > 1) {
		t.Errorf("the run found %+v, the replay %d distinct roots", rs, len(distinct))
	}
}
