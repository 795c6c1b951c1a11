package harness

import (
	"context"
	"fmt"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
)

// speedScenario is the reference workload of the speed target: n = 100, an
// intercept and four standard-normal columns, normal errors with 10%
// vertical outliers at +10, Huber k = 1.345 by IRLS with MAD scale, and a
// tolerance of 1e-10 on the relative change in coefficients.
const speedScenario = `
seed: 99
model:
  n: 100
  intercept: 1
  columns:
    - {name: x1, slope: 1}
    - {name: x2, slope: 1}
    - {name: x3, slope: 1}
    - {name: x4, slope: 1}
noise: {dist: normal}
contamination:
  - {kind: vertical, fraction: 0.1, shift: 10}
estimators:
  - {label: huber, method: irls, psi: huber, tuning: 1.345, stop: {change: 1e-10}}
`

// BenchmarkReplicate measures one replicate of the speed workload: drawing
// the dataset from its stream and fitting Huber's M-estimator by IRLS. It
// must allocate nothing.
func BenchmarkReplicate(b *testing.B) {
	st := parse(b, speedScenario)
	plans, err := plan(st, 1)
	if err != nil {
		b.Fatal(err)
	}
	p := &plans[0]
	n, k := p.gen.Dims()
	pcg := rand.NewPCG(0, 0)
	x := mat.NewDense(n, k, nil)
	y := make([]float64, n)
	sc := p.gen.NewScratch()
	var ws estimators.Workspace
	var res estimators.Result
	e := p.ests[0]
	iters := 0
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		pcg.Seed(ReplicateStream(99, 0, i))
		p.gen.Draw(pcg, x, y, sc)
		if err := e.Fit(x, y, &ws, &res); err != nil {
			b.Fatal(err)
		}
		iters += res.Iterations
	}
	b.ReportMetric(float64(iters)/float64(b.N), "iters/fit")
}

// BenchmarkRun measures whole runs of the speed workload on 1 and 2
// workers; fits/s shows the scaling.
func BenchmarkRun(b *testing.B) {
	st := parse(b, speedScenario)
	for _, w := range []int{1, 2} {
		b.Run(fmt.Sprintf("workers=%d", w), func(b *testing.B) {
			const reps = 4096
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				if _, err := Run(context.Background(), st, Options{Workers: w, Replicates: reps}); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(reps*b.N)/b.Elapsed().Seconds(), "fits/s")
		})
	}
}
