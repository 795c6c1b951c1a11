package harness

import (
	"context"
	"fmt"
	"runtime"
	"testing"
	"time"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/scenarios"
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

// BenchmarkReplicate measures one replicate of the speed workload, as a
// run computes it (Replicator): drawing the dataset from its stream and
// fitting Huber's M-estimator by IRLS with its own stream. It must
// allocate nothing.
func BenchmarkReplicate(b *testing.B) {
	st := parse(b, speedScenario)
	plans, err := plan(st, 1)
	if err != nil {
		b.Fatal(err)
	}
	p := &plans[0]
	rp := newReplicator(p.gen, p.dataKey, 99)
	var ws estimators.Workspace
	var res estimators.Result
	e := p.ests[0]
	key := p.estKeys[0]
	iters := 0
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		rp.Draw(i)
		if err := rp.fit(key, &e, &ws, &res); err != nil {
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

// BenchmarkRunMemory runs 10³ and 10⁶ replicates of a small least-squares
// scenario and reports the peak heap in use, sampled during the run, and
// the bytes allocated per replicate: neither may grow with the number of
// replicates (summaries are accumulated as the run goes, and a replicate
// allocates nothing). The sampling goroutine's own allocations count.
func BenchmarkRunMemory(b *testing.B) {
	st := parse(b, `
seed: 3
model: {n: 20, intercept: 1, columns: [{name: x, slope: 1}]}
noise: {dist: normal}
estimators: [{label: ls, method: ls}]
`)
	for _, reps := range []int{1_000, 1_000_000} {
		b.Run(fmt.Sprintf("replicates=%d", reps), func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				runtime.GC()
				var before runtime.MemStats
				runtime.ReadMemStats(&before)
				var peak uint64
				stop := make(chan struct{})
				sampled := make(chan struct{})
				go func() {
					defer close(sampled)
					var ms runtime.MemStats
					for {
						runtime.ReadMemStats(&ms)
						peak = max(peak, ms.HeapInuse)
						select {
						case <-stop:
							return
						case <-time.After(5 * time.Millisecond):
						}
					}
				}()
				if _, err := Run(context.Background(), st, Options{Replicates: reps}); err != nil {
					b.Fatal(err)
				}
				close(stop)
				<-sampled
				var after runtime.MemStats
				runtime.ReadMemStats(&after)
				b.ReportMetric(float64(peak)/(1<<20), "peak-heap-MB")
				b.ReportMetric(float64(after.TotalAlloc-before.TotalAlloc)/float64(reps), "B-alloc/replicate")
				b.ReportMetric(float64(reps)/b.Elapsed().Seconds()*float64(b.N)/float64(i+1), "fits/s")
			}
		})
	}
}

// BenchmarkRunTuningHuber measures a whole run of the shipped tuning-huber
// scenario (16 cells: two contamination fractions × eight Huber constants,
// least squares and Huber in each) on 2 workers. fits/s counts one fit per
// cell, estimator and replicate, whether or not it was computed once and
// shared by cells that fit the same estimator to the same data.
func BenchmarkRunTuningHuber(b *testing.B) {
	st, err := scenarios.LoadLibrary("tuning-huber")
	if err != nil {
		b.Fatal(err)
	}
	const reps = 256
	fits := 0
	for _, c := range st.Cells {
		fits += reps * len(c.Scenario.Estimators)
	}
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		if _, err := Run(context.Background(), st, Options{Workers: 2, Replicates: reps}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(fits*b.N)/b.Elapsed().Seconds(), "fits/s")
}
