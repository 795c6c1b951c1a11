package main

import (
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/rhomark/rhomark/results"
)

// TestTuningStudyEndToEnd runs the shipped tuning-huber scenario with few
// replicates (its own fixed seed) and reads the recommendation as a user
// would: the first block of the output is the tuning study, the
// recommended k lies in its own range, and the smallest k meeting 95%
// efficiency is decided by the asymptotic efficiency at the normal model.
func TestTuningStudyEndToEnd(t *testing.T) {
	out := t.TempDir()
	code, stdout, errs := rhomark(t, "run", "tuning-huber", "--replicates", "64", "--quiet", "--out", out)
	if code != exitOK {
		t.Fatalf("run: exit %d: %s", code, errs)
	}
	first := strings.Index(stdout, "── ")
	if first < 0 || !strings.HasPrefix(stdout[first:], "── tuning study: huber, estimators.huber.tuning") {
		t.Fatalf("the first block is not the tuning study:\n%s", stdout)
	}
	for _, line := range strings.Split(stdout, "\n") {
		if n := len([]rune(line)); n > 100 {
			t.Errorf("line of %d columns, more than the 100 the table is laid out for: %q", n, line)
		}
	}
	if i, j := strings.Index(stdout, "choose huber.tuning = "), strings.Index(stdout, "── what to choose"); i < 0 || j < i {
		t.Errorf("the recommendation does not come before the per-cell verdicts:\n%s", stdout)
	}
	f, err := os.Open(filepath.Join(out, "tuning-huber.json"))
	if err != nil {
		t.Fatal(err)
	}
	res, err := results.ReadJSON(f)
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	rec := res.Recommendation
	if rec == nil || len(rec.Studies) != 1 {
		t.Fatalf("want one tuning study in the JSON, got %+v", rec)
	}
	ts := rec.Studies[0]
	if !slices.Contains(ts.Range, ts.Recommended) {
		t.Errorf("recommended k %v is not in its range %v", ts.Recommended, ts.Range)
	}
	if len(ts.Levels) != 2 || !ts.Levels[0].Clean || ts.Levels[1].Clean {
		t.Errorf("levels %+v: want the clean fraction 0, then 0.1", ts.Levels)
	}
	// The smallest Huber k with 95% asymptotic efficiency at the normal is
	// 1.345 (Holland & Welsch (1977), "Robust regression using iteratively
	// reweighted least-squares", Comm. Statist. Theory Methods 6:813-827):
	// on the grid 0.5 ... 3 the target pick must be 1.345, decided without
	// Monte Carlo error.
	if ts.Target.Basis != results.Asymptotic || ts.Target.Value != "1.345" {
		t.Errorf("target pick %q by %v, want 1.345 by the asymptotic efficiency", ts.Target.Value, ts.Target.Basis)
	}
	if !strings.Contains(stdout, "efficiency ≥ 0.95 on clean data: 1.345 (asymptotic 0.9500") {
		t.Errorf("the printed block does not give the target pick:\n%s", stdout)
	}
	// A lower target moves the pick down the grid: Huber's k = 1 has
	// asymptotic efficiency 0.903 at the normal (from memory), 0.75 has
	// 0.854 (from memory), so at 90% the pick is 1; 1.345 has 0.950 and
	// 1.7 has 0.978 (from memory), so at 97% it is 1.7.
	code, stdout, errs = rhomark(t, "run", "tuning-huber", "--replicates", "16", "--quiet", "--target-efficiency", "0.9")
	if code != exitOK || !strings.Contains(stdout, "efficiency ≥ 0.9 on clean data: 1 (asymptotic 0.903") {
		t.Errorf("--target-efficiency 0.9: exit %d %s\n%s", code, errs, stdout)
	}
	// report keeps the run's target unless given another.
	if code, _, errs := rhomark(t, "run", "tuning-huber", "--replicates", "16", "--quiet", "--target-efficiency", "0.9", "--out", out); code != exitOK {
		t.Fatalf("run: %s", errs)
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{nil, "efficiency ≥ 0.9 on clean data: 1 "},
		{[]string{"--target-efficiency", "0.97"}, "efficiency ≥ 0.97 on clean data: 1.7 "},
	} {
		args := append([]string{"report", filepath.Join(out, "tuning-huber.json"), "--no-figure-files"}, c.args...)
		if code, _, errs := rhomark(t, args...); code != exitOK {
			t.Fatalf("%q: %s", args, errs)
		}
		md, err := os.ReadFile(filepath.Join(out, "tuning-huber.md"))
		if err != nil || !strings.Contains(string(md), c.want) {
			t.Errorf("%q: summary lacks %q (%v):\n%s", args, c.want, err, md)
		}
	}
	for _, bad := range []string{"0", "1.5", "-0.2", "NaN"} {
		if code, _, errs := rhomark(t, "run", "tuning-huber", "--target-efficiency", bad); code != exitUsage || !strings.Contains(errs, "flag --target-efficiency: want a number above 0 and at most 1") {
			t.Errorf("--target-efficiency %s: exit %d, %q", bad, code, errs)
		}
	}
}
