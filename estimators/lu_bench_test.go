package estimators

import (
	"math/rand/v2"
	"testing"
)

// BenchmarkElementalSolve solves random 5×5 systems by elimination
// (luSolve) and by QR (householderSolve), as the elemental fits do.
func BenchmarkElementalSolve(b *testing.B) {
	const p, m = 5, 256
	rng := rand.New(rand.NewPCG(3, 3))
	sys := make([][]float64, m)
	for j := range sys {
		sys[j] = make([]float64, p*p+p)
		for i := range sys[j] {
			sys[j][i] = rng.NormFloat64()
		}
	}
	a, y, beta := make([]float64, p*p), make([]float64, p), make([]float64, p)
	s1, s2 := make([]float64, p), make([]float64, p)
	b.Run("elimination", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			src := sys[i%m]
			copy(a, src[:p*p])
			copy(y, src[p*p:])
			luSolve(a, p, y, beta, s1)
		}
	})
	b.Run("qr", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			src := sys[i%m]
			copy(a, src[:p*p])
			copy(y, src[p*p:])
			householderSolve(a, p, p, y, beta, s1, s2)
		}
	})
}
