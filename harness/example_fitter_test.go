package harness_test

import (
	"context"
	"fmt"
	"math"
	"slices"
	"sync"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/harness"
	"github.com/rhomark/rhomark/scenarios"
)

// rejectAndRefit is an estimator of the user's own: least squares, then
// least squares again on the readings whose residual is within 3
// normalised MADs of zero. Options.Fitters requires it to be safe for
// concurrent use: its buffers wait in a sync.Pool between fits, so each
// worker's fit takes a set of its own, and after the first fits a fit
// allocates nothing.
type rejectAndRefit struct {
	buffers sync.Pool // of *rejectBuffers
}

// rejectBuffers are the buffers of one fit of n readings and p
// coefficients: absolute residuals, their sorted copy, and the design and
// response with the rejected readings zeroed.
type rejectBuffers struct {
	r, sorted, yk []float64
	xk            *mat.Dense
}

// reserve sizes the buffers for n readings and p coefficients.
func (b *rejectBuffers) reserve(n, p int) {
	if b.xk != nil {
		if r, c := b.xk.Dims(); r == n && c == p {
			return
		}
	}
	b.r, b.sorted, b.yk = make([]float64, n), make([]float64, n), make([]float64, n)
	b.xk = mat.NewDense(n, p, nil)
}

// Fit implements estimators.Fitter. Rejected readings are zeroed, which
// takes them out of the least-squares fit while keeping the shape, so ws
// is reused.
func (f *rejectAndRefit) Fit(x *mat.Dense, y []float64, ws *estimators.Workspace, res *estimators.Result) error {
	var ls estimators.Estimator // the zero Estimator is least squares
	if err := ls.Fit(x, y, ws, res); err != nil || !res.Status.Converged() {
		return err
	}
	b, _ := f.buffers.Get().(*rejectBuffers)
	if b == nil {
		b = new(rejectBuffers)
	}
	defer f.buffers.Put(b)
	n, p := x.Dims()
	b.reserve(n, p)
	for i := range b.r {
		b.r[i] = math.Abs(y[i] - floats.Dot(x.RawRowView(i), res.Coefficients))
	}
	copy(b.sorted, b.r)
	slices.Sort(b.sorted)
	mad := b.sorted[n/2] / 0.6744897501960817 // Φ⁻¹(3/4) (common practice)
	b.xk.Copy(x)
	copy(b.yk, y)
	for i, ri := range b.r {
		if ri > 3*mad {
			clear(b.xk.RawRowView(i))
			b.yk[i] = 0
		}
	}
	return ls.Fit(b.xk, b.yk, ws, res)
}

// Benchmarking an estimator written in Go beside the built-in ones: the
// scenario names it with method go, and Options.Fitters gives the Fitter
// for its label. The flow-meter bench's meter reads 2% high with a 0.3
// offset; 10% of readings are stuck-sensor spikes 6 units high.
func ExampleOptions_fitters() {
	src := `
name: bench
seed: 7
replicates: 200
model:
  n: 40
  intercept: 0.3
  columns:
    - {name: volume, slope: 1.02, dist: levels, levels: [5, 10, 20, 50, 100]}
noise: {dist: normal, scale: 0.2}
contamination:
  - {label: spikes, kind: vertical, fraction: 0.1, shift: 6}
estimators:
  - {label: ls, method: ls}
  - {label: huber, method: irls, psi: huber}
  - {label: reject3, method: go}
`
	st, err := scenarios.Parse("bench.yaml", []byte(src), scenarios.Limits{})
	if err != nil {
		fmt.Println(err)
		return
	}
	opt := harness.Options{Fitters: map[string]estimators.Fitter{"reject3": &rejectAndRefit{}}}
	res, err := harness.Run(context.Background(), st, opt)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, e := range res.Cells[0].Estimators {
		b := e.Coefficients[0].Bias
		fmt.Printf("%-7s %-6s intercept bias %+.2f (MCSE %.2f), %d of %d fits converged\n", e.Label, e.Method, b.Value, b.MCSE,
			e.Convergence.Converged, e.Convergence.Fits)
	}
	// Output:
	// ls      ls     intercept bias +0.62 (MCSE 0.02), 200 of 200 fits converged
	// huber   irls   intercept bias +0.04 (MCSE 0.00), 200 of 200 fits converged
	// reject3 go     intercept bias +0.00 (MCSE 0.00), 200 of 200 fits converged
}
