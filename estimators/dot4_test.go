package estimators

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestDot4MatchesGo: the kernel used on this machine (AVX where the
// processor has it) and dot4Go give the same sums bit for bit, for every
// length from 0 to 41 and at n = 100, and each sum agrees with a plain
// row-order sum to rounding.
func TestDot4MatchesGo(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	for _, n := range append(func() []int {
		var ns []int
		for n := 0; n <= 41; n++ {
			ns = append(ns, n)
		}
		return ns
	}(), 100) {
		w := make([]float64, n)
		var c [4][]float64
		for j := range c {
			c[j] = make([]float64, n+3) // longer than w, as columns may be
		}
		for i := range w {
			w[i] = rng.NormFloat64()
			for j := range c {
				c[j][i] = rng.NormFloat64() * math.Ldexp(1, rng.IntN(20)-10)
			}
		}
		var got, want [4]float64
		dot4(w, c[0], c[1], c[2], c[3], &got)
		dot4Go(w, c[0], c[1], c[2], c[3], &want)
		for j := range got {
			if math.Float64bits(got[j]) != math.Float64bits(want[j]) {
				t.Errorf("n=%d column %d: dot4 %v, dot4Go %v", n, j, got[j], want[j])
			}
			var plain, size float64
			for i, v := range w {
				plain += v * c[j][i]
				size += math.Abs(v * c[j][i])
			}
			if math.Abs(got[j]-plain) > 1e-14*size {
				t.Errorf("n=%d column %d: dot4 %v, row-order sum %v", n, j, got[j], plain)
			}
		}
	}
}

// TestBisqKernelsMatchGo: the bisquare kernels used on this machine (AVX
// where the processor has it) and their Go versions give the same weights,
// residuals and sums bit for bit, for lengths 0 to 41 and 100, p from 1 to
// 6, with outliers past the rejection point and a NaN residual; and the
// sums agree with plain row-order sums to rounding.
func TestBisqKernelsMatchGo(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	ns := []int{100}
	for n := 0; n <= 41; n++ {
		ns = append(ns, n)
	}
	for _, n := range ns {
		for p := 1; p <= 6; p++ {
			y := make([]float64, n)
			xt := make([]float64, p*n)
			beta := make([]float64, p)
			for i := range y {
				y[i] = rng.NormFloat64()
				if rng.IntN(8) == 0 {
					y[i] += 12 // past the rejection point
				}
			}
			if n > 7 && p == 3 {
				y[7] = math.NaN()
			}
			for i := range xt {
				xt[i] = rng.NormFloat64()
			}
			for j := range beta {
				beta[j] = rng.NormFloat64() / 4
			}
			inv, invW := 1/(1.5*1.2), 1/(1.5*0.9)
			r1, r2 := make([]float64, n), make([]float64, n)
			a1, b1, c1 := bisqResidualSums(y, xt, beta, r1, inv, invW)
			a2, b2, c2 := bisqResidualSumsGo(y, xt, beta, r2, inv, invW)
			same := func(u, v float64) bool { return math.Float64bits(u) == math.Float64bits(v) }
			for i := range r1 {
				if !same(r1[i], r2[i]) {
					t.Fatalf("n=%d p=%d: residual %d %v (kernel), %v (Go)", n, p, i, r1[i], r2[i])
				}
			}
			if !same(a1, a2) || !same(b1, b2) || !same(c1, c2) {
				t.Errorf("n=%d p=%d: sums %v %v %v (kernel), %v %v %v (Go)", n, p, a1, b1, c1, a2, b2, c2)
			}
			// Plain sums, skipping the NaN row in both.
			var pr, pp, pw float64
			for i, ri := range r2 {
				want := y[i]
				for k := range beta {
					want -= beta[k] * xt[k*n+i]
				}
				if !same(ri, want) {
					t.Fatalf("n=%d p=%d: residual %d %v, want %v", n, p, i, ri, want)
				}
				v, u := ri*inv, ri*invW
				tt, tw := math.Max(1-v*v, 0), math.Max(1-u*u, 0)
				pr += 1 - tt*tt*tt
				pp += v * v * tt * tt
				pw += 1 - tw*tw*tw
			}
			for _, pair := range [][2]float64{{a1, pr}, {b1, pp}, {c1, pw}} {
				if math.IsNaN(pair[1]) != math.IsNaN(pair[0]) || math.Abs(pair[0]-pair[1]) > 1e-13*float64(n+1) {
					t.Errorf("n=%d p=%d: sum %v, plain sum %v", n, p, pair[0], pair[1])
				}
			}
			w1, wr1 := make([]float64, n), make([]float64, n)
			w2, wr2 := make([]float64, n), make([]float64, n)
			bisqWeights(r1, w1, wr1, inv)
			bisqWeightsGo(r2, w2, wr2, inv)
			for i := range w1 {
				if !same(w1[i], w2[i]) || !same(wr1[i], wr2[i]) {
					t.Fatalf("n=%d p=%d: weight %d %v %v (kernel), %v %v (Go)", n, p, i, w1[i], wr1[i], w2[i], wr2[i])
				}
				if v := r1[i] * inv; !math.IsNaN(v) {
					tt := math.Max(1-v*v, 0)
					if w1[i] != tt*tt {
						t.Fatalf("n=%d p=%d: weight %d %v, want %v", n, p, i, w1[i], tt*tt)
					}
				}
			}
		}
	}
}

// TestLUSolveMatchesQR: on random regular systems, elimination and QR give
// the same solution to rounding; on a system with two equal rows of small
// integers, elimination reports it singular.
func TestLUSolveMatchesQR(t *testing.T) {
	rng := rand.New(rand.NewPCG(6, 6))
	for p := 1; p <= 8; p++ {
		for trial := 0; trial < 50; trial++ {
			a := make([]float64, p*p)
			y := make([]float64, p)
			for i := range a {
				a[i] = rng.NormFloat64() * math.Ldexp(1, rng.IntN(8))
			}
			for i := range y {
				y[i] = rng.NormFloat64()
			}
			a2, y2 := append([]float64(nil), a...), append([]float64(nil), y...)
			lu, qr := make([]float64, p), make([]float64, p)
			okLU := luSolve(a, p, y, lu, make([]float64, p))
			okQR := householderSolve(a2, p, p, y2, qr, make([]float64, p), make([]float64, p))
			if !okLU || !okQR {
				t.Fatalf("p=%d: regular system reported singular (elimination %v, QR %v)", p, okLU, okQR)
			}
			var size float64
			for _, v := range qr {
				size = math.Max(size, math.Abs(v))
			}
			for j := range lu {
				// A random Gaussian matrix is rarely worse conditioned
				// than 1e4, so 1e-9 of the solution's size is ample.
				if math.Abs(lu[j]-qr[j]) > 1e-9*math.Max(size, 1) {
					t.Errorf("p=%d trial %d: coefficient %d %v (elimination), %v (QR)", p, trial, j, lu[j], qr[j])
				}
			}
		}
	}
	a := []float64{1, 1, 1, 2, 2, 5, 3, 3, 1} // column-major; rows 0 and 1 equal
	if luSolve(a, 3, []float64{1, 1, 2}, make([]float64, 3), make([]float64, 3)) {
		t.Error("two equal rows: elimination found the system regular")
	}
}

// TestLDLSolveMatchesCholesky: on random positive definite systems of
// sizes 1 to colMaxP, the square-root-free factorisation and choleskySolve give
// the same solution to rounding, and both refuse a singular matrix.
func TestLDLSolveMatchesCholesky(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 7))
	for p := 1; p <= colMaxP; p++ {
		for trial := 0; trial < 50; trial++ {
			// M = AᵀA + I·0.1 with A 2p×p Gaussian, columns of mixed units.
			a := make([]float64, 2*p*p)
			for i := range a {
				a[i] = rng.NormFloat64()
			}
			unit := make([]float64, p)
			for j := range unit {
				unit[j] = math.Ldexp(1, rng.IntN(12)-6)
			}
			m := make([]float64, p*p)
			for i := 0; i < p; i++ {
				for j := i; j < p; j++ {
					var s float64
					for r := 0; r < 2*p; r++ {
						s += a[r*p+i] * a[r*p+j]
					}
					if i == j {
						s += 0.1
					}
					m[i*p+j] = s * unit[i] * unit[j]
				}
			}
			g := make([]float64, p)
			for i := range g {
				g[i] = rng.NormFloat64()
			}
			m2, g2 := append([]float64(nil), m...), append([]float64(nil), g...)
			if !ldlSolve(m, p, g) || !choleskySolve(m2, p, g2, make([]float64, p)) {
				t.Fatalf("p=%d: a positive definite system refused", p)
			}
			for j := range g {
				if math.Abs(g[j]-g2[j]) > 1e-9*math.Max(1, math.Abs(g2[j])) {
					t.Errorf("p=%d trial %d: coefficient %d %v (LDLᵀ), %v (Cholesky)", p, trial, j, g[j], g2[j])
				}
			}
		}
	}
	sing := []float64{1, 2, 0, 4} // [[1 2] [2 4]], upper triangle
	if ldlSolve(sing, 2, []float64{1, 1}) {
		t.Error("singular matrix: LDLᵀ solved it")
	}
}
