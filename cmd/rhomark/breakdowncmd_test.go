package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/rhomark/rhomark/harness"
)

// TestDescribeBreakdown: each outcome of a breakdown measurement reads as
// what it is; a failed fit is never shown as resistance, and no figure
// above the equivariance bound appears.
func TestDescribeBreakdown(t *testing.T) {
	for _, tc := range []struct {
		r         harness.ReplacementBreakdown
		want, not []string
	}{
		{harness.ReplacementBreakdown{N: 40, Bound: 18, Outcome: harness.BreakdownBroken, M: 16, Fraction: 0.4, Direction: "vertical"},
			[]string{"16/40 = 0.400", "first broken vertical"}, []string{"at least"}},
		{harness.ReplacementBreakdown{N: 40, Bound: 18, Outcome: harness.BreakdownFitFailed, FailedM: 17, FailedStatus: "singular-design", FailedDirection: "leverage", Fraction: 17.0 / 40, AtLeast: true},
			[]string{"undetermined", "singular-design", "m = 17", "at least 17/40"}, []string{"nothing broke it up", "at most"}},
		{harness.ReplacementBreakdown{N: 40, Bound: 18, Outcome: harness.BreakdownFitFailed, FailedM: 5, M: 9, FailedStatus: "iteration-limit", FailedDirection: "vertical", Direction: "leverage", Fraction: 5.0 / 40, AtLeast: true},
			[]string{"undetermined", "at least 5/40", "at most 9/40"}, nil},
		{harness.ReplacementBreakdown{N: 40, Bound: 18, Outcome: harness.BreakdownHeld, Fraction: 18.0 / 40, AtLeast: true},
			[]string{"at least 18/40 = 0.450"}, []string{"21/40"}},
	} {
		got := describeBreakdown(tc.r)
		for _, w := range tc.want {
			if !strings.Contains(got, w) {
				t.Errorf("%s: %q lacks %q", tc.r.Outcome, got, w)
			}
		}
		for _, w := range tc.not {
			if strings.Contains(got, w) {
				t.Errorf("%s: %q has %q", tc.r.Outcome, got, w)
			}
		}
	}
}

// TestSweptGoEstimatorRefused: a sweep may turn an estimator's method to
// go in some cells only, which checkCommands (it reads the file's own
// estimators) lets through; replay and breakdown of such a cell are then
// refused by outsideFitter as a usage error naming the estimator.
func TestSweptGoEstimatorRefused(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "bench.yaml")
	os.WriteFile(path, []byte(`name: bench
seed: 5
replicates: 10
model:
  n: 30
  intercept: 0
  columns:
    - {name: volume, slope: 1, dist: normal}
noise: {dist: normal, scale: 1}
estimators:
  - {label: ls, method: ls}
  - {label: huber, method: irls, psi: huber, tuning: 1.345}
vary:
  estimators.huber.method: [irls, go]
`), 0o644)
	for _, args := range [][]string{
		{"replay", path, "--cell", "1", "--data-out", filepath.Join(dir, "cell1.csv")},
		{"breakdown", path, "--cell", "1"},
	} {
		cmd := args[0]
		code, _, errs := rhomark(t, args...)
		if code != exitUsage || !strings.Contains(errs, `estimator "huber" has method go`) {
			t.Errorf("%s of the go cell: exit %d, stderr %q", cmd, code, errs)
		}
	}
}
