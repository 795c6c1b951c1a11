package estimators

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// madCountOf is madCountAbs on r, with the sums it needs.
func madCountOf(r, buf, tmp []float64) float64 {
	top, sum := absMaxSum(r, buf[:len(r)])
	return madCountAbs(r, buf, tmp, top, sum)
}

// TestMadCountMatchesMAD: madCountAbs equals MAD bit for bit on normal
// residuals with outliers, on heavy-tailed ones, on residuals with many
// ties (small integers) and many zeros (an elemental fit through most
// rows), on sorted input, and with NaN; for every length from 20 to 130.
func TestMadCountMatchesMAD(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	gens := map[string]func(i int) float64{
		"normal":   func(int) float64 { return rng.NormFloat64() },
		"outliers": func(i int) float64 { return rng.NormFloat64() + 50*float64(b2i(i%7 == 0)) },
		"cauchy":   func(int) float64 { return rng.NormFloat64() / rng.NormFloat64() },
		"ties":     func(int) float64 { return float64(rng.IntN(5) - 2) },
		"zeros":    func(i int) float64 { return float64(b2i(i%3 == 0)) * rng.NormFloat64() },
		"sorted":   func(i int) float64 { return float64(i) },
		"tiny":     func(int) float64 { return rng.NormFloat64() * 1e-300 },
	}
	for name, gen := range gens {
		for n := 20; n <= 130; n++ {
			for rep := 0; rep < 3; rep++ {
				r := make([]float64, n)
				for i := range r {
					r[i] = gen(i)
				}
				if name == "sorted" && rep == 1 {
					slices.Reverse(r)
				}
				got := madCountOf(r, make([]float64, n), make([]float64, n))
				want := MAD(r, make([]float64, n))
				if math.Float64bits(got) != math.Float64bits(want) {
					t.Fatalf("%s n=%d rep %d: madCountAbs %v, MAD %v", name, n, rep, got, want)
				}
			}
		}
	}
	r := []float64{1, 2, math.NaN(), 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16, 17, 18, 19, 20, 21, 22, 23, 24, 25}
	got, want := madCountOf(r, make([]float64, len(r)), make([]float64, len(r))), MAD(r, make([]float64, len(r)))
	if math.Float64bits(got) != math.Float64bits(want) && !(math.IsNaN(got) && math.IsNaN(want)) {
		t.Errorf("with NaN: madCountAbs %v, MAD %v", got, want)
	}
}

// TestCountBelow: the kernel in use and countBelowGo agree for every
// length from 0 to 40, with NaN counted as not below.
func TestCountBelow(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 9))
	for n := 0; n <= 40; n++ {
		a := make([]float64, n)
		for i := range a {
			a[i] = rng.NormFloat64()
			if i == 5 {
				a[i] = math.NaN()
			}
		}
		for _, x := range []float64{-1, 0, 0.3, math.Inf(1), math.NaN()} {
			if got, want := countBelow(a, x), countBelowGo(a, x); got != want {
				t.Errorf("n=%d x=%v: countBelow %d, countBelowGo %d", n, x, got, want)
			}
		}
	}
}

// BenchmarkMADResiduals finds the MAD of 100 residuals like those of an
// elemental fit (normal, 10% outliers at +10, five exact zeros), a
// different vector each time, by each exact method.
func BenchmarkMADResiduals(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 2))
	const m = 512
	data := make([][]float64, m)
	for j := range data {
		data[j] = make([]float64, 100)
		for i := range data[j] {
			data[j][i] = rng.NormFloat64()*0.8 + 0.3
			if i%10 == 3 {
				data[j][i] += 10
			}
			if i%20 == 7 {
				data[j][i] = 0
			}
		}
	}
	buf, tmp := make([]float64, 100), make([]float64, 100)
	b.Run("madFirst", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			madFirst(data[i%m], buf)
		}
	})
	b.Run("madCountAbs", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			madCountOf(data[i%m], buf, tmp)
		}
	})
}

// TestAbsMaxSumSplitAt: the kernels in use and their Go versions agree
// (the sum to rounding, its order being the kernel's own) for every length
// from 0 to 40, and NaN or Inf in r shows in the sum.
func TestAbsMaxSumSplitAt(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 9))
	for n := 0; n <= 40; n++ {
		r := make([]float64, n)
		for i := range r {
			r[i] = rng.NormFloat64()
		}
		a1, a2 := make([]float64, n), make([]float64, n)
		t1, s1 := absMaxSum(r, a1)
		t2, s2 := absMaxSumGo(r, a2)
		if t1 != t2 || math.Abs(s1-s2) > 1e-14*float64(n+1) {
			t.Errorf("n=%d: absMaxSum %v %v, Go %v %v", n, t1, s1, t2, s2)
		}
		for i := range a1 {
			if a1[i] != a2[i] {
				t.Fatalf("n=%d: |r_%d| %v, Go %v", n, i, a1[i], a2[i])
			}
		}
		for _, x := range []float64{0, 0.5, 1, 3} {
			b1, c1 := splitAt(a1, x)
			b2, c2 := splitAtGo(a1, x)
			if b1 != b2 || c1 != c2 {
				t.Errorf("n=%d x=%v: splitAt %v %v, Go %v %v", n, x, b1, c1, b2, c2)
			}
		}
		if n > 3 {
			for _, bad := range []float64{math.NaN(), math.Inf(-1)} {
				r[n-2] = bad
				if _, s := absMaxSum(r, a1); !math.IsNaN(s) && !math.IsInf(s, 0) {
					t.Errorf("n=%d with %v: sum %v", n, bad, s)
				}
			}
		}
	}
}

// TestResidualsAbs: the kernel in use and residualsAbsGo agree, the
// residuals bit for bit with bisqResidualSums', for lengths 0 to 41 and p
// from 1 to 6.
func TestResidualsAbs(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 9))
	for n := 0; n <= 41; n++ {
		for p := 1; p <= 6; p++ {
			y, xt, beta := make([]float64, n), make([]float64, p*n), make([]float64, p)
			for i := range y {
				y[i] = rng.NormFloat64()
			}
			for i := range xt {
				xt[i] = rng.NormFloat64()
			}
			for j := range beta {
				beta[j] = rng.NormFloat64()
			}
			r1, a1 := make([]float64, n), make([]float64, n)
			r2, a2 := make([]float64, n), make([]float64, n)
			r3 := make([]float64, n)
			t1, s1 := residualsAbs(y, xt, beta, r1, a1)
			t2, s2 := residualsAbsGo(y, xt, beta, r2, a2)
			bisqResidualSums(y, xt, beta, r3, 1, 1)
			if t1 != t2 || math.Abs(s1-s2) > 1e-13*float64(n+1) {
				t.Errorf("n=%d p=%d: top, sum %v %v (kernel), %v %v (Go)", n, p, t1, s1, t2, s2)
			}
			for i := range r1 {
				if r1[i] != r2[i] || r1[i] != r3[i] || a1[i] != math.Abs(r1[i]) {
					t.Fatalf("n=%d p=%d: row %d: %v %v %v, |r| %v", n, p, i, r1[i], r2[i], r3[i], a1[i])
				}
			}
		}
	}
}
