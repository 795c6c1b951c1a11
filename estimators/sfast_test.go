package estimators

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/rhomark/rhomark/psi"
)

// TestMScaleSolves: the Newton solve of the M-scale equation (sScale) finds the root
// that bisection on (1/d) Σ psi.Bisquare.Rho(r_i/s) − b finds, to 1e-12
// relative, from starts far below and far above it, on residuals with and
// without gross errors; it returns 0 when too many residuals are 0 for any
// positive scale to reach b.
func TestMScaleSolves(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 7))
	bi := psi.Bisquare{C: DefaultSTuning}
	var ws Workspace
	b := ws.sConsistency(bi.C)
	meanRho := func(r []float64, s float64) float64 {
		var sum float64
		for _, v := range r {
			sum += bi.Rho(v / s)
		}
		return sum / float64(len(r))
	}
	for _, n := range []int{1, 5, 17, 100, 333} {
		for _, gross := range []bool{false, true} {
			r := make([]float64, n)
			for i := range r {
				r[i] = rng.NormFloat64()
				if gross && i%5 == 4 {
					r[i] *= 50 // every fifth a gross residual
				}
			}
			// Bisection on the sign of mean rho − b, which falls in s.
			lo, hi := 1e-6, 1e6
			for k := 0; k < 200; k++ {
				mid := math.Sqrt(lo * hi)
				if meanRho(r, mid) > b {
					lo = mid
				} else {
					hi = mid
				}
			}
			want := math.Sqrt(lo * hi)
			for _, s0 := range []float64{want * 1e-3, want * 0.9, want, want * 1.1, want * 1e3} {
				got := sScale(r, b, float64(n), bi.C, s0)
				if math.Abs(got-want) > 1e-12*want {
					t.Errorf("n=%d gross=%v s0=%g: scale %.17g, bisection %.17g", n, gross, s0, got, want)
				}
			}
		}
	}
	// Three zeros out of four: mean rho cannot reach b = rho(∞)/2 at any
	// positive scale, so the root is 0.
	r := []float64{0, 0, 0, 1.5}
	if got := sScale(r, bi.RhoMax()/2, 4, bi.C, 1); got > 1e-50 {
		t.Errorf("scale %v with three zeros of four, want 0 (below 1e-50)", got)
	}
}

// TestHouseholderPairsMatch: householderSolve, which applies each
// reflector to two columns per pass, gives the answer of applying it one
// column at a time bit for bit, rank decision included, for full-rank and
// rank-deficient systems of several shapes.
func TestHouseholderPairsMatch(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 11))
	for _, c := range []struct{ n, p int }{{1, 1}, {6, 2}, {23, 5}, {53, 5}, {40, 6}, {60, 7}} {
		for _, deficient := range []bool{false, true} {
			a := make([]float64, c.n*c.p)
			y := make([]float64, c.n)
			for i := range a {
				a[i] = rng.NormFloat64() * 10
			}
			if deficient && c.p > 1 {
				copy(a[(c.p-1)*c.n:], a[:c.n]) // last column repeats the first
			}
			for i := range y {
				y[i] = rng.NormFloat64()
			}
			a2, y2 := append([]float64(nil), a...), append([]float64(nil), y...)
			b, b2 := make([]float64, c.p), make([]float64, c.p)
			rd, rd2, cs, cs2 := make([]float64, c.p), make([]float64, c.p), make([]float64, c.p), make([]float64, c.p)
			ok := householderSolveOneByOne(a, c.n, c.p, y, b, rd, cs)
			ok2 := householderSolve(a2, c.n, c.p, y2, b2, rd2, cs2)
			if ok != ok2 {
				t.Fatalf("%dx%d deficient=%v: ok %v, pairs %v", c.n, c.p, deficient, ok, ok2)
			}
			if !ok {
				continue
			}
			for j := range b {
				if math.Float64bits(b[j]) != math.Float64bits(b2[j]) {
					t.Errorf("%dx%d: coefficient %d %v, pairs %v", c.n, c.p, j, b[j], b2[j])
				}
			}
		}
	}
}

// TestSStepKernelsAgree: an I-step by the row kernels (used above colMaxP
// columns) and by the column products give the same coefficients and
// sums to rounding, on clean data and with 20% outliers.
func TestSStepKernelsAgree(t *testing.T) {
	bi := psi.Bisquare{C: DefaultSTuning}
	for _, c := range []struct {
		p   int
		out float64
	}{{5, 0}, {5, 0.2}, {10, 0.2}, {20, 0}, {colMaxP, 0.2}} {
		out := c.out
		xd, y := simulated(12, 60+2*c.p, c.p, out)
		var ws Workspace
		var res Result
		if err := (Estimator{}).Fit(xd, y, &ws, &res); err != nil {
			t.Fatal(err)
		}
		x := xd.RawMatrix()
		start := append([]float64(nil), res.Coefficients...)
		s, _, _ := madFirst(ws.r, ws.buf)
		type got struct {
			beta            []float64
			rho, psiu, rhoW float64
			ok              bool
		}
		// sw NaN: no worst scale, and rhoW NaN on either path.
		for _, sw := range []float64{2 * s, math.NaN()} {
			var g [2]got
			for k, cw := range []*colWork{nil, ws.lts.columns(x)} {
				beta := append([]float64(nil), start...)
				ws.residuals(x, y, beta)
				rho, psiu, rhoW, ok := ws.sStep(cw, bi, x, y, beta, s, sw)
				g[k] = got{beta, rho, psiu, rhoW, ok}
			}
			if !g[0].ok || !g[1].ok {
				t.Fatalf("p = %d, outliers %v: steps ok %v (rows) %v (columns)", c.p, out, g[0].ok, g[1].ok)
			}
			for j := range start {
				if d := math.Abs(g[0].beta[j] - g[1].beta[j]); d > 1e-12*math.Max(1, math.Abs(g[0].beta[j])) {
					t.Errorf("p = %d, outliers %v: coefficient %d %v (rows), %v (columns)", c.p, out, j, g[0].beta[j], g[1].beta[j])
				}
			}
			for i, pair := range [][2]float64{{g[0].rho, g[1].rho}, {g[0].psiu, g[1].psiu}, {g[0].rhoW, g[1].rhoW}} {
				if math.IsNaN(sw) && i == 2 {
					if !math.IsNaN(pair[0]) || !math.IsNaN(pair[1]) {
						t.Errorf("p = %d, outliers %v, sw NaN: rhoW %v (rows), %v (columns), want NaN", c.p, out, pair[0], pair[1])
					}
					continue
				}
				if math.Abs(pair[0]-pair[1]) > 1e-12*math.Max(1, math.Abs(pair[0])) {
					t.Errorf("p = %d, outliers %v, sw %v: sums %v (rows), %v (columns)", c.p, out, sw, pair[0], pair[1])
				}
			}
		}
	}
}

// householderSolveOneByOne is householderSolve applying each reflector to
// one column at a time, the reference for TestHouseholderPairsMatch.
func householderSolveOneByOne(a []float64, n, p int, y, b, rdiag, colScale []float64) bool {
	for j := 0; j < p; j++ {
		col := a[j*n : (j+1)*n]
		s := norm2(col)
		if s == 0 || math.IsInf(s, 0) || math.IsNaN(s) {
			return false
		}
		colScale[j] = s
		inv := 1 / s
		for i := range col {
			col[i] *= inv
		}
	}
	for k := 0; k < p; k++ {
		col := a[k*n : (k+1)*n]
		normx := norm2(col[k:])
		if normx == 0 {
			return false
		}
		alpha := -math.Copysign(normx, col[k])
		col[k] -= alpha
		for j := k + 1; j < p; j++ {
			applyReflector(col[k:], a[j*n+k:(j+1)*n], alpha)
		}
		rdiag[k] = alpha
	}
	var rmax float64
	for k := 0; k < p; k++ {
		rmax = math.Max(rmax, math.Abs(rdiag[k]))
	}
	tol := float64(n) * epsilon * rmax
	for k := 0; k < p; k++ {
		if !(math.Abs(rdiag[k]) > tol) {
			return false
		}
	}
	qrSolve(a, n, p, rdiag, colScale, y, b)
	return true
}
