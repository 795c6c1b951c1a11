package estimators

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestHuberSums5Kernel: huberSums5 as used on this machine (AVX where the
// processor has it) gives bit for bit what huberSums5Go gives: psi values,
// weights, the list of rows outside [−k, k], their count and the sums, for
// every n from 0 to 41 and at 100, strides 5 and 7, with outliers of both
// signs, residuals exactly at ±k·sigma, zeros of both signs and NaN.
func TestHuberSums5Kernel(t *testing.T) {
	rng := rand.New(rand.NewPCG(10, 3))
	const k, sigma = 1.345, 0.75
	ns := []int{100}
	for n := 0; n <= 41; n++ {
		ns = append(ns, n)
	}
	same := func(a, b float64) bool { return math.Float64bits(a) == math.Float64bits(b) }
	for _, stride := range []int{5, 7} {
		for _, n := range ns {
			r := make([]float64, n)
			for i := range r {
				switch rng.IntN(10) {
				case 0:
					r[i] = 10 + rng.Float64()
				case 1:
					r[i] = -10 - rng.Float64()
				case 2:
					r[i] = k * sigma * float64(1-2*rng.IntN(2))
				case 3:
					r[i] = math.Copysign(0, float64(1-2*rng.IntN(2)))
				default:
					r[i] = rng.NormFloat64()
				}
			}
			if n > 9 {
				r[9] = math.NaN()
			}
			data := make([]float64, n*stride+stride)
			for i := range data {
				data[i] = rng.NormFloat64()
			}
			c1, c2 := make([]float64, n), make([]float64, n)
			p1, p2 := make([]float64, n), make([]float64, n)
			o1, o2 := make([]int, n), make([]int, n)
			var h1, h2 [5]float64
			h1[2], h2[2] = 7, 7 // overwritten, not added to
			s1, f1 := huberSums5(r, c1, p1, o1, data, stride, k, sigma, &h1)
			s2, f2 := huberSums5Go(r, c2, p2, o2, data, stride, k, sigma, &h2)
			if !same(s1, s2) || f1 != f2 || !slices.Equal(o1[:f1], o2[:f2]) {
				t.Fatalf("stride %d n=%d: sum %v, %d outside %v; Go %v, %d outside %v", stride, n, s1, f1, o1[:f1], s2, f2, o2[:f2])
			}
			for i := range r {
				if !same(c1[i], c2[i]) || !same(p1[i], p2[i]) {
					t.Fatalf("stride %d n=%d row %d (r %v): psi %v weight %v; Go %v %v", stride, n, i, r[i], p1[i], c1[i], p2[i], c2[i])
				}
			}
			for j := range h1 {
				if !same(h1[j], h2[j]) {
					t.Errorf("stride %d n=%d: h[%d] %v, Go %v", stride, n, j, h1[j], h2[j])
				}
			}
		}
	}
}
