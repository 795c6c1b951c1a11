package estimators

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/blas/blas64"

	"github.com/rhomark/rhomark/psi"
)

// kernelData returns an n×p design (row stride p+1, so that stride bugs
// show) and a response, with exact zeros of both signs among the values.
func kernelData(rng *rand.Rand, n, p int) (blas64.General, []float64, []float64) {
	x := blas64.General{Rows: n, Cols: p, Stride: p + 1, Data: make([]float64, n*(p+1))}
	for i := range x.Data {
		x.Data[i] = rng.NormFloat64()
		switch rng.IntN(9) {
		case 0:
			x.Data[i] = 0
		case 1:
			x.Data[i] = math.Copysign(0, -1)
		}
	}
	y := make([]float64, n)
	for i := range y {
		y[i] = 3 * rng.NormFloat64()
		if i%7 == 3 {
			y[i] = math.Copysign(0, -1)
		}
	}
	beta := make([]float64, p)
	for j := range beta {
		beta[j] = rng.NormFloat64()
	}
	return x, y, beta
}

// same reports whether a and b have the same bits.
func same(a, b float64) bool { return math.Float64bits(a) == math.Float64bits(b) }

// TestFusedKernelsMatch: the fused passes of an IRLS iteration must give
// bit for bit what the separate passes give: residualsBracket the
// residuals of residuals (gonum's matrix-vector product) and the MAD of
// MAD, rankTwo's unrolled forms its loops, and evaluateHuberSums the
// values of evaluate and psiSums.
func TestFusedKernelsMatch(t *testing.T) {
	if !gemvOrder {
		t.Skip("the fused loops follow gonum's amd64 kernels and run only there")
	}
	rng := rand.New(rand.NewPCG(7, 11))
	for _, shape := range []struct{ n, p int }{
		{1, 1}, {2, 1}, {3, 2}, {5, 3}, {6, 4}, {7, 5}, {9, 5}, {10, 5}, {11, 6}, {13, 7}, {12, 8}, {15, 9}, {17, 11}, {100, 5}, {101, 5}, {99, 3},
	} {
		for trial := 0; trial < 50; trial++ {
			n, p := shape.n, shape.p
			x, y, beta := kernelData(rng, n, p)
			var a, b Workspace
			a.reserve(n, p)
			b.reserve(n, p)
			b.residuals(x, y, beta)
			mad := MAD(b.r, b.buf)
			for _, delta := range []float64{0.01, 0.2, 0.5} {
				lo, hi, ok := madBracket(n, mad*MADConsistency*1.05, delta)
				if !ok {
					lo, hi = 0, 0
				}
				below, mid := a.residualsBracket(x, y, beta, lo, hi)
				for i := range b.r {
					if !same(a.r[i], b.r[i]) {
						t.Fatalf("n=%d p=%d row %d: fused residual %v, gemv %v", n, p, i, a.r[i], b.r[i])
					}
				}
				if got, _, _ := madFinishStats(a.r, a.buf, below, mid); !same(got, mad) {
					t.Errorf("n=%d p=%d delta=%v: MAD %v from the bracket, %v in full", n, p, delta, got, mad)
				}
				if lo, hi, ok := madBracket(n, mad*MADConsistency*0.97, delta); ok {
					if got, _, _ := madBetweenStats(a.r, a.buf, lo, hi); !same(got, mad) {
						t.Errorf("n=%d p=%d delta=%v: madBetweenStats %v, MAD %v", n, p, delta, got, mad)
					}
				}
			}
			for _, h := range []psi.Huber{{K: 1.345}, {K: 0.3}} {
				sigma := 0.7 * mad
				got := a.evaluateHuberSums(h, sigma, x)
				want := b.evaluate(h, sigma, false)
				b.psiSums(x)
				if !same(got, want) || a.nOff != b.nOff {
					t.Errorf("n=%d p=%d: weight sums %v vs %v, off %d vs %d", n, p, got, want, a.nOff, b.nOff)
				}
				for i := range b.r {
					if !same(a.psi[i], b.psi[i]) || !same(a.c[i], b.c[i]) {
						t.Fatalf("n=%d p=%d row %d: fused (%v, %v), separate (%v, %v)", n, p, i, a.psi[i], a.c[i], b.psi[i], b.c[i])
					}
				}
				// The rows outside [−k, k]; the list's places past its
				// length hold nothing.
				if !slices.Equal(a.off[:a.nOff], b.off[:b.nOff]) {
					t.Fatalf("n=%d p=%d: rows outside %v, separate %v", n, p, a.off[:a.nOff], b.off[:b.nOff])
				}
				for j := range b.h {
					if !same(a.h[j], b.h[j]) {
						t.Errorf("n=%d p=%d: Σψx[%d] fused %v, gemv %v", n, p, j, a.h[j], b.h[j])
					}
				}
			}
			a.columnRMS(x)
			if got, want := a.equationNorm(x), equationNormColumns(&a, x); !same(got, want) {
				t.Errorf("n=%d p=%d: equation norm %v, by columns %v", n, p, got, want)
			}
			if n >= 2 {
				m1, m2 := make([]float64, p*p), make([]float64, p*p)
				for i := range m1 {
					m1[i] = rng.NormFloat64()
				}
				copy(m2, m1)
				rankTwo(m1, x, 0, n-1, p, 0.37, -1.2)
				rankTwoLoop(m2, x, 0, n-1, p, 0.37, -1.2)
				for i := range m1 {
					if !same(m1[i], m2[i]) {
						t.Fatalf("p=%d: rankTwo entry %d %v, loop %v", p, i, m1[i], m2[i])
					}
				}
			}
		}
	}
}

// TestMADBetweenNaN: a NaN residual sends madBetweenStats to MAD,
// whatever MAD makes of it.
func TestMADBetweenNaN(t *testing.T) {
	r := []float64{1, -2, math.NaN(), 0.5, 3, -0.25}
	buf := make([]float64, len(r))
	want := MAD(r, buf)
	if got, _, _ := madBetweenStats(r, buf, 0.5, 1.5); !same(got, want) {
		t.Errorf("madBetweenStats %v, MAD %v", got, want)
	}
}

// rankTwoLoop is rankTwo's general loop, which the unrolled forms must
// match.
func rankTwoLoop(m []float64, x blas64.General, i, j, p int, a, b float64) {
	xi, xj := row(x, i), row(x, j)
	for k := 0; k < p; k++ {
		ak, bk := a*xi[k], b*xj[k]
		for l := k; l < p; l++ {
			m[k*p+l] += ak*xi[l] + bk*xj[l]
		}
	}
}

// equationNormColumns is equationNorm computed column by column, the
// order its row-by-row loop must reproduce.
func equationNormColumns(ws *Workspace, x blas64.General) float64 {
	var worst float64
	for j := 0; j < ws.p; j++ {
		var s float64
		for i := 0; i < ws.n; i++ {
			s += ws.psi[i] * x.Data[i*x.Stride+j]
		}
		if ws.rms[j] > 0 {
			worst = math.Max(worst, math.Abs(s)/(float64(ws.n)*ws.rms[j]))
		}
	}
	return worst
}

// choleskySolveLoops is choleskySolve's general path, which the unrolled
// form must match.
func choleskySolveLoops(m []float64, p int, g, scale []float64) bool {
	if !equilibrate(m, p, scale) {
		return false
	}
	for i := 0; i < p; i++ {
		g[i] *= scale[i]
	}
	if !choleskyUpper(m, p, minCholeskyPivot) {
		return false
	}
	solveUpperT(m, p, g)
	solveUpper(m, p, g)
	for i := 0; i < p; i++ {
		g[i] *= scale[i]
	}
	return true
}

// TestCholesky5Matches: the unrolled solve for five unknowns gives the
// loops' bits (factor, solution, scales) and failures, on well and badly
// conditioned, indefinite and non-finite matrices.
func TestCholesky5Matches(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	const p = 5
	for trial := 0; trial < 3000; trial++ {
		var a [p * p]float64
		for i := range a {
			a[i] = rng.NormFloat64()
		}
		m := make([]float64, p*p)
		for i := 0; i < p; i++ {
			for j := i; j < p; j++ {
				for k := 0; k < p; k++ {
					m[i*p+j] += a[k*p+i] * a[k*p+j]
				}
			}
		}
		switch trial % 5 {
		case 1: // nearly singular
			for j := 0; j < p; j++ {
				m[3*p+j] = m[2*p+j] * (1 + 1e-12)
			}
			m[3*p+3] = m[2*p+2]
		case 2: // indefinite
			m[4*p+4] = -m[4*p+4]
		case 3:
			m[1*p+1] = math.Inf(1)
		case 4:
			m[2*p+3] *= 1e6
		}
		g := []float64{rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()}
		m2, g2 := slices.Clone(m), slices.Clone(g)
		s1, s2 := make([]float64, p), make([]float64, p)
		ok1 := choleskySolve(m, p, g, s1)
		ok2 := choleskySolveLoops(m2, p, g2, s2)
		if ok1 != ok2 {
			t.Fatalf("trial %d: unrolled %v, loops %v", trial, ok1, ok2)
		}
		for i := range m {
			if !same(m[i], m2[i]) {
				t.Fatalf("trial %d: factor entry %d %v, loops %v", trial, i, m[i], m2[i])
			}
		}
		for i := range g {
			if !same(g[i], g2[i]) || !same(s1[i], s2[i]) {
				t.Fatalf("trial %d: solution %v scales %v, loops %v %v", trial, g, s1, g2, s2)
			}
		}
	}
}
