package psi

import (
	"math"
	"testing"
	"time"
)

// FuzzCustomPsi: any expression either is refused at compile time or
// evaluates, in bounded time and without panicking, to a number (NaN is a
// number here: the solvers classify it).
func FuzzCustomPsi(f *testing.F) {
	for _, s := range []string{"r", "abs(r) <= k ? r : k*sign(r)", "r/(1+abs(r)/k)", "k*tanh(r/k)", "r^3", "sin(r)*exp(-r*r)", "r > 0 && r < 1 ? r : 0"} {
		f.Add(s, 1.5)
	}
	f.Fuzz(func(t *testing.T, expr string, k float64) {
		if math.IsNaN(k) || math.IsInf(k, 0) {
			k = 1
		}
		c, err := NewCustom(CustomSpec{Psi: expr, Constants: []Constant{{"k", k}}})
		if err != nil {
			return
		}
		start := time.Now()
		for _, u := range []float64{0, -1, 1e-300, 3, -1e300, 7.5} {
			c.Psi(u)
			c.Weight(u)
			c.Deriv(u)
		}
		if time.Since(start) > 2*time.Second {
			t.Fatalf("evaluating %q took %v", expr, time.Since(start))
		}
	})
}
