package harness

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/psi"
)

// breakdownData draws n rows of an intercept and p−1 standard normal
// columns, y = 1 + Σx + 0.5·noise.
func breakdownData(n, p int, seed uint64) (*mat.Dense, []float64) {
	rng := rand.New(rand.NewPCG(seed, 12))
	x := mat.NewDense(n, p, nil)
	y := make([]float64, n)
	for i := 0; i < n; i++ {
		x.Set(i, 0, 1)
		y[i] = 1
		for j := 1; j < p; j++ {
			v := rng.NormFloat64()
			x.Set(i, j, v)
			y[i] += v
		}
		y[i] += 0.5 * rng.NormFloat64()
	}
	return x, y
}

// TestReplacementBreakdown measures finite-sample replacement breakdown on
// clean datasets of n = 40 rows with p = 3 and p = 6 coefficients. Sources
// (Rousseeuw & Leroy (1987), Robust Regression and Outlier Detection,
// Wiley, ch. 3, from memory): least squares breaks with one replaced point
// (1/n); M-estimators with monotone psi (and LAD) break with one bad
// leverage point (1/n); no regression equivariant estimator exceeds the
// bound (⌊(n−p)/2⌋+1)/n; LTS with h = ⌊(n+p+1)/2⌋ attains it; the
// S-estimator with b = sup rho / 2 has (⌊n/2⌋−p+2)/n for data in general
// position, below the bound once p ≥ 4; the MM-estimator inherits the
// S-estimator's (Yohai (1987), "High breakdown-point and high efficiency
// robust estimates for regression", Ann. Statist. 15:642-656). The
// measurement is an upper bound on the true breakdown point when it
// breaks (a configuration that breaks the estimate was found) and a lower
// bound as far as the configurations tried go, so S and MM must be
// reported at most at their formula and nothing ever above the
// equivariance bound.
func TestReplacementBreakdown(t *testing.T) {
	ests := []NamedEstimator{
		{Label: "ls", Estimator: estimators.Estimator{}},
		{Label: "huber", Estimator: estimators.Estimator{Method: estimators.MethodIRLS, Psi: psi.Huber{K: 1.345}}},
		{Label: "lad", Estimator: estimators.Estimator{Method: estimators.MethodLAD}},
		{Label: "s", Estimator: estimators.Estimator{Method: estimators.MethodS}},
		{Label: "mm", Estimator: estimators.Estimator{Method: estimators.MethodMM}},
		{Label: "lts", Estimator: estimators.Estimator{Method: estimators.MethodLTS}},
	}
	for _, tc := range []struct {
		p      int
		at     map[string]int // exactly this m
		atMost map[string]int // broken at this m or fewer
	}{
		// p = 3: (⌊n/2⌋−p+2) = 19 = ⌊(n−p)/2⌋+1, so S and MM reach the bound.
		{p: 3, at: map[string]int{"ls": 1, "huber": 1, "lad": 1, "s": 19, "mm": 19, "lts": 19}},
		// p = 6: S and MM break at (⌊n/2⌋−p+2) = 16 at most; LTS at the
		// bound ⌊(n−p)/2⌋+1 = 18.
		{p: 6, at: map[string]int{"ls": 1, "huber": 1, "lad": 1, "lts": 18}, atMost: map[string]int{"s": 16, "mm": 16}},
	} {
		n := 40
		x, y := breakdownData(n, tc.p, 11)
		got, err := MeasureBreakdown(x, y, true, ests, ReplacementOptions{Seed: 5, Directions: 1})
		if err != nil {
			t.Fatal(err)
		}
		bound := (n-tc.p)/2 + 1
		for _, r := range got {
			t.Logf("p = %d %-5s %-10s m = %2d, fraction %.3f, direction %s, first failure m = %d (%s)", tc.p, r.Estimator, r.Outcome, r.M, r.Fraction, r.Direction, r.FailedM, r.FailedStatus)
			if r.Bound != bound || r.Fraction > float64(bound)/float64(n) {
				t.Errorf("p = %d %s: fraction %v above the equivariance bound %d/%d", tc.p, r.Estimator, r.Fraction, bound, n)
			}
			if r.Outcome != BreakdownBroken {
				t.Errorf("p = %d %s: outcome %s (failed at m = %d, %s), want broken", tc.p, r.Estimator, r.Outcome, r.FailedM, r.FailedStatus)
				continue
			}
			if want, ok := tc.at[r.Estimator]; ok && r.M != want {
				t.Errorf("p = %d %s: breaks at m = %d (%s), want %d", tc.p, r.Estimator, r.M, r.Direction, want)
			}
			if most, ok := tc.atMost[r.Estimator]; ok && r.M > most {
				t.Errorf("p = %d %s: breaks at m = %d (%s), want at most %d", tc.p, r.Estimator, r.M, r.Direction, most)
			}
			if r.Fraction != float64(r.M)/float64(n) || r.AtLeast {
				t.Errorf("p = %d %s: fraction %v (at least %v) for m = %d", tc.p, r.Estimator, r.Fraction, r.AtLeast, r.M)
			}
		}
	}
}

// TestScanDirection drives the search with made-up outcomes: breakdown
// that is not monotone in m, fit failures, and nothing at all.
func TestScanDirection(t *testing.T) {
	const n, limit = 40, 18
	for _, tc := range []struct {
		name     string
		outcome  func(m int) BreakdownOutcome
		m, fail  int
		want     BreakdownOutcome
		fraction float64
		atLeast  bool
	}{
		// Broken at 7 only, and again from 12 on: bisection between 0 and
		// the broken limit would report 12 (it probes 9, 10, 11 as held);
		// the scan must find 7.
		{"non-monotone", func(m int) BreakdownOutcome {
			if m == 7 || m >= 12 {
				return BreakdownBroken
			}
			return BreakdownHeld
		}, 7, 0, BreakdownBroken, 7.0 / n, false},
		// Fits fail from 5 and break from 9: the breakdown point lies
		// between 5/n and 9/n, so only the lower bound is reported.
		{"failure first", func(m int) BreakdownOutcome {
			switch {
			case m >= 9:
				return BreakdownBroken
			case m >= 5:
				return BreakdownFitFailed
			}
			return BreakdownHeld
		}, 9, 5, BreakdownFitFailed, 5.0 / n, true},
		// Failures from 10 on and nothing broken: a failure is not
		// resistance, so the estimator must not be reported as held.
		{"only failures", func(m int) BreakdownOutcome {
			if m >= 10 {
				return BreakdownFitFailed
			}
			return BreakdownHeld
		}, 0, 10, BreakdownFitFailed, 10.0 / n, true},
		// A failure after the breaking m changes nothing.
		{"failure after", func(m int) BreakdownOutcome {
			if m == 3 {
				return BreakdownBroken
			}
			return BreakdownFitFailed
		}, 3, 1, BreakdownFitFailed, 1.0 / n, true},
		{"held", func(int) BreakdownOutcome { return BreakdownHeld }, 0, 0, BreakdownHeld, float64(limit) / n, true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var tried []int
			d := scanDirection(limit, func(m int) (BreakdownOutcome, string) {
				tried = append(tried, m)
				o := tc.outcome(m)
				if o == BreakdownFitFailed {
					return o, "singular-design"
				}
				return o, ""
			})
			if d.M != tc.m || d.FailedM != tc.fail {
				t.Errorf("m = %d, failed m = %d; want %d and %d", d.M, d.FailedM, tc.m, tc.fail)
			}
			for i, m := range tried {
				if m != i+1 || m > limit {
					t.Fatalf("tried %v, want 1, 2, ... up to %d", tried, limit)
				}
			}
			d.Direction = "test"
			rb := ReplacementBreakdown{N: n, Bound: limit, Directions: []DirectionBreakdown{d}}
			summariseDirections(&rb)
			if rb.Outcome != tc.want || rb.Fraction != tc.fraction || rb.AtLeast != tc.atLeast {
				t.Errorf("outcome %s, fraction %v, at least %v; want %s, %v, %v", rb.Outcome, rb.Fraction, rb.AtLeast, tc.want, tc.fraction, tc.atLeast)
			}
			if tc.fail > 0 && rb.FailedStatus != "singular-design" {
				t.Errorf("failed status %q", rb.FailedStatus)
			}
			if rb.Fraction > float64(limit)/n {
				t.Errorf("fraction %v above the bound", rb.Fraction)
			}
		})
	}
}

const coverageScenario = `
seed: 77
model:
  n: 200
  intercept: 1
  columns:
    - {name: x1, slope: 1, dist: normal}
    - {name: x2, slope: 2, dist: uniform, min: 0, max: 3}
noise: {dist: normal, scale: 1.5}
estimators:
  - {label: ls, method: ls}
  - {label: huber, method: irls, psi: huber}
  - {label: mm, method: mm-estimate, resampling: {subsets: 50}}
  - {label: s, method: s-estimate, resampling: {subsets: 50}}
`

// TestCoverage: least squares' t intervals are exact under normal errors,
// so their coverage must be within 4 MCSE of 0.95; the M-estimators' Wald
// intervals are asymptotic, and at n = 200 their coverage must also be
// within 4 MCSE of 0.95 (Huber (1973), Ann. Statist. 1:799-821, gives the
// corrected covariance). The S-estimator has no interval.
func TestCoverage(t *testing.T) {
	st := parse(t, coverageScenario)
	res, err := Run(context.Background(), st, Options{Replicates: 1500})
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range res.Cells[0].Estimators {
		for _, c := range e.Coefficients {
			if e.Label == "s" {
				if c.Intervals != 0 {
					t.Errorf("s: %d intervals reported", c.Intervals)
				}
				continue
			}
			cov, se := float64(c.Coverage.Value), float64(c.Coverage.MCSE)
			if math.Abs(cov-0.95) > 4*se {
				t.Errorf("%s %s: coverage %.4f ± %.4f, want 0.95 within 4 MCSE", e.Label, c.Name, cov, se)
			}
			if !(float64(c.Width.Value) > 0) {
				t.Errorf("%s %s: width %v", e.Label, c.Name, c.Width.Value)
			}
		}
	}
}

const curveScenario = `
seed: 9
replicates: 60
model:
  n: 50
  intercept: 0
  columns:
    - {name: x1, slope: 1, dist: normal}
noise: {dist: normal, scale: 1}
contamination:
  - {label: far, kind: bad-leverage, fraction: 0.1, at: 5, response: 0}
estimators:
  - {label: ls, method: ls}
  - {label: lts, method: lts, resampling: {subsets: 100}}
breakdown:
  worst-over: [contamination.far.at, contamination.far.response]
  threshold: 0.5
vary:
  contamination.far.fraction: [0, 0.1, 0.3]
  contamination.far.at: [3, 10]
  contamination.far.response: [-5, 0]
`

// TestBiasCurves checks the grouping of cells into bias-curve points, the
// choice of the worst position, and the empirical breakdown point.
func TestBiasCurves(t *testing.T) {
	st := parse(t, curveScenario)
	res, err := Run(context.Background(), st, Options{})
	if err != nil {
		t.Fatal(err)
	}
	b := res.Breakdown
	if b == nil || b.Fraction != "contamination.far.fraction" {
		t.Fatalf("breakdown view %+v", b)
	}
	if len(b.Curve) != 3*2 {
		t.Fatalf("%d curve points, want 3 fractions × 2 estimators", len(b.Curve))
	}
	for _, pt := range b.Curve {
		// The worst bias is the largest over the group's four cells.
		var worst float64
		for _, c := range res.Cells {
			if c.Settings[0].Value != pt.Settings[0].Value {
				continue
			}
			for _, e := range c.Estimators {
				if e.Label == pt.Estimator {
					worst = math.Max(worst, float64(e.SlopeBias.Value))
				}
			}
		}
		if float64(pt.Worst.Value) != worst || len(pt.WorstAt) != 2 {
			t.Errorf("%s at %v: worst %v, want %v (at %v)", pt.Estimator, pt.Fraction, pt.Worst.Value, worst, pt.WorstAt)
		}
		if !(pt.Bias.Value <= pt.Worst.Value) {
			t.Errorf("mean bias above the worst")
		}
	}
	// Least squares breaks at the first positive fraction; LTS holds at
	// 10%. (At 30% a point mass of 15 identical points plus 11 clean ones
	// makes an h-subset with a smaller trimmed sum than the true fit, so LTS
	// with h ≈ n/2 can fit the cluster; that is why worst placements are
	// swept, and nothing is asserted there.)
	for _, p := range b.Points {
		switch p.Estimator {
		case "ls":
			if float64(p.Fraction) != 0.1 || p.PastThreshold == nil {
				t.Errorf("ls breakdown at %v", p.Fraction)
			}
		case "lts":
			if float64(p.Fraction) <= 0.1 {
				t.Errorf("lts breaks down at %v", p.Fraction)
			}
		}
	}
}
