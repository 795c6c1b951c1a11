package estimators

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestSelectFast compares selectFast with sorting, and madFirst with MAD
// bit for bit, on random, tied, constant and ordered data of odd and even
// lengths, for every k; with a NaN put in any place madFirst is NaN, as
// MAD is.
func TestSelectFast(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	for _, tc := range []struct {
		name string
		gen  func(i int) float64
	}{
		{"random", func(int) float64 { return rng.NormFloat64() * rng.NormFloat64() }},
		{"ties", func(int) float64 { return float64(rng.IntN(4)) }},
		{"equal", func(int) float64 { return 2 }},
		{"ascending", func(i int) float64 { return float64(i) }},
		{"descending", func(i int) float64 { return float64(-i) }},
		{"infinite", func(i int) float64 { return []float64{math.Inf(1), -1, 3, math.Inf(-1)}[i%4] }},
	} {
		for _, n := range []int{1, 2, 15, 16, 17, 53, 100, 257} {
			a := make([]float64, n)
			for i := range a {
				a[i] = tc.gen(i)
			}
			sorted := slices.Clone(a)
			slices.Sort(sorted)
			for k := 0; k < n; k++ {
				b := slices.Clone(a)
				got := selectFast(b, k)
				if got != sorted[k] || b[k] != got {
					t.Fatalf("%s n=%d k=%d: got %v (a[k] = %v), want %v", tc.name, n, k, got, b[k], sorted[k])
				}
				for i, v := range b {
					if (i < k && v > got) || (i > k && v < got) {
						t.Fatalf("%s n=%d k=%d: a[%d] = %v on the wrong side of %v", tc.name, n, k, i, v, got)
					}
				}
			}
			buf := make([]float64, n)
			want := MAD(a, buf)
			if got, _, _ := madFirst(a, buf); got != want && !(math.IsNaN(got) && math.IsNaN(want)) {
				t.Errorf("%s n=%d: madFirst = %v, MAD = %v", tc.name, n, got, want)
			}
			for _, at := range []int{0, n / 2, n - 1} {
				b := slices.Clone(a)
				b[at] = math.NaN()
				if got, _, _ := madFirst(b, buf); !math.IsNaN(got) {
					t.Errorf("%s n=%d: NaN at %d, madFirst = %v, want NaN", tc.name, n, at, got)
				}
			}
		}
	}
}

// BenchmarkSelectFresh selects the median of 100 values from a different
// random vector each time, so that the branch predictor cannot learn one
// input, as in the resampling searches.
func BenchmarkSelectFresh(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 2))
	const m = 512
	data := make([][]float64, m)
	for j := range data {
		data[j] = make([]float64, 100)
		for i := range data[j] {
			data[j][i] = rng.NormFloat64() * rng.NormFloat64()
		}
	}
	buf := make([]float64, 100)
	for _, f := range []struct {
		name string
		sel  func([]float64, int) float64
	}{{"selectFast", selectFast}} {
		b.Run(f.name, func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				copy(buf, data[i%m])
				f.sel(buf, 50)
			}
		})
	}
}
