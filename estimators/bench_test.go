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

// benchHighBreakdown times one S, MM and LTS fit of an n×p dataset with 10%
// vertical outliers at default settings, seeding the workspace per fit.
func benchHighBreakdown(b *testing.B, n, p int) {
	x, y := simulated(42, n, p, 0.1)
	for _, m := range []Method{MethodS, MethodMM, MethodLTS} {
		b.Run(fmt.Sprintf("%s/n=%d/p=%d", m, n, p), func(b *testing.B) {
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

// BenchmarkHighBreakdownLargeN is the large-n case of nested subsampling:
// n = 20,000, p = 6.
func BenchmarkHighBreakdownLargeN(b *testing.B) {
	benchHighBreakdown(b, 20000, 6)
}

// BenchmarkHighBreakdownRows shows the cost of a fit against n at p = 6,
// across NestedMinRows (plain search up to it, nested blocks above).
func BenchmarkHighBreakdownRows(b *testing.B) {
	for _, n := range []int{100, 300, 1000, 1500, 1501, 3000, 10000, 100000} {
		benchHighBreakdown(b, n, 6)
	}
}

// BenchmarkHighBreakdownMillion is one fit at n = 10⁶, p = 6; -short skips
// it.
func BenchmarkHighBreakdownMillion(b *testing.B) {
	if testing.Short() {
		b.Skip("n = 10⁶ skipped with -short")
	}
	benchHighBreakdown(b, 1000000, 6)
}

// BenchmarkHighBreakdownCols shows the cost against p at n = 5000 (nested
// blocks). The default number of subsets grows with p (ElementalSubsets),
// from 500 up to p = 6 to 10,000 from p = 12 on.
func BenchmarkHighBreakdownCols(b *testing.B) {
	for _, p := range []int{2, 5, 10, 20, 50} {
		benchHighBreakdown(b, 5000, p)
	}
}
