package estimators

import (
	"fmt"
	"testing"

	"github.com/rhomark/rhomark/psi"
)

// BenchmarkFit measures one fit on a dataset already in memory, reusing a
// workspace and a result; allocations per fit must be zero.
func BenchmarkFit(b *testing.B) {
	cases := []struct {
		name string
		e    Estimator
	}{
		{"ls", Estimator{}},
		{"huber-irls", Estimator{Method: MethodIRLS, Psi: psi.Huber{K: 1.345}, Settings: Settings{ChangeTol: 1e-10}}},
		{"huber-newton", Estimator{Method: MethodNewton, Psi: psi.Huber{K: 1.345}, Settings: Settings{ChangeTol: 1e-10}}},
		{"bisquare-irls", Estimator{Method: MethodIRLS, Psi: psi.Bisquare{C: 4.685}, Settings: Settings{ChangeTol: 1e-10}}},
	}
	for _, shape := range []struct{ n, p int }{{100, 5}, {10000, 5}, {100, 50}, {10000, 50}} {
		x, y := simulated(42, shape.n, shape.p, 0.1)
		for _, c := range cases {
			b.Run(fmt.Sprintf("%s/n=%d/p=%d", c.name, shape.n, shape.p), func(b *testing.B) {
				var ws Workspace
				var res Result
				if err := c.e.Fit(x, y, &ws, &res); err != nil {
					b.Fatal(err)
				}
				b.ReportAllocs()
				b.ResetTimer()
				iters := 0
				for i := 0; i < b.N; i++ {
					if err := c.e.Fit(x, y, &ws, &res); err != nil {
						b.Fatal(err)
					}
					iters += res.Iterations
				}
				b.ReportMetric(float64(iters)/float64(b.N), "iters/fit")
			})
		}
	}
}

// BenchmarkHighBreakdown measures the S, MM, LTS and exact LAD fits, n =
// 100, p = 5, 10% vertical outliers, default settings (500 elemental
// subsets for p = 5), seeding the workspace per fit as the harness does.
func BenchmarkHighBreakdown(b *testing.B) {
	x, y := simulated(42, 100, 5, 0.1)
	for _, m := range []Method{MethodS, MethodMM, MethodLTS, MethodLAD} {
		b.Run(m.String(), func(b *testing.B) {
			e := Estimator{Method: m}
			var ws Workspace
			var res Result
			if err := e.Fit(x, y, &ws, &res); err != nil {
				b.Fatal(err)
			}
			b.ReportAllocs()
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				ws.SeedRandom(uint64(i), 1)
				if err := e.Fit(x, y, &ws, &res); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
