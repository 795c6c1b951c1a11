package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/rhomark/rhomark/results"
)

// benchCopy writes the shipped flow-meter scenario to dir with one edit
// (old replaced by new) and returns its path.
func benchCopy(t *testing.T, dir, old, new string) string {
	t.Helper()
	if code, _, errs := rhomark(t, "scenarios", "flow-meter", "--write", dir); code != exitOK {
		t.Fatal(errs)
	}
	path := filepath.Join(dir, "flow-meter.yaml")
	src, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(src), old) {
		t.Fatalf("%q is not in the shipped flow-meter scenario", old)
	}
	if err := os.WriteFile(path, []byte(strings.Replace(string(src), old, new, 1)), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// TestCompareSolverChange: the maintainer's workflow from the README. A
// bisquare cap cut in a copy of flow-meter is compared paired without any
// option; the report names the setting, the new failures and their
// replicates, and the replay command; --json reads back; --list 0 lists
// nothing; --markdown lists the replicates; a changed noise scale is
// refused naming --any-scenario.
func TestCompareSolverChange(t *testing.T) {
	dir := t.TempDir()
	base, cand := filepath.Join(dir, "base"), filepath.Join(dir, "cand")
	const bisquare = "    psi: bisquare\n    tuning: 4.685\n"
	cut := benchCopy(t, cand, bisquare, bisquare+"    stop: {max-iter: 15}\n")
	for _, r := range [][]string{{"flow-meter", base}, {cut, cand}} {
		if code, _, errs := rhomark(t, "run", r[0], "--replicates", "64", "--keep-replicates", "--out", r[1]); code != exitOK {
			t.Fatal(errs)
		}
	}
	code, out, errs := rhomark(t, "compare", base, cand, "--list", "3")
	if code != exitFailure {
		t.Fatalf("cap cut: exit %d, want 1 (flagged)\n%s%s", code, out, errs)
	}
	for _, want := range []string{"paired:", "estimators.bisquare.stop.max_iter: 100 → 15", "result: CHANGED: MORE FAILURES (bisquare",
		"cell  replicate  estimator  baseline → candidate status", "converged-change → iteration-limit",
		"replay the first: rhomark replay " + cut, "the largest |z| had to pass"} {
		if !strings.Contains(out, want) {
			t.Errorf("report lacks %q:\n%s", want, out)
		}
	}
	// The verdict comes before the failures, and the failures before the
	// other measures.
	if i, j, k := strings.Index(out, "result:"), strings.Index(out, "failures, per cell"), strings.Index(out, "measures ("); !(i < j && j < k) {
		t.Errorf("report out of order (result %d, failures %d, measures %d):\n%s", i, j, k, out)
	}

	code, js, errs := rhomark(t, "compare", base, cand, "--json", "--list", "3")
	if code != exitFailure {
		t.Fatalf("--json: exit %d %s", code, errs)
	}
	cs, err := results.ReadComparisonJSON(strings.NewReader(js))
	if err != nil || len(cs) != 1 || cs[0].Paired == nil {
		t.Fatalf("--json does not read back: %v\n%s", err, js)
	}
	c := cs[0]
	if len(c.Paired.StatusChanges) != 3 || c.Paired.StatusChanges[0].Kind != results.NewFailure || c.Paired.NewFailures < 3 ||
		len(c.FailureRises()) == 0 || c.Baseline.Path != filepath.Join(base, "flow-meter.json") || !strings.Contains(c.Replay, "--estimator bisquare") {
		t.Errorf("JSON comparison: paired %+v, rises %+v, baseline %+v, replay %q", *c.Paired, c.FailureRises(), c.Baseline, c.Replay)
	}
	for _, s := range c.Paired.StatusChanges {
		if !strings.Contains(out, s.Candidate) || s.Estimator != "bisquare" || s.CandidateIterations != 15 {
			t.Errorf("status change %+v", s)
		}
	}

	if _, out, _ := rhomark(t, "compare", base, cand, "--list", "0"); strings.Contains(out, "baseline → candidate status") || strings.Contains(out, "replay the first") {
		t.Errorf("--list 0 still lists:\n%s", out)
	}
	_, md, _ := rhomark(t, "compare", base, cand, "--markdown")
	if !strings.Contains(md, "| cell | replicate | estimator | baseline status | candidate status |") || !strings.Contains(md, "| solver |") {
		t.Errorf("Markdown lacks the listing or the setting:\n%s", md)
	}

	// A changed noise scale changes the data: refused, by name, with the
	// option that overrides it.
	noisy := filepath.Join(dir, "noisy")
	scen := benchCopy(t, noisy, "scale: 0.15", "scale: 0.3")
	if code, _, errs := rhomark(t, "run", scen, "--replicates", "8", "--out", noisy); code != exitOK {
		t.Fatal(errs)
	}
	code, _, errs = rhomark(t, "compare", base, noisy)
	if code != exitUsage || !strings.Contains(errs, "noise.scale") || !strings.Contains(errs, "--any-scenario") {
		t.Errorf("noise change: exit %d %q", code, errs)
	}
	if code, out, errs := rhomark(t, "compare", base, noisy, "--any-scenario"); code == exitUsage || !strings.Contains(out, "noise.scale (data): 0.15 → 0.3") {
		t.Errorf("--any-scenario: exit %d %s\n%s", code, errs, out)
	}
}
