package estimators

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"github.com/rhomark/rhomark/psi"
)

// ladFitDense runs the exact LAD solver on a dense design.
func ladFitDense(lw *ladWork, x *mat.Dense, y, start []float64) ([]float64, int, Status) {
	_, p := x.Dims()
	beta := make([]float64, p)
	it, st := lw.fit(x.RawMatrix(), y, beta, start)
	return beta, it, st
}

// l1Objective returns Σ|y_i − x_iᵀβ|.
func l1Objective(x *mat.Dense, y, beta []float64) float64 {
	var f float64
	for i := range y {
		f += math.Abs(y[i] - mat.Dot(x.RowView(i), mat.NewVecDense(len(beta), beta)))
	}
	return f
}

// forSubsets calls f with every k-subset of {0, ..., n-1} in lexicographic
// order until f returns false.
func forSubsets(n, k int, f func([]int) bool) {
	s := make([]int, k)
	for i := range s {
		s[i] = i
	}
	for {
		if !f(s) {
			return
		}
		i := k - 1
		for i >= 0 && s[i] == n-k+i {
			i--
		}
		if i < 0 {
			return
		}
		s[i]++
		for j := i + 1; j < k; j++ {
			s[j] = s[j-1] + 1
		}
	}
}

// subsetInverse returns the inverse of the rows of x listed in rows, or
// false when they are singular: condition number above 1e10 once each
// column is scaled to largest absolute value 1, so the units of a column do
// not matter.
func subsetInverse(x *mat.Dense, rows []int) (*mat.Dense, bool) {
	p := len(rows)
	b := mat.NewDense(p, p, nil)
	for k, i := range rows {
		b.SetRow(k, mat.Row(nil, i, x))
	}
	scaled := mat.DenseCopyOf(b)
	for j := 0; j < p; j++ {
		m := mat.Norm(scaled.ColView(j), math.Inf(1))
		if m == 0 {
			return nil, false
		}
		for k := 0; k < p; k++ {
			scaled.Set(k, j, scaled.At(k, j)/m)
		}
	}
	var lu mat.LU
	lu.Factorize(scaled)
	if lu.Cond() > 1e10 {
		return nil, false
	}
	var inv mat.Dense
	if err := inv.Inverse(b); err != nil {
		return nil, false
	}
	return &inv, true
}

// bruteForceL1 returns the least L1 objective over all vertices: every
// p-subset of observations with a non-singular design, fitted exactly. An
// L1 minimum is attained at such a vertex when X has full rank (common
// practice: a linear programme attains its optimum at a basic solution), so
// this is an independent reference for small n.
func bruteForceL1(x *mat.Dense, y []float64) float64 {
	n, p := x.Dims()
	best := math.Inf(1)
	forSubsets(n, p, func(rows []int) bool {
		inv, ok := subsetInverse(x, rows)
		if !ok {
			return true
		}
		yb := make([]float64, p)
		for k, i := range rows {
			yb[k] = y[i]
		}
		beta := make([]float64, p)
		mat.NewVecDense(p, beta).MulVec(inv, mat.NewVecDense(p, yb))
		best = math.Min(best, l1Objective(x, y, beta))
		return true
	})
	return best
}

// checkCertificate checks the optimality conditions of an L1 fit at beta,
// computed here from the definition and independently of the solver. The
// zero residuals Z must hold a non-singular basis B; for every such B
// (up to 300 of them) and every basis position k, the one-sided
// derivatives of F(β) = Σ|r_i| along ±X_B⁻¹e_k,
//
//	D_k^± = 1 ∓ Σ_{i∉Z} sign(r_i)·x_iᵀδ_k + Σ_{i∈Z\B} |x_iᵀδ_k|,
//
// must be ≥ −1e-9 (at a minimum of a convex function every directional
// derivative is non-negative). Over every basis in Z the test is also
// sufficient: the directional derivative is linear on each cone cut out by
// the hyperplanes x_iᵀδ = 0, i ∈ Z, and the extreme rays of those cones are
// exactly these edges. At a vertex with more than p zero residuals the
// edges of one basis alone do not suffice.
func checkCertificate(t *testing.T, name string, x *mat.Dense, y, beta []float64) {
	t.Helper()
	n, p := x.Dims()
	r := make([]float64, n)
	scale := 0.0
	for i := range y {
		r[i] = y[i] - mat.Dot(x.RowView(i), mat.NewVecDense(p, beta))
		scale = math.Max(scale, math.Abs(y[i]))
	}
	for j := 0; j < p; j++ {
		cm := 0.0
		for i := 0; i < n; i++ {
			cm = math.Max(cm, math.Abs(x.At(i, j)))
		}
		scale += cm * math.Abs(beta[j])
	}
	var zero []int
	inZ := make([]bool, n)
	for i, v := range r {
		if math.Abs(v) <= 1e-9*scale {
			zero = append(zero, i)
			inZ[i] = true
		}
	}
	if len(zero) < p {
		t.Errorf("%s: only %d zero residuals at the fit, a vertex has at least %d", name, len(zero), p)
		return
	}
	bases, worst := 0, math.Inf(1)
	forSubsets(len(zero), p, func(sub []int) bool {
		rows := make([]int, p)
		inB := make([]bool, n)
		for k, s := range sub {
			rows[k] = zero[s]
			inB[zero[s]] = true
		}
		inv, ok := subsetInverse(x, rows)
		if !ok {
			return true
		}
		bases++
		for k := 0; k < p; k++ {
			var signed, abs float64
			for i := 0; i < n; i++ {
				if inB[i] {
					continue
				}
				d := mat.Dot(x.RowView(i), inv.ColView(k))
				if inZ[i] {
					abs += math.Abs(d)
				} else {
					signed += math.Copysign(1, r[i]) * d
				}
			}
			worst = math.Min(worst, math.Min(1-signed+abs, 1+signed+abs))
		}
		return bases < 300
	})
	if bases == 0 {
		t.Errorf("%s: the zero residuals hold no non-singular basis", name)
	}
	if worst < -1e-9 {
		t.Errorf("%s: a directional derivative is %g < 0 at the returned fit", name, worst)
	}
}

// TestLADExactStackloss fits the L1 regression of stack loss on air flow,
// water temperature and acid concentration (Brownlee (1965), Statistical
// Theory and Methodology in Science and Engineering, 2nd ed., Wiley).
// Published L1 coefficients -39.69, 0.8319, 0.5739, -0.0609, as reported in
// Rousseeuw & Leroy (1987), Robust Regression and Outlier Detection, Wiley
// (stack loss, L1 fit) and Birkes & Dodge (1993), Alternative Methods of
// Regression, Wiley; the values are from memory, so the tolerance is half a
// unit in the last printed digit.
func TestLADExactStackloss(t *testing.T) {
	x, y := stackloss(t)
	want := []struct{ value, halfUnit float64 }{
		{-39.69, 0.005}, {0.8319, 0.00005}, {0.5739, 0.00005}, {-0.0609, 0.00005},
	}
	var lw ladWork
	beta, it, st := ladFitDense(&lw, x, y, nil)
	if st != Solved {
		t.Fatalf("status %v after %d iterations", st, it)
	}
	t.Logf("L1 fit %.6f, objective %.6f, %d iterations", beta, l1Objective(x, y, beta), it)
	for j, w := range want {
		if d := math.Abs(beta[j] - w.value); d > w.halfUnit {
			t.Errorf("coefficient %d = %.6f, published %v", j, beta[j], w.value)
		}
	}
	checkCertificate(t, "stack loss", x, y, beta)
	// The public Fit gives the same estimate.
	if res, err := Fit(Estimator{Method: MethodLAD}, x, y); err != nil || res.Status != Solved || fmt.Sprint(res.Coefficients) != fmt.Sprint(beta) {
		t.Errorf("Fit: %v %v %v, want %v", res.Coefficients, res.Status, err, beta)
	}
	if f, min := l1Objective(x, y, beta), bruteForceL1(x, y); math.Abs(f-min) > 1e-9*min {
		t.Errorf("objective %.12g, brute-force minimum over all 4-subsets %.12g", f, min)
	}
	// The same vertex objective from every start.
	for _, start := range [][]float64{{0, 0, 0, 0}, {-39.9197, 0.71564, 1.29529, -0.152123}, {100, -5, 5, 1}} {
		b, _, st := ladFitDense(&lw, x, y, start)
		if st != Solved {
			t.Errorf("start %v: status %v", start, st)
		}
		if f, g := l1Objective(x, y, b), l1Objective(x, y, beta); math.Abs(f-g) > 1e-9*g {
			t.Errorf("start %v: objective %.12g, from least squares %.12g", start, f, g)
		}
	}
}

// inventedL1 returns a small invented regression dataset (an intercept and
// p-1 predictors, n rows) of the given kind, built to stress the solver:
// integer data with many ties, duplicated rows, a majority lying exactly on
// a plane, or gross outliers with a leverage point.
func inventedL1(kind string, seed uint64, n, p int) (*mat.Dense, []float64) {
	rng := rand.New(rand.NewPCG(seed, 7))
	x := mat.NewDense(n, p, nil)
	y := make([]float64, n)
	for i := 0; i < n; i++ {
		x.Set(i, 0, 1)
		for j := 1; j < p; j++ {
			switch kind {
			case "integer", "collinear", "ties":
				x.Set(i, j, float64(rng.IntN(7)-3))
			default:
				x.Set(i, j, rng.NormFloat64())
			}
		}
		plane := 1.0
		for j := 1; j < p; j++ {
			plane += float64(j) * x.At(i, j)
		}
		switch kind {
		case "integer":
			y[i] = plane + float64(rng.IntN(5)-2)
		case "ties":
			y[i] = float64(rng.IntN(3))
		case "collinear":
			y[i] = plane
			if i >= (3*n)/5 {
				y[i] += float64(rng.IntN(21) - 10)
			}
		case "duplicates":
			y[i] = plane + rng.NormFloat64()
			if i >= n/2 {
				src := rng.IntN(n / 2)
				x.SetRow(i, mat.Row(nil, src, x))
				y[i] = y[src]
				if i%3 == 0 {
					y[i] += rng.NormFloat64() // same design row, another response
				}
			}
		case "outliers":
			y[i] = plane + rng.NormFloat64()
			if i < n/4 {
				y[i] += 30
			}
			if i == n-1 {
				x.Set(i, 1, 10)
			}
		}
	}
	return x, y
}

// TestLADExactBruteForce compares the solver's objective with the least
// objective over all vertices, found by enumeration, on small invented
// datasets. The argmin need not be unique, so objectives are compared.
func TestLADExactBruteForce(t *testing.T) {
	kinds := []string{"integer", "ties", "collinear", "duplicates", "outliers"}
	var lw ladWork
	cases := 0
	for _, kind := range kinds {
		for _, p := range []int{2, 3} {
			for seed := uint64(1); seed <= 12; seed++ {
				n := 6 + int(seed)%7
				x, y := inventedL1(kind, seed, n, p)
				want := bruteForceL1(x, y)
				scale := 0.0
				for _, v := range y {
					scale += math.Abs(v)
				}
				far := make([]float64, p)
				for j := range far {
					far[j] = 100 * float64(1-2*(j%2))
				}
				for si, start := range [][]float64{nil, make([]float64, p), far} {
					name := fmt.Sprintf("%s/p=%d/seed=%d/start=%d", kind, p, seed, si)
					beta, it, st := ladFitDense(&lw, x, y, start)
					if st != Solved {
						t.Errorf("%s: status %v after %d iterations", name, st, it)
						continue
					}
					got := l1Objective(x, y, beta)
					if math.Abs(got-want) > 1e-9*(want+1e-3*scale) {
						t.Errorf("%s: objective %.15g, brute-force minimum %.15g", name, got, want)
					}
					checkCertificate(t, name, x, y, beta)
					cases++
				}
			}
		}
	}
	t.Logf("%d fits checked", cases)
}

// TestLADExactLineSearch checks single exchanges: stopped after a few
// exchanges at a vertex that is not optimal, the solver's next exchange along
// its chosen edge must reach the least objective on that edge. F is convex
// and piecewise linear along β + tδ, so its least value over t ≥ 0 is at t
// = 0 or at a breakpoint r_i/(x_iᵀδ) > 0, all recomputed here.
func TestLADExactLineSearch(t *testing.T) {
	type dataset struct {
		name string
		x    *mat.Dense
		y    []float64
	}
	var sets []dataset
	for seed := uint64(1); seed <= 4; seed++ {
		x, y := simulated(seed, 80, 3, 0.2)
		sets = append(sets, dataset{fmt.Sprintf("simulated %d", seed), x, y})
		for _, kind := range []string{"integer", "outliers", "duplicates"} {
			x, y := inventedL1(kind, seed, 12, 3)
			sets = append(sets, dataset{fmt.Sprintf("%s %d", kind, seed), x, y})
		}
	}
	checked := 0
	defer func() { t.Logf("%d exchanges checked", checked) }()
	for _, d := range sets {
		for limit := 1; limit <= 4; limit++ {
			lw := ladWork{limit: limit}
			beta, _, st := ladFitDense(&lw, d.x, d.y, []float64{100, -100, 100})
			if st != IterationLimit {
				continue // optimal within the limit: no edge left to search
			}
			k, s := lw.cand[0]/2, float64(1-2*(lw.cand[0]%2))
			inv, ok := subsetInverse(d.x, lw.basis)
			if !ok {
				t.Fatalf("%s: the solver's basis %v is singular", d.name, lw.basis)
			}
			delta := make([]float64, 3)
			for j := range delta {
				delta[j] = s * inv.At(j, k)
			}
			at := func(t float64) float64 {
				b := make([]float64, 3)
				for j := range b {
					b[j] = beta[j] + t*delta[j]
				}
				return l1Objective(d.x, d.y, b)
			}
			fOld := at(0)
			best := fOld
			for i := range d.y {
				di := mat.Dot(d.x.RowView(i), mat.NewVecDense(3, delta))
				ri := d.y[i] - mat.Dot(d.x.RowView(i), mat.NewVecDense(3, beta))
				if di != 0 && ri/di > 0 {
					best = math.Min(best, at(ri/di))
				}
			}
			if !lw.exchange(d.x.RawMatrix(), k, s) {
				t.Errorf("%s, limit %d: no exchange along the most negative edge", d.name, limit)
				continue
			}
			inv, ok = subsetInverse(d.x, lw.basis)
			if !ok {
				t.Fatalf("%s: exchange made the basis %v singular", d.name, lw.basis)
			}
			yb := make([]float64, 3)
			for k, i := range lw.basis {
				yb[k] = d.y[i]
			}
			next := make([]float64, 3)
			mat.NewVecDense(3, next).MulVec(inv, mat.NewVecDense(3, yb))
			fNew := l1Objective(d.x, d.y, next)
			if fNew > best+1e-9*fOld {
				t.Errorf("%s, limit %d: objective %.12g after the exchange, least on the edge %.12g (from %.12g)",
					d.name, limit, fNew, best, fOld)
			}
			checked++
		}
	}
	if checked < 20 {
		t.Errorf("only %d exchanges checked", checked)
	}
}

// TestLADExactMatchesIRLS: IRLS with the LAD psi and a tiny smoothing band
// minimises nearly the same objective, so its Σ|r| must be within 1e-5
// relative of the exact minimum and never below it.
func TestLADExactMatchesIRLS(t *testing.T) {
	cases := []struct {
		seed     uint64
		n, p     int
		outliers float64
	}{
		{1, 60, 2, 0.1}, {2, 150, 4, 0.1}, {3, 300, 6, 0.2}, {4, 500, 3, 0},
	}
	var lw ladWork
	for _, c := range cases {
		x, y := simulated(c.seed, c.n, c.p, c.outliers)
		irls, err := Fit(Estimator{Method: MethodIRLS, Psi: psi.LAD{Eps: 1e-7},
			Settings: Settings{ChangeTol: 1e-12, MaxIterations: 20000}}, x, y)
		if err != nil {
			t.Fatal(err)
		}
		name := fmt.Sprintf("seed %d n %d p %d", c.seed, c.n, c.p)
		fi := l1Objective(x, y, irls.Coefficients)
		for _, start := range [][]float64{nil, irls.Coefficients} {
			beta, it, st := ladFitDense(&lw, x, y, start)
			if st != Solved {
				t.Fatalf("%s: status %v", name, st)
			}
			fe := l1Objective(x, y, beta)
			if fe > fi*(1+1e-12) || fi > fe*(1+1e-5) {
				t.Errorf("%s: exact objective %.12g, IRLS (%v) %.12g", name, fe, irls.Status, fi)
			}
			checkCertificate(t, name, x, y, beta)
			t.Logf("%s, start %v: %d exchanges; IRLS %d iterations, relative gap %.2g",
				name, start != nil, it, irls.Iterations, (fi-fe)/fe)
		}
	}
}

// TestLADExactStatuses checks every way a fit can end.
func TestLADExactStatuses(t *testing.T) {
	x, y := simulated(3, 40, 3, 0.1)
	dup := mat.DenseCopyOf(x)
	zeroCol := mat.DenseCopyOf(x)
	exact := make([]float64, 40)
	for i := 0; i < 40; i++ {
		dup.Set(i, 2, x.At(i, 1))
		zeroCol.Set(i, 1, 0)
		exact[i] = 2 + 3*x.At(i, 1) - x.At(i, 2)
	}
	nanY := append([]float64(nil), y...)
	nanY[5] = math.NaN()
	cases := []struct {
		name  string
		x     *mat.Dense
		y     []float64
		start []float64
		limit int
		want  Status
	}{
		{"solved", x, y, nil, 0, Solved},
		{"duplicated column", dup, y, nil, 0, SingularDesign},
		{"duplicated column, start", dup, y, []float64{1, 1, 1}, 0, SingularDesign},
		{"zero column", zeroCol, y, nil, 0, SingularDesign},
		{"too few rows", mat.NewDense(2, 3, []float64{1, 2, 3, 4, 5, 6}), []float64{1, 2}, nil, 0, SingularDesign},
		{"exact fit", x, exact, nil, 0, Solved},
		{"exact fit, far start", x, exact, []float64{50, -50, 50}, 0, Solved},
		{"NaN response", x, nanY, nil, 0, NonFinite},
		{"infinite start", x, y, []float64{math.Inf(1), 0, 0}, 0, NonFinite},
		{"iteration cap", x, y, []float64{100, -100, 100}, 1, IterationLimit},
	}
	for _, c := range cases {
		lw := ladWork{limit: c.limit}
		beta, it, st := ladFitDense(&lw, c.x, c.y, c.start)
		if st != c.want {
			t.Errorf("%s: status %v after %d iterations, want %v", c.name, st, it, c.want)
			continue
		}
		if c.want == IterationLimit && it != c.limit {
			t.Errorf("%s: %d iterations, cap %d", c.name, it, c.limit)
		}
		if c.name == "exact fit" || c.name == "exact fit, far start" {
			// y = 2 + 3 x1 - x2 exactly (invented), so any basis recovers it.
			if f := l1Objective(c.x, c.y, beta); f > 1e-12 {
				t.Errorf("%s: objective %g, want 0", c.name, f)
			}
			for j, w := range []float64{2, 3, -1} {
				if math.Abs(beta[j]-w) > 1e-12 {
					t.Errorf("%s: coefficient %d = %.17g, want %v", c.name, j, beta[j], w)
				}
			}
		}
	}
}

// TestLADExactNoAllocs: once a ladWork has seen a shape, fits allocate
// nothing.
func TestLADExactNoAllocs(t *testing.T) {
	x, y := simulated(9, 200, 5, 0.1)
	raw := x.RawMatrix()
	beta := make([]float64, 5)
	start := []float64{0.5, 1, 1, 1, 1}
	var lw ladWork
	lw.fit(raw, y, beta, nil)
	for _, s := range [][]float64{nil, start} {
		allocs := testing.AllocsPerRun(5, func() {
			if _, st := lw.fit(raw, y, beta, s); st != Solved {
				t.Fatalf("status %v", st)
			}
		})
		if allocs != 0 {
			t.Errorf("start %v: %v allocations per fit, want 0", s != nil, allocs)
		}
	}
}

// BenchmarkLADExact measures one exact LAD fit from the least-squares start,
// reusing the buffers.
func BenchmarkLADExact(b *testing.B) {
	for _, n := range []int{100, 1000} {
		x, y := simulated(42, n, 5, 0.1)
		raw := x.RawMatrix()
		b.Run(fmt.Sprintf("n=%d/p=5", n), func(b *testing.B) {
			var lw ladWork
			beta := make([]float64, 5)
			lw.fit(raw, y, beta, nil)
			b.ReportAllocs()
			b.ResetTimer()
			iters := 0
			for i := 0; i < b.N; i++ {
				it, st := lw.fit(raw, y, beta, nil)
				if st != Solved {
					b.Fatalf("status %v", st)
				}
				iters += it
			}
			b.ReportMetric(float64(iters)/float64(b.N), "iters/fit")
		})
	}
}

// TestLADExactFarCluster: m rows replaced by one far point (x at the
// centre of the predictors, y at 1e10 standard deviations), as in a
// replacement-breakdown experiment. With a zero tolerance relative to the
// largest |y|, clean residuals below 1e-12·|y|max counted as zero and the
// exchanges cycled to the cap (seen at n = 40, m = 9); the per-row
// tolerance solves each case. The objective is checked against every
// vertex (brute force over the C(40, 3) subsets).
func TestLADExactFarCluster(t *testing.T) {
	var lw ladWork
	const n, p = 40, 3
	rng := rand.New(rand.NewPCG(11, 12))
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
	cx1, cx2 := stat.Mean(mat.Col(nil, 1, x), nil), stat.Mean(mat.Col(nil, 2, x), nil)
	cy, sy := stat.Mean(y, nil), stat.StdDev(y, nil)
	order := rng.Perm(n)
	for _, far := range []float64{1e10} {
		for _, m := range []int{5, 9, 15, 17} {
			xm, ym := mat.DenseCopyOf(x), append([]float64(nil), y...)
			for _, i := range order[:m] {
				xm.Set(i, 1, cx1)
				xm.Set(i, 2, cx2)
				ym[i] = cy + far*sy
			}
			name := fmt.Sprintf("far=%g/m=%d", far, m)
			beta, it, st := ladFitDense(&lw, xm, ym, nil)
			if st != Solved {
				t.Errorf("%s: status %v after %d exchanges", name, st, it)
				continue
			}
			got, want := l1Objective(xm, ym, beta), bruteForceL1(xm, ym)
			if math.Abs(got-want) > 1e-12*want {
				t.Errorf("%s: objective %.17g, brute-force minimum %.17g", name, got, want)
			}
		}
	}
}
