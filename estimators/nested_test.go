package estimators

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// badLeverage returns n rows of y = 1 + Σ_j x_j + N(0, 1) with p − 1
// standard normal predictors, of which the first ⌊frac·n⌋ are replaced by a
// cluster of bad leverage points: every predictor 10 + N(0, 0.5²) and y =
// −20 + N(0, 1), far from the line, which puts y near 1 + 10(p − 1) there.
func badLeverage(seed uint64, n, p int, frac float64) (*mat.Dense, []float64) {
	rng := rand.New(rand.NewPCG(seed, 5))
	x := mat.NewDense(n, p, nil)
	y := make([]float64, n)
	bad := int(frac * float64(n))
	for i := 0; i < n; i++ {
		x.Set(i, 0, 1)
		s := 1.0
		for j := 1; j < p; j++ {
			v := rng.NormFloat64()
			if i < bad {
				v = 10 + 0.5*v
			}
			x.Set(i, j, v)
			s += v
		}
		y[i] = s + rng.NormFloat64()
		if i < bad {
			y[i] = -20 + rng.NormFloat64()
		}
	}
	return x, y
}

// TestNestedBreakdown: S, MM and LTS with their default 50% breakdown point
// are not broken by 30% of bad leverage points (Rousseeuw & Yohai (1984),
// "Robust regression by means of S-estimators", for S; Yohai (1987), "High
// breakdown-point and high efficiency robust estimates for regression",
// Ann. Statist. 15:642-656, for MM; Rousseeuw (1984), "Least median of
// squares regression", JASA 79:871-880, for LTS; all from memory), and the
// nested search of n = 5000 rows (above NestedMinRows) must still find
// such a fit. Every true coefficient is 1; the bound 0.3 on the largest
// error is ours: the clean 3500 rows give standard errors of about 0.02 (S,
// MM) to 0.06 (LTS, about 7% efficient), so 0.3 is at least 5 SE, while a
// fit drawn to the cluster moves the slopes by more than 1, as least
// squares shows (checked, so that the test can fail).
func TestNestedBreakdown(t *testing.T) {
	const n, p = 5000, 6
	if !useNested(n, p) {
		t.Fatalf("n = %d, p = %d does not use the nested search", n, p)
	}
	for _, seed := range []uint64{1, 2} {
		x, y := badLeverage(seed, n, p, 0.3)
		ls, err := Fit(Estimator{}, x, y)
		if err != nil {
			t.Fatal(err)
		}
		if e := maxError(ls.Coefficients); e < 1 {
			t.Fatalf("seed %d: least squares' largest error %.3f; the outliers should break it", seed, e)
		}
		for _, m := range []Method{MethodS, MethodMM, MethodLTS} {
			var ws Workspace
			ws.SeedRandom(seed, 9)
			var res Result
			if err := (Estimator{Method: m}).Fit(x, y, &ws, &res); err != nil {
				t.Fatal(err)
			}
			if !res.Status.Converged() {
				t.Errorf("seed %d %v: status %v", seed, m, res.Status)
			}
			if e := maxError(res.Coefficients); !(e < 0.3) {
				t.Errorf("seed %d %v: largest coefficient error %.3f, want < 0.3 (coefficients %.3f)", seed, m, e, res.Coefficients)
			}
		}
	}
}

// maxError returns the largest |β_j − 1|.
func maxError(beta []float64) float64 {
	var e float64
	for _, b := range beta {
		e = math.Max(e, math.Abs(b-1))
	}
	return e
}

// TestNestedDeterministic: the nested search draws only from the
// workspace's stream, so the same seed gives the same bits and another seed
// another search (another merged set of rows; the estimate itself may
// agree, the minimum being the same).
func TestNestedDeterministic(t *testing.T) {
	x, y := simulated(3, 4000, 4, 0.1)
	for _, m := range []Method{MethodS, MethodLTS} {
		fit := func(seed uint64, ws *Workspace) (beta []float64, merged []int) {
			ws.SeedRandom(seed, 1)
			var res Result
			if err := (Estimator{Method: m}).Fit(x, y, ws, &res); err != nil {
				t.Fatal(err)
			}
			return slices.Clone(res.Coefficients), slices.Clone(ws.lts.nest.idx[:nestedRows])
		}
		var ws1, ws2 Workspace
		a, rowsA := fit(7, &ws1)
		b, _ := fit(7, &ws2)
		_, rowsOther := fit(8, &ws1)
		c, rowsC := fit(7, &ws1) // a reused workspace after another fit
		if !slices.Equal(a, b) || !slices.Equal(a, c) || !slices.Equal(rowsA, rowsC) {
			t.Errorf("%v: same seed, different fits %v %v %v", m, a, b, c)
		}
		if slices.Equal(rowsA, rowsOther) {
			t.Errorf("%v: seeds 7 and 8 drew the same merged set", m)
		}
	}
}

// TestNestedZeroAllocs: after the first fit, a nested fit allocates
// nothing.
func TestNestedZeroAllocs(t *testing.T) {
	x, y := simulated(4, 3000, 5, 0.1)
	for _, m := range []Method{MethodS, MethodMM, MethodLTS} {
		var ws Workspace
		var res Result
		e := Estimator{Method: m}
		if err := e.Fit(x, y, &ws, &res); err != nil {
			t.Fatal(err)
		}
		allocs := testing.AllocsPerRun(2, func() {
			ws.SeedRandom(1, 2)
			e.Fit(x, y, &ws, &res)
		})
		if allocs != 0 {
			t.Errorf("%v: %v allocations per fit after the first, want 0", m, allocs)
		}
	}
}

// TestUseNested: the threshold and the column limit.
func TestUseNested(t *testing.T) {
	for _, tc := range []struct {
		n, p int
		want bool
	}{
		{NestedMinRows, 6, false},
		{NestedMinRows + 1, 6, true},
		{NestedMinRows + 1, nestedMaxCols, true},
		{NestedMinRows + 1, nestedMaxCols + 1, false},
		{100, 2, false},
	} {
		if got := useNested(tc.n, tc.p); got != tc.want {
			t.Errorf("useNested(%d, %d) = %v, want %v", tc.n, tc.p, got, tc.want)
		}
	}
}

// TestLTSKth: kth finds the h-th smallest value whatever the last
// threshold it starts from (inside the window, outside it, or none).
func TestLTSKth(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	const n = 3000
	r2 := make([]float64, n)
	for i := range r2 {
		r2[i] = math.Pow(rng.NormFloat64(), 2)
		if i%7 == 0 {
			r2[i] = r2[i-i%14] // ties
		}
	}
	var lw ltsWork
	lw.reserve(n, 3, 0, 1)
	sel := make([]float64, n)
	for _, h := range []int{1, 2, n / 2, n/2 + 1, n - 1, n} {
		lw.h = h
		sorted := slices.Clone(r2)
		slices.Sort(sorted)
		want := sorted[h-1]
		for _, last := range []float64{0, want, want * 1.01, want * 0.97, want * 2, want / 3, 1e-300} {
			lw.lastT = last
			if got := lw.kth(r2, sel); got != want {
				t.Errorf("h=%d last=%g: kth = %v, want %v", h, last, got, want)
			}
		}
	}
}

// TestRefitGram: the normal-equation refit, summed afresh or updated over
// many changes of the subset, agrees with the QR refit to 1e-10 relative
// on a well-conditioned design.
func TestRefitGram(t *testing.T) {
	const n, p = 2000, 5
	x, y := simulated(6, n, p, 0.1)
	raw := x.RawMatrix()
	var lw ltsWork
	lw.reserve(n, p, n/2, 1)
	lw.reserveGram()
	rng := rand.New(rand.NewPCG(8, 9))
	perm := rng.Perm(n)
	for i := range lw.cur {
		lw.cur[i] = false
	}
	for _, i := range perm[:lw.h] {
		lw.cur[i] = true
	}
	gram, qr := make([]float64, p), make([]float64, p)
	for step := 0; step < 40; step++ {
		// Swap a few rows in and out, sometimes many.
		swaps := 3
		if step%9 == 8 {
			swaps = lw.h / 4
		}
		for k := 0; k < swaps; k++ {
			in, out := rng.IntN(n), rng.IntN(n)
			if lw.cur[in] || !lw.cur[out] {
				continue
			}
			lw.cur[in], lw.cur[out] = true, false
		}
		if !lw.refitGram(raw, y, gram) || !lw.refitQR(raw, y, qr) {
			t.Fatalf("step %d: refit failed", step)
		}
		for j := range qr {
			if math.Abs(gram[j]-qr[j]) > 1e-10*(1+math.Abs(qr[j])) {
				t.Fatalf("step %d: coefficient %d: normal equations %v, QR %v", step, j, gram[j], qr[j])
			}
		}
	}
}

// exactPlane returns n = 3000 rows of p = 3 columns, 70% of them exactly
// on the plane y = 2 + 0.5·x1 − x2 and the rest above it.
func exactPlane() (*mat.Dense, []float64) {
	x, y := simulated(12, 3000, 3, 0)
	for i := range y {
		y[i] = 2 + 0.5*x.At(i, 1) - x.At(i, 2)
		if i%10 < 3 {
			y[i] += 4 + float64(i%17)
		}
	}
	return x, y
}

// TestNestedExactFit: when 70% of n = 3000 rows lie exactly on a plane, the
// nested searches still return it, S and MM with ExactFit (a block meets
// the exact fit and the search falls back to all rows) and LTS with
// objective 0 to rounding (the exact fit property; Rousseeuw & Leroy
// (1987), Robust Regression and Outlier Detection, from memory).
func TestNestedExactFit(t *testing.T) {
	x, y := exactPlane()
	want := []float64{2, 0.5, -1}
	for _, m := range []Method{MethodS, MethodMM, MethodLTS} {
		var ws Workspace
		var res Result
		if err := (Estimator{Method: m}).Fit(x, y, &ws, &res); err != nil {
			t.Fatal(err)
		}
		switch {
		case m != MethodLTS && res.Status != ExactFit:
			t.Errorf("%v: status %v, want exact-fit", m, res.Status)
		case m == MethodLTS && !(res.Objective <= 1e-20):
			t.Errorf("%v: objective %v, want 0 to rounding", m, res.Objective)
		}
		for j, w := range want {
			if math.Abs(res.Coefficients[j]-w) > 1e-9 {
				t.Errorf("%v: coefficient %d = %v, want %v", m, j, res.Coefficients[j], w)
			}
		}
	}
}

// TestFallbackNoColumnProducts: the searches on all rows that the nested
// searches fall back to do not store the column products of a large
// design, which would take n·p(p+1)/2 values (colMaxP): the S fit of
// TestNestedExactFit falls back to sFitPlain on all 3000 rows, and LTS's
// fallback is starts on all rows. Only the merged set's products, of
// nestedRows rows, are kept.
func TestFallbackNoColumnProducts(t *testing.T) {
	const n, p = 3000, 3 // exactPlane's
	x, y := exactPlane()
	bounded := func(name string, cw *colWork) {
		t.Helper()
		if cw == nil {
			return
		}
		if c, most := cap(cw.prod), nestedRows*p*(p+1)/2; c > most {
			t.Errorf("%s: column products hold %d values, want at most %d", name, c, most)
		}
		if c := cap(cw.xt); c > nestedRows*p {
			t.Errorf("%s: columns hold %d values, want at most %d", name, c, nestedRows*p)
		}
	}
	var ws Workspace
	var res Result
	if err := (Estimator{Method: MethodS}).Fit(x, y, &ws, &res); err != nil {
		t.Fatal(err)
	}
	if res.Status != ExactFit {
		t.Fatalf("S: status %v, want exact-fit (the fallback to all rows)", res.Status)
	}
	if ws.lts.col != nil {
		t.Errorf("S: the search on all %d rows stored column products", n)
	}
	if ws.lts.nest != nil {
		bounded("S merged set", ws.lts.nest.sub.lts.col)
	}

	var lw ltsWork
	xg := x.RawMatrix()
	s := ltsSettings{}.withDefaults(n, p)
	lw.reserve(n, p, s.H, s.Keep)
	starts, _ := lw.starts(xg, y, rand.New(rand.NewPCG(1, 2)), s.Subsets, s.CSteps, s.Keep)
	if starts == 0 || lw.nKept == 0 {
		t.Fatalf("LTS starts on all rows: %d starts, %d kept", starts, lw.nKept)
	}
	if lw.col != nil || cap(lw.start.prod) != 0 {
		t.Errorf("LTS starts on all %d rows stored column products (%d values by rows)", n, cap(lw.start.prod))
	}
}
