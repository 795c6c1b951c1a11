package estimators

import (
	"math/rand/v2"
	"testing"
)

func BenchmarkMAD100(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 2))
	r := make([]float64, 100)
	for i := range r {
		r[i] = rng.NormFloat64()
	}
	buf := make([]float64, 100)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		MAD(r, buf)
	}
}
