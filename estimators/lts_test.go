package estimators

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
	"testing"

	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
)

// ltsFit runs the LTS solver once with a generator seeded by seed.
func ltsFit(x *mat.Dense, y []float64, seed uint64, s ltsSettings) (beta []float64, obj, scale float64, steps int, st Status) {
	var lw ltsWork
	_, p := x.Dims()
	beta = make([]float64, p)
	obj, scale, steps, st = lw.fit(x.RawMatrix(), y, beta, rand.New(rand.NewPCG(seed, 0)), s)
	return beta, obj, scale, steps, st
}

// ltsStandardised returns |y − xβ|/scale for every row.
func ltsStandardised(x *mat.Dense, y, beta []float64, scale float64) []float64 {
	u := make([]float64, len(y))
	for i := range y {
		r := y[i]
		for j, b := range beta {
			r -= x.At(i, j) * b
		}
		u[i] = math.Abs(r) / scale
	}
	return u
}

// ltsLargest returns the row indices of the k largest values of u, ascending.
func ltsLargest(u []float64, k int) []int {
	ord := make([]int, len(u))
	for i := range ord {
		ord[i] = i
	}
	sort.SliceStable(ord, func(a, b int) bool { return u[ord[a]] > u[ord[b]] })
	top := append([]int(nil), ord[:k]...)
	sort.Ints(top)
	return top
}

func TestLTSDefaultSubsets(t *testing.T) {
	// ⌈log(0.01)/log(1 − 0.5^p)⌉ evaluated independently (Python's math
	// module), then bounded to [500, 10000].
	cases := []struct{ p, want int }{
		{1, 500}, {4, 500}, {6, 500}, // the formula gives 7, 72, 293
		{7, 588}, {8, 1177}, {10, 4714}, {11, 9430},
		{12, 10000}, {13, 10000}, {40, 10000}, {2000, 10000}, // 18861, 37724, ...
	}
	for _, c := range cases {
		if got := ElementalSubsets(c.p); got != c.want {
			t.Errorf("ElementalSubsets(%d) = %d, want %d", c.p, got, c.want)
		}
	}
}

// TestLTSConsistency checks the closed form α − 2qφ(q) for ∫_{−q}^{q} z²φ(z)
// dz against adaptive quadrature of the integrand, and the factor at α = 1/2
// against its value computed independently (2.6476545, with Python's
// statistics.NormalDist).
func TestLTSConsistency(t *testing.T) {
	phi := func(z float64) float64 { return math.Exp(-z*z/2) / math.Sqrt(2*math.Pi) }
	for _, alpha := range []float64{0.3, 0.5, 0.6, 0.75, 0.9, 0.99} {
		// q from the factor's own definition is not used: bisection on the
		// normal probability of [−q, q] gives q independently.
		lo, hi := 0.0, 10.0
		for k := 0; k < 200; k++ {
			m := (lo + hi) / 2
			if integrate(phi, -m, m) < alpha {
				lo = m
			} else {
				hi = m
			}
		}
		q := (lo + hi) / 2
		m2 := integrate(func(z float64) float64 { return z * z * phi(z) }, -q, q) / alpha
		want := 1 / math.Sqrt(m2)
		if got := ltsConsistency(alpha); math.Abs(got-want) > 1e-8*want {
			t.Errorf("ltsConsistency(%v) = %.12g, quadrature %.12g", alpha, got, want)
		}
	}
	if got := ltsConsistency(0.5); math.Abs(got-2.6476545) > 1e-7 {
		t.Errorf("ltsConsistency(0.5) = %.10g, want 2.6476545", got)
	}
	if got := ltsConsistency(1); got != 1 {
		t.Errorf("ltsConsistency(1) = %v, want 1 (nothing trimmed)", got)
	}
}

// TestLTSHawkinsBraduKass: Hawkins, Bradu & Kass (1984), "Location of
// several outliers in multiple regression data using elemental sets",
// Technometrics 26:197-208. The published finding: of the 75 rows, rows 1-10
// are bad leverage points and rows 11-14 good leverage points, so a
// high-breakdown fit exposes rows 1-10 (the ten largest standardised
// residuals) and fits every other row, rows 11-14 included (standardised
// residual below 2.5 in absolute value, the usual cut-off, common practice).
// The clean rows' noise is small, so the scale must be below 1.
func TestLTSHawkinsBraduKass(t *testing.T) {
	x, y := design(t, "hbk.csv", []string{"X1", "X2", "X3"}, "Y")
	for _, seed := range []uint64{1, 2, 3} {
		beta, obj, scale, steps, st := ltsFit(x, y, seed, ltsSettings{})
		if st != Solved {
			t.Fatalf("seed %d: status %v", seed, st)
		}
		u := ltsStandardised(x, y, beta, scale)
		if top := ltsLargest(u, 10); fmt.Sprint(top) != fmt.Sprint([]int{0, 1, 2, 3, 4, 5, 6, 7, 8, 9}) {
			t.Errorf("seed %d: rows with the ten largest standardised residuals (0-based) %v, want rows 1-10", seed, top)
		}
		for i := 10; i < len(u); i++ {
			if u[i] >= 2.5 {
				t.Errorf("seed %d: row %d has standardised residual %.3f, want < 2.5", seed, i+1, u[i])
			}
		}
		if !(scale < 1) {
			t.Errorf("seed %d: scale %v, want < 1", seed, scale)
		}
		if seed == 1 {
			t.Logf("coefficients %.5f, objective %.6g, scale %.5f, %d C-steps", beta, obj, scale, steps)
			for i := 0; i < 14; i++ {
				t.Logf("row %2d: |r|/s = %.3f", i+1, u[i])
			}
		}
	}
}

// TestLTSStars: star cluster CYG OB1, Rousseeuw & Leroy (1987), Robust
// Regression and Outlier Detection, Wiley, Table 3 (least squares on these
// data: TestStarsCYG). The four giants (rows 11, 20, 30, 34) pull least
// squares; the LTS concentration itself must follow the main sequence (a
// positive slope) and give the giants the four largest standardised
// residuals.
func TestLTSStars(t *testing.T) {
	x, y := design(t, "stars_cyg.csv", []string{"log.Te"}, "log.light")
	beta, _, scale, _, st := ltsFit(x, y, 1, ltsSettings{})
	if st != Solved {
		t.Fatalf("status %v", st)
	}
	if !(beta[1] > 0) {
		t.Errorf("LTS slope %.4f, want > 0", beta[1])
	}
	u := ltsStandardised(x, y, beta, scale)
	if top := ltsLargest(u, 4); fmt.Sprint(top) != fmt.Sprint([]int{10, 19, 29, 33}) {
		t.Errorf("rows with the four largest standardised residuals (0-based) %v, want the giants 10, 19, 29, 33", top)
	}
	t.Logf("LTS: intercept %.4f slope %.4f scale %.4f; giants |r|/s = %.2f %.2f %.2f %.2f",
		beta[0], beta[1], scale, u[10], u[19], u[29], u[33])
}

// TestLTSCStepDecreases checks the property behind C-steps (Rousseeuw & Van
// Driessen (2006), "Computing LTS regression for large data sets", Data
// Mining and Knowledge Discovery 12:29-45): refitting least squares to the h
// rows with the smallest squared residuals never raises the LTS objective.
// Rounding is allowed at 4·h·eps relative, the error bound of adding h
// positive terms.
func TestLTSCStepDecreases(t *testing.T) {
	var lw ltsWork
	for seed := uint64(1); seed <= 40; seed++ {
		rng := rand.New(rand.NewPCG(seed, 99))
		n := 15 + rng.IntN(100)
		p := 1 + rng.IntN(5)
		x, y := simulated(seed, n, p, 0.3)
		raw := x.RawMatrix()
		s := ltsSettings{}.withDefaults(n, p)
		if seed%3 == 0 {
			s.H = p + rng.IntN(n-p+1)
		}
		lw.reserve(n, p, s.H, 1)
		b := make([]float64, p)
		for j := range b {
			b[j] = 3 * rng.NormFloat64()
		}
		obj, ok := lw.evaluate(raw, y, b)
		if !ok {
			t.Fatalf("seed %d: evaluate failed", seed)
		}
		for k := 0; k < 6; k++ {
			if !lw.refit(raw, y, b) {
				t.Fatalf("seed %d: singular refit", seed)
			}
			next, ok := lw.evaluate(raw, y, b)
			if !ok {
				t.Fatalf("seed %d: evaluate failed", seed)
			}
			if next > obj*(1+4*float64(s.H)*epsilon) {
				t.Errorf("seed %d (n %d, p %d, h %d) step %d: objective rose from %.17g to %.17g", seed, n, p, s.H, k+1, obj, next)
			}
			obj = next
		}
	}
}

// ltsLine returns an invented clean dataset y = 1 + 2x + N(0, 0.1²) with x
// uniform on [0, 10], n rows, for tests only.
func ltsLine(seed uint64, n int) (*mat.Dense, []float64) {
	rng := rand.New(rand.NewPCG(seed, 7))
	x := mat.NewDense(n, 2, nil)
	y := make([]float64, n)
	for i := range y {
		v := 10 * rng.Float64()
		x.Set(i, 0, 1)
		x.Set(i, 1, v)
		y[i] = 1 + 2*v + 0.1*rng.NormFloat64()
	}
	return x, y
}

// TestLTSBreakdown: with h = ⌊(n+p+1)/2⌋ = 21 of n = 40, LTS resists any 19
// replaced rows (breakdown point (n−h+1)/n; Rousseeuw & Leroy (1987), Robust
// Regression and Outlier Detection, from memory). Replacing 15 rows by a
// far cluster at (100, 0) leaves the LTS slope within 0.1 of 2, while least
// squares is pulled far away. 0.1 is our bound: with noise SD 0.1 and x
// spread over [0, 10] on 25 clean rows, the slope's SE is about 0.007, so
// 0.1 (some 14 SE) only fails if the outliers move the fit.
func TestLTSBreakdown(t *testing.T) {
	for _, seed := range []uint64{1, 2, 3, 4} {
		x, y := ltsLine(seed, 40)
		for i := 0; i < 15; i++ {
			x.Set(i, 1, 100)
			y[i] = 0
		}
		beta, _, _, _, st := ltsFit(x, y, seed+100, ltsSettings{})
		if st != Solved {
			t.Errorf("seed %d: status %v", seed, st)
		}
		if math.Abs(beta[1]-2) > 0.1 {
			t.Errorf("seed %d: LTS slope %.4f, want within 0.1 of 2", seed, beta[1])
		}
		ls, err := Fit(Estimator{}, x, y)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(ls.Coefficients[1]-2) < 1 {
			t.Errorf("seed %d: least-squares slope %.4f, expected to break down", seed, ls.Coefficients[1])
		}
		if seed == 1 {
			t.Logf("LTS slope %.4f, least-squares slope %.4f", beta[1], ls.Coefficients[1])
		}
	}
}

// TestLTSExactFit: when more than h rows lie exactly on a hyperplane, LTS
// returns it with objective zero (the exact fit property of LTS; Rousseeuw
// & Leroy (1987), from memory).
func TestLTSExactFit(t *testing.T) {
	x, y := ltsLine(5, 30)
	for i := range y {
		y[i] = 3 - x.At(i, 1)
		if i%3 == 0 {
			y[i] += 5 + float64(i)
		}
	}
	beta, obj, scale, _, st := ltsFit(x, y, 1, ltsSettings{})
	if st != Solved {
		t.Fatalf("status %v", st)
	}
	if math.Abs(beta[0]-3) > 1e-12 || math.Abs(beta[1]+1) > 1e-12 {
		t.Errorf("coefficients %v, want (3, −1)", beta)
	}
	if obj > 1e-24 || scale > 1e-12 {
		t.Errorf("objective %v scale %v, want 0 to rounding", obj, scale)
	}
}

// TestLTSAllRowsIsLS: with h = n nothing is trimmed and LTS is least
// squares.
func TestLTSAllRowsIsLS(t *testing.T) {
	x, y := simulated(9, 50, 4, 0.2)
	beta, obj, scale, _, st := ltsFit(x, y, 3, ltsSettings{H: 50, Subsets: 20})
	if st != Solved {
		t.Fatalf("status %v", st)
	}
	ls, err := Fit(Estimator{}, x, y)
	if err != nil {
		t.Fatal(err)
	}
	for j, b := range ls.Coefficients {
		if math.Abs(beta[j]-b) > 1e-10*math.Max(1, math.Abs(b)) {
			t.Errorf("coefficient %d: LTS %.15g, least squares %.15g", j, beta[j], b)
		}
	}
	// RSS/2 is the least-squares objective; LTS reports RSS and sqrt(RSS/n).
	if math.Abs(obj-2*ls.Objective) > 1e-10*obj || math.Abs(scale-math.Sqrt(obj/50)) > 1e-15*scale {
		t.Errorf("objective %v (least squares RSS %v), scale %v", obj, 2*ls.Objective, scale)
	}
}

// TestLTSDeterministic: the same seed gives bit-identical results; on clean
// data different seeds find the same optimum, hence the same h-subset and
// the same bits (the refit depends only on the subset).
func TestLTSDeterministic(t *testing.T) {
	x, y := simulated(21, 60, 3, 0)
	ref, refObj, _, _, st := ltsFit(x, y, 1, ltsSettings{})
	if st != Solved {
		t.Fatalf("status %v", st)
	}
	again, againObj, _, _, _ := ltsFit(x, y, 1, ltsSettings{})
	for j := range ref {
		if math.Float64bits(ref[j]) != math.Float64bits(again[j]) || refObj != againObj {
			t.Fatalf("same seed: %v (%v) then %v (%v)", ref, refObj, again, againObj)
		}
	}
	for seed := uint64(2); seed <= 6; seed++ {
		b, obj, _, _, st := ltsFit(x, y, seed, ltsSettings{})
		if st != Solved {
			t.Errorf("seed %d: status %v", seed, st)
		}
		for j := range ref {
			if math.Float64bits(ref[j]) != math.Float64bits(b[j]) || obj != refObj {
				t.Errorf("seed %d: %v (objective %v), seed 1: %v (objective %v)", seed, b, obj, ref, refObj)
				break
			}
		}
	}
}

// TestLTSStatuses covers every way a fit can end.
func TestLTSStatuses(t *testing.T) {
	// All x equal in a model with an intercept: every subset of rows, the
	// whole design included, is singular. The design's own rank test fails
	// first, so the fit reports SingularDesign (as least squares does)
	// rather than ElementalFailure, which would wrongly suggest that more
	// draws could help.
	flat := mat.NewDense(20, 2, nil)
	flatY := make([]float64, 20)
	for i := range flatY {
		flat.SetRow(i, []float64{1, 4})
		flatY[i] = float64(i)
	}
	// An intercept and 30 indicator columns, each nonzero on one row of 60:
	// a start has full rank only if all 30 of those rows are among its at
	// most h = 46 rows, which has probability C(30,16)/C(60,46) ≈ 2.5e-5 per
	// draw. With Subsets = 1 there are 50 draws: ElementalFailure (the
	// chance of a success is about 0.1%; the seed fixes the outcome).
	ind := mat.NewDense(60, 31, nil)
	indY := make([]float64, 60)
	for i := range indY {
		ind.Set(i, 0, 1)
		if i < 30 {
			ind.Set(i, i+1, 1)
		}
		indY[i] = float64(i % 7)
	}
	// One indicator column on a single row, beside an intercept and a
	// continuous column: most elemental draws are singular and need
	// extending, and 45% fail even so (TestLTSDrawExtends), yet the fit
	// succeeds.
	one, oneY := simulated(4, 40, 3, 0.1)
	for i := 0; i < 40; i++ {
		one.Set(i, 2, 0)
	}
	one.Set(17, 2, 1)
	// Data with a NaN.
	nanX, nanY := simulated(5, 30, 2, 0)
	nanY[4] = math.NaN()
	// A contaminated problem whose concentration needs more than one step.
	slowX, slowY := simulated(6, 200, 3, 0.4)
	cases := []struct {
		name string
		x    *mat.Dense
		y    []float64
		s    ltsSettings
		want Status
	}{
		{"flat design", flat, flatY, ltsSettings{}, SingularDesign},
		{"indicators", ind, indY, ltsSettings{Subsets: 1}, ElementalFailure},
		{"one indicator", one, oneY, ltsSettings{}, Solved},
		{"NaN", nanX, nanY, ltsSettings{}, NonFinite},
		{"step cap", slowX, slowY, ltsSettings{Subsets: 3, CSteps: 1, MaxSteps: 1}, IterationLimit},
		{"no cap", slowX, slowY, ltsSettings{Subsets: 3, CSteps: 1}, Solved},
	}
	for _, c := range cases {
		beta, obj, scale, steps, st := ltsFit(c.x, c.y, 1, c.s)
		if st != c.want {
			t.Errorf("%s: status %v, want %v", c.name, st, c.want)
			continue
		}
		fitted := st == Solved || st == IterationLimit
		if fitted == math.IsNaN(obj) || fitted == math.IsNaN(scale) || fitted == math.IsNaN(beta[0]) {
			t.Errorf("%s: objective %v scale %v beta %v", c.name, obj, scale, beta)
		}
		// The steps reported are the winner's: its one first C-step, then
		// the one the cap allows in its concentration.
		if c.name == "step cap" && steps != 1+1 {
			t.Errorf("%s: %d C-steps, want the winner's 1 first + 1 capped", c.name, steps)
		}
	}
}

// TestLTSDrawUniform: an elemental draw is p distinct rows, every p-subset
// equally likely. For n = 5, p = 2 each of the 10 pairs has probability
// 1/10; over 20000 draws each frequency must be within 4 Monte Carlo
// standard errors (4·sqrt(0.1·0.9/20000) ≈ 0.0085) of it.
func TestLTSDrawUniform(t *testing.T) {
	x, y := ltsLine(2, 5)
	raw := x.RawMatrix()
	var lw ltsWork
	lw.reserve(5, 2, 3, 1)
	rng := rand.New(rand.NewPCG(11, 12))
	const draws = 20000
	var count [5][5]int
	for k := 0; k < draws; k++ {
		if rows := lw.draw(raw, y, rng); rows != 2 {
			t.Fatalf("draw %d used %d rows of a design in general position", k, rows)
		}
		a, b := lw.idx[0], lw.idx[1]
		if a == b {
			t.Fatalf("draw %d repeated row %d", k, a)
		}
		count[min(a, b)][max(a, b)]++
	}
	tol := 4 * math.Sqrt(0.1*0.9/draws)
	for a := 0; a < 5; a++ {
		for b := a + 1; b < 5; b++ {
			if f := float64(count[a][b]) / draws; math.Abs(f-0.1) > tol {
				t.Errorf("pair (%d, %d) drawn with frequency %.4f, want 0.1 ± %.4f", a, b, f, tol)
			}
		}
	}
}

// TestLTSDrawExtends: in a design with an indicator column that is nonzero
// on one row only, a set of rows has full rank exactly when it holds that
// row (and two rows with distinct x). A draw adds rows in a uniformly random
// order until full rank, so it stops at the position of that row in the
// order, or at p = 3 if the row comes earlier, and fails if the row is not
// among the first h = 22. It succeeds with probability h/n = 0.55: over 500
// draws the count must be within 4 binomial standard errors
// (4·sqrt(500·0.55·0.45) ≈ 44) of 275. Without extension only the 3/40 of
// draws that hold the row among the first three would succeed.
func TestLTSDrawExtends(t *testing.T) {
	x, y := simulated(4, 40, 3, 0.1)
	for i := 0; i < 40; i++ {
		x.Set(i, 2, 0)
	}
	x.Set(17, 2, 1)
	raw := x.RawMatrix()
	var lw ltsWork
	h := (40 + 3 + 1) / 2
	lw.reserve(40, 3, h, 1)
	rng := rand.New(rand.NewPCG(5, 6))
	const draws = 500
	ok := 0
	for k := 0; k < draws; k++ {
		rows := lw.draw(raw, y, rng)
		if rows == 0 {
			continue
		}
		ok++
		if rows < 3 || rows > h {
			t.Fatalf("draw %d: %d rows, want 3..%d", k, rows, h)
		}
		pos := -1
		for j, i := range lw.idx[:rows] {
			if i == 17 {
				pos = j
			}
		}
		if pos < 0 || (rows > 3 && pos != rows-1) {
			t.Fatalf("draw %d: rows %v, want row 18 (index 17) last or among the first three", k, lw.idx[:rows])
		}
		r := y[17] - lw.trial[0] - lw.trial[1]*x.At(17, 1) - lw.trial[2]
		if math.Abs(r) > 1e-12*math.Abs(y[17]) {
			t.Fatalf("draw %d: residual of row 18 is %v, want 0", k, r)
		}
	}
	if want, tol := 0.55*draws, 4*math.Sqrt(draws*0.55*0.45); math.Abs(float64(ok)-want) > tol {
		t.Errorf("%d of %d draws succeeded, want %.0f ± %.0f", ok, draws, want, tol)
	}
}

func TestLTSSettingsCheck(t *testing.T) {
	cases := []struct {
		s    ltsSettings
		n, p int
		ok   bool
	}{
		{ltsSettings{}, 10, 3, true},
		{ltsSettings{}, 3, 3, true},
		{ltsSettings{H: 10}, 10, 3, true},
		{ltsSettings{H: 3}, 10, 3, true},
		{ltsSettings{H: 2}, 10, 3, false},
		{ltsSettings{H: 11}, 10, 3, false},
		{ltsSettings{Subsets: -1}, 10, 3, false},
		{ltsSettings{Keep: -1}, 10, 3, false},
		{ltsSettings{CSteps: -2}, 10, 3, false},
		{ltsSettings{MaxSteps: -1}, 10, 3, false},
		{ltsSettings{}, 2, 3, false},
		{ltsSettings{}, 5, 0, false},
	}
	for _, c := range cases {
		if err := c.s.check(c.n, c.p); (err == nil) != c.ok {
			t.Errorf("%+v on %d×%d: error %v, want ok %v", c.s, c.n, c.p, err, c.ok)
		}
	}
}

// TestLTSSubset checks the h-subset chosen by evaluate against a full sort
// by squared residual then row index, with many tied residuals, and the
// objective against the sum over that subset.
func TestLTSSubset(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	var lw ltsWork
	for trial := 0; trial < 300; trial++ {
		n := 1 + rng.IntN(300)
		h := 1 + rng.IntN(n)
		x := blas64.General{Rows: n, Cols: 1, Stride: 1, Data: make([]float64, n)}
		y := make([]float64, n)
		for i := range y {
			// Residuals y − 0·x; ties (and ± pairs) when trial%4 > 0.
			y[i] = float64(rng.IntN(1+n/(1+trial%4))) - float64(n/4)
		}
		lw.reserve(n, 1, h, 1)
		obj, ok := lw.evaluate(x, y, []float64{0})
		if !ok {
			t.Fatal("evaluate failed")
		}
		ord := make([]int, n)
		for i := range ord {
			ord[i] = i
		}
		sort.Slice(ord, func(a, b int) bool {
			ra, rb := y[ord[a]]*y[ord[a]], y[ord[b]]*y[ord[b]]
			return ra < rb || (ra == rb && ord[a] < ord[b])
		})
		want := make([]bool, n)
		var sum float64
		for _, i := range ord[:h] {
			want[i] = true
			sum += y[i] * y[i] // integers: exact in any order
		}
		if !ltsSameSubset(lw.cur[:n], want) || obj != sum {
			t.Fatalf("n %d h %d: subset %v objective %v, want %v objective %v", n, h, lw.cur[:n], obj, want, sum)
		}
	}
}

func TestLTSZeroAllocs(t *testing.T) {
	x, y := simulated(8, 100, 5, 0.2)
	raw := x.RawMatrix()
	beta := make([]float64, 5)
	pcg := rand.NewPCG(1, 2)
	rng := rand.New(pcg)
	var lw ltsWork
	lw.fit(raw, y, beta, rng, ltsSettings{})
	allocs := testing.AllocsPerRun(3, func() {
		pcg.Seed(1, 2)
		lw.fit(raw, y, beta, rng, ltsSettings{})
	})
	if allocs != 0 {
		t.Errorf("%v allocations per fit after the first, want 0", allocs)
	}
}

// BenchmarkLTS measures one FAST-LTS fit with the default settings, reusing
// the solver's buffers; allocations per fit must be zero.
func BenchmarkLTS(b *testing.B) {
	for _, shape := range []struct{ n, p int }{{100, 5}, {1000, 5}} {
		x, y := simulated(42, shape.n, shape.p, 0.1)
		raw := x.RawMatrix()
		b.Run(fmt.Sprintf("n=%d/p=%d", shape.n, shape.p), func(b *testing.B) {
			var lw ltsWork
			beta := make([]float64, shape.p)
			pcg := rand.NewPCG(1, 2)
			rng := rand.New(pcg)
			benchLTS(b, &lw, raw, y, beta, pcg, rng)
		})
	}
}

// benchLTS runs the timed loop of BenchmarkLTS, reseeding before every fit.
func benchLTS(b *testing.B, lw *ltsWork, raw blas64.General, y, beta []float64, pcg *rand.PCG, rng *rand.Rand) {
	lw.fit(raw, y, beta, rng, ltsSettings{})
	b.ReportAllocs()
	b.ResetTimer()
	steps := 0
	for i := 0; i < b.N; i++ {
		pcg.Seed(1, 2)
		_, _, s, _ := lw.fit(raw, y, beta, rng, ltsSettings{})
		steps += s
	}
	b.ReportMetric(float64(steps)/float64(b.N), "csteps/fit")
}
