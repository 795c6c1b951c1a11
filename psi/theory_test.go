package psi

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// hollandWelsch lists the constants that give 95% asymptotic efficiency at
// the normal model, from Holland & Welsch (1977), "Robust regression using
// iteratively reweighted least-squares", Comm. Statist. Theory Methods
// 6:813-827.
var hollandWelsch = []struct {
	family string
	c      float64
}{
	{"huber", 1.345},
	{"bisquare", 4.685},
	{"cauchy", 2.385},
	{"andrews", 1.339},
	{"logistic", 1.205},
	{"fair", 1.400},
	{"welsch", 2.985},
	{"talwar", 2.795},
}

// TestHollandWelschConstants: each published constant gives 0.950 ± 0.00025,
// and tuning for 95% returns the constant to 3 decimals. The constants are
// printed to 3 decimals, so each stands for an interval of ±0.0005 in c;
// over it the efficiency moves by at most 1.2e-4 for these families (Talwar,
// whose efficiency is steepest in c; measured with this package), so the
// band is that printing error with a factor of two to spare, and tuning
// must land within the half unit 0.0005 of the printed constant.
func TestHollandWelschConstants(t *testing.T) {
	for _, hw := range hollandWelsch {
		f, ok := LookupFamily(hw.family)
		if !ok {
			t.Errorf("family %s is not registered", hw.family)
			continue
		}
		psi, err := f.New([]float64{hw.c})
		if err != nil {
			t.Fatal(err)
		}
		eff := EfficiencyAtNormal(psi)
		if math.Abs(eff-0.95) > 0.00025 {
			t.Errorf("%s c = %v: efficiency %.5f, published 0.950", hw.family, hw.c, eff)
		}
		tuned, err := f.TuneEfficiency(0.95)
		if err != nil {
			t.Fatalf("%s: %v", hw.family, err)
		}
		if math.Abs(tuned[0]-hw.c) > 0.0005 {
			t.Errorf("%s: tuned constant %.5f, published %v", hw.family, tuned[0], hw.c)
		}
	}
}

// TestTalwarJump: Talwar's psi jumps at ±c, and E[psi'] must include the
// jumps. A pointwise psi' (1 inside, 0 outside) misses them and gives a
// different answer, which is why E[psi'] is computed as E[Z psi(Z)].
func TestTalwarJump(t *testing.T) {
	c := 2.795
	psi := Talwar{C: c}
	_, b := Moments(psi, 1)
	// Stein: E[Z psi(Z)] = P(|Z| ≤ c) − 2cφ(c) (the jump contributes −2cφ(c)).
	want := (2*distuv.UnitNormal.CDF(c) - 1) - 2*c*distuv.UnitNormal.Prob(c)
	// 1e-12: the quadrature's relative tolerance is 1e-13 (quadrature.go).
	if math.Abs(b-want) > 1e-12 {
		t.Errorf("E[psi'] = %.15g, want %.15g", b, want)
	}
}

// TestHuberClosedForms compares the quadrature with Huber's closed forms
// (common practice): E[psi²] = 2Φ(k) − 1 − 2kφ(k) + 2k²Φ(−k),
// E[psi'] = 2Φ(k) − 1, and the gross-error sensitivity k/(2Φ(k) − 1)
// (Hampel, Ronchetti, Rousseeuw & Stahel (1986), Robust Statistics: The
// Approach Based on Influence Functions, Wiley).
func TestHuberClosedForms(t *testing.T) {
	for _, k := range []float64{0.5, 1, 1.345, 2, 3} {
		th, err := Analyse(Huber{K: k})
		if err != nil {
			t.Fatal(err)
		}
		p, d := distuv.UnitNormal.CDF(k), distuv.UnitNormal.Prob(k)
		a := 2*p - 1 - 2*k*d + 2*k*k*(1-p)
		b := 2*p - 1
		// Relative 1e-11 and 1e-9: a few hundred times the quadrature's
		// 1e-13, for the ratios of integrals (and, for the sensitivity,
		// the grid search for sup |psi|).
		if got, want := th.AsymptoticVariance, a/(b*b); math.Abs(got-want) > 1e-11*want {
			t.Errorf("k=%v: asymptotic variance %.15g, closed form %.15g", k, got, want)
		}
		if got, want := th.GrossErrorSensitivity, k/b; math.Abs(got-want) > 1e-9*want {
			t.Errorf("k=%v: gross-error sensitivity %.12g, published form %.12g", k, got, want)
		}
		if !th.Bounded || !th.Monotone || th.Redescending || !math.IsInf(th.RejectionPoint, 1) {
			t.Errorf("k=%v: shape %+v", k, th)
		}
	}
}

// TestSupPsiRefined: sup|psi| is refined beyond the 0.005 grid.
//
// Huber: psi is constant at k beyond k, so sup|psi| = k exactly and the
// gross-error sensitivity is k/E[psi'] with E[psi'] = 2Φ(k) − 1 (closed
// forms as in TestHuberClosedForms; E[psi'] here is the package's own
// quadrature, so the ratio checks only the supremum).
//
// Bisquare: psi(u) = u(1 − v²)², v = u/c, has psi'(u) = (1 − v²)(1 − 5v²),
// which vanishes inside (0, c) only at v² = 1/5, u* = c/√5. There
// psi(u*) = (c/√5)(1 − 1/5)² = 16c/(25√5), the maximum (psi(0) = psi(c) =
// 0). Both to 1e-12 relative; the grid alone is off by up to 1e-5.
func TestSupPsiRefined(t *testing.T) {
	for _, k := range []float64{0.7, 1.345, 2.5} {
		th, err := Analyse(Huber{K: k})
		if err != nil {
			t.Fatal(err)
		}
		_, b := Moments(Huber{K: k}, 1)
		if th.SupPsi != k || math.Abs(th.GrossErrorSensitivity-k/b) > 1e-12*k/b {
			t.Errorf("Huber k=%v: sup|psi| %.17g, GES %.17g, want %.17g", k, th.SupPsi, th.GrossErrorSensitivity, k/b)
		}
	}
	for _, c := range []float64{1, BisquareBreakdown50, 3.3, BisquareEfficiency95, 7.01} {
		th, err := Analyse(Bisquare{C: c})
		if err != nil {
			t.Fatal(err)
		}
		want := 16 * c / (25 * math.Sqrt(5))
		if math.Abs(th.SupPsi-want) > 1e-12*want {
			t.Errorf("bisquare c=%v: sup|psi| %.17g, closed form %.17g", c, th.SupPsi, want)
		}
		_, b := Moments(Bisquare{C: c}, 1)
		if math.Abs(th.GrossErrorSensitivity-want/b) > 1e-12*want/b {
			t.Errorf("bisquare c=%v: GES %.17g, want %.17g", c, th.GrossErrorSensitivity, want/b)
		}
	}
}

// TestHuberMinimax: Huber (1964), "Robust estimation of a location
// parameter", Ann. Math. Statist. 35:73-101: the minimax k solves
// 2φ(k)/k − 2Φ(−k) = eps/(1−eps). The exact check is the equation itself.
// The table values are from memory (as reprinted in Huber (1981), Robust
// Statistics, Wiley); that memory is trusted only to ±0.003 in the third
// decimal, hence the 0.004 tolerance on them.
func TestHuberMinimax(t *testing.T) {
	table := []struct{ eps, k float64 }{
		{0.001, 2.630}, {0.002, 2.435}, {0.005, 2.160}, {0.01, 1.945},
		{0.02, 1.717}, {0.05, 1.399}, {0.1, 1.140}, {0.2, 0.862}, {0.5, 0.436},
	}
	for _, c := range table {
		k, err := HuberMinimax(c.eps)
		if err != nil {
			t.Fatal(err)
		}
		lhs := 2*distuv.UnitNormal.Prob(k)/k - 2*distuv.UnitNormal.CDF(-k)
		if rhs := c.eps / (1 - c.eps); math.Abs(lhs-rhs) > 1e-12*rhs {
			t.Errorf("eps=%v: k=%v does not solve the equation (%v vs %v)", c.eps, k, lhs, rhs)
		}
		if math.Abs(k-c.k) > 0.004 {
			t.Errorf("eps=%v: k=%.4f, table %v", c.eps, k, c.k)
		}
	}
	for _, bad := range []float64{0, 1, -0.1, math.NaN()} {
		if _, err := HuberMinimax(bad); err == nil {
			t.Errorf("HuberMinimax(%v) accepted", bad)
		}
	}
}

// TestBisquareSScale: Rousseeuw & Yohai (1984), "Robust regression by means
// of S-estimators", in Robust and Nonlinear Time Series Analysis, Springer
// Lecture Notes in Statistics 26:256-272: the bisquare S-scale with 50%
// breakdown has c = 1.547, and its regression estimate about 28.7%
// efficiency at the normal.
func TestBisquareSScale(t *testing.T) {
	f, _ := LookupFamily("bisquare")
	c, err := f.TuneBreakdown(0.5)
	if err != nil {
		t.Fatal(err)
	}
	// The paper prints 1.547, truncated: the constant lies in [1.547, 1.548).
	// To five decimals it is 1.54764 (common practice, from memory).
	if c[0] < 1.547 || c[0] >= 1.548 || math.Abs(c[0]-1.54764) > 5e-6 {
		t.Errorf("c for 50%% breakdown = %.6f, published 1.547 (1.54764)", c[0])
	}
	th, err := Analyse(Bisquare{C: 1.547})
	if err != nil {
		t.Fatal(err)
	}
	// 0.287 is printed to 3 decimals: half a unit in the last digit.
	if math.Abs(th.Efficiency-0.287) > 0.0005 {
		t.Errorf("efficiency at c = 1.547: %.4f, published 0.287", th.Efficiency)
	}
	// c = 1.547 is the truncated constant, 6.4e-4 below 1.54764; the
	// breakdown moves by less than 1e-3 over that.
	if math.Abs(th.Breakdown-0.5) > 0.001 {
		t.Errorf("breakdown at c = 1.547: %.4f", th.Breakdown)
	}
	// Below c = 1.547 b/sup rho passes 1/2, and the breakdown point is
	// 1 − b/sup rho (Rousseeuw & Yohai 1984): at c = 1 it is below 1/2.
	small, _ := Analyse(Bisquare{C: 1})
	if r := small.ScaleConsistency / small.RhoMax; math.Abs(small.Breakdown-(1-r)) > 1e-12 || !(small.Breakdown < 0.5) {
		t.Errorf("breakdown at c = 1: %v (b/sup rho = %v)", small.Breakdown, r)
	}
	if th.RejectionPoint != 1.547 || !th.Redescending || th.Monotone {
		t.Errorf("shape: rejection %v redescending %v monotone %v", th.RejectionPoint, th.Redescending, th.Monotone)
	}
	if _, err := (Family{Name: "huber", Params: []string{"k"}, Defaults: []float64{1.345}, build: func(t []float64) Psi { return Huber{K: t[0]} }}).TuneBreakdown(0.5); err == nil {
		t.Error("an unbounded rho was tuned for breakdown")
	}
}

// TestModelEfficiencies checks efficiencies under other error models
// against closed forms (common practice): the mean's efficiency against ML
// is (ν−2)(ν+3)/(ν(ν+1)) under Student t_ν and 1/2 under the Laplace; the
// least-squares fit under a contaminated normal has relative efficiency 1
// against itself.
func TestModelEfficiencies(t *testing.T) {
	for _, nu := range []float64{3, 5, 10} {
		mt, err := AnalyseUnder(LeastSquares{}, StudentT(nu))
		if err != nil {
			t.Fatal(err)
		}
		want := (nu - 2) * (nu + 3) / (nu * (nu + 1))
		if math.Abs(mt.Efficiency-want) > 1e-9 {
			t.Errorf("LS under t%v: %.12f, closed form %.12f", nu, mt.Efficiency, want)
		}
	}
	mt, err := AnalyseUnder(LeastSquares{}, Laplace())
	if err != nil || math.Abs(mt.Efficiency-0.5) > 1e-9 {
		t.Errorf("LS under Laplace: %v %v", mt.Efficiency, err)
	}
	mt, err = AnalyseUnder(LeastSquares{}, ContaminatedNormal(0.1, 3))
	if err != nil || math.Abs(mt.RelativeToLS-1) > 1e-9 || mt.FisherClosedForm {
		t.Errorf("LS under contaminated normal: %+v %v", mt, err)
	}
	// Huber's psi at its minimax constant is the ML estimator of the least
	// favourable distribution, not of the contaminated normal, so its
	// efficiency there is below 1 but high.
	if mt, err := AnalyseUnder(Huber{K: 1.140}, ContaminatedNormal(0.1, 3)); err != nil || !(mt.Efficiency > 0.9 && mt.Efficiency < 1) {
		t.Errorf("Huber under contaminated normal: %v %v", mt.Efficiency, err)
	}
	if _, err := AnalyseUnder(Huber{K: 1}, ErrorModel{Kind: "gumbel"}); err == nil {
		t.Error("unknown model accepted")
	}
}

// TestRejectionPoints: where psi becomes identically zero (definitions).
func TestRejectionPoints(t *testing.T) {
	cases := []struct {
		psi  Psi
		want float64
	}{
		{Bisquare{C: 4.685}, 4.685},
		{Talwar{C: 2.795}, 2.795},
		{Hampel{A: 2, B: 4, C: 8}, 8},
		{Andrews{A: 1.339}, math.Pi * 1.339},
		{Welsch{C: 2.985}, math.Inf(1)}, // tends to 0 but is never 0
		{Cauchy{C: 2.385}, math.Inf(1)},
		{Huber{K: 1.345}, math.Inf(1)},
	}
	for _, c := range cases {
		th, err := Analyse(c.psi)
		if err != nil {
			t.Fatal(err)
		}
		if !(th.RejectionPoint == c.want || math.Abs(th.RejectionPoint-c.want) < 1e-12*c.want) {
			t.Errorf("%T: rejection point %v, want %v", c.psi, th.RejectionPoint, c.want)
		}
	}
}

// TestRedescending: the psi that return to zero far out are redescending,
// the monotone ones are not (common practice), and Redescending agrees with
// Theory's field of that name. The custom psi r for |r| < c, then c²/r
// (one of our own), redescends only as 1/r; the unbounded r·log(1 + |r|)
// is not redescending.
func TestRedescending(t *testing.T) {
	custom := func(expr string) Psi {
		c, err := NewCustom(CustomSpec{Psi: expr, Constants: []Constant{{Name: "c", Value: 3}}})
		if err != nil {
			t.Fatal(err)
		}
		return c
	}
	cases := []struct {
		psi  Psi
		want bool
	}{
		{Bisquare{C: 4.685}, true},
		{Hampel{A: 2, B: 4, C: 8}, true},
		{Andrews{A: 1.339}, true},
		{Talwar{C: 2.795}, true},
		{Welsch{C: 2.985}, true},
		{Cauchy{C: 2.385}, true},
		{Huber{K: 1.345}, false},
		{Fair{C: 1.4}, false},
		{Logistic{C: 1.205}, false},
		{LAD{Eps: 1e-6}, false},
		{LeastSquares{}, false},
		{custom("abs(r) < c ? r : c*c/r"), true},
		{custom("r * log(1 + abs(r))"), false},
	}
	for _, c := range cases {
		got := Redescending(c.psi)
		if got != c.want {
			t.Errorf("%T %v: Redescending %v, want %v", c.psi, c.psi, got, c.want)
		}
		th, err := Analyse(c.psi)
		if err != nil {
			t.Fatal(err)
		}
		if th.Redescending != got {
			t.Errorf("%T %v: Theory says redescending %v, Redescending %v", c.psi, c.psi, th.Redescending, got)
		}
	}
}

func TestSweep(t *testing.T) {
	f, _ := LookupFamily("huber")
	rows, err := f.Sweep(0.5, 3, 6)
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 6 || rows[0].Tuning[0] != 0.5 || rows[5].Tuning[0] != 3 {
		t.Fatalf("rows %+v", rows)
	}
	for i := 1; i < len(rows); i++ {
		if rows[i].Efficiency <= rows[i-1].Efficiency {
			t.Errorf("efficiency not increasing in k: %v", rows)
		}
	}
	if _, err := f.Sweep(3, 1, 5); err == nil {
		t.Error("reversed range accepted")
	}
}
