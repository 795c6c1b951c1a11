package harness

import (
	"errors"
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/scenarios"
)

// Replicator computes replicates of the cells that share one set of
// data-generating settings, exactly as a run computes them: Draw draws
// replicate r's dataset from ReplicateStream(seed, DataKey, r), and Fit
// fits an estimator to it with the stream EstimatorStream(seed, DataKey,
// r, EstimatorKey(label)). Run, replay and breakdown all go through it, so
// a replayed replicate is the run's, bit for bit.
//
// A Replicator holds the dataset's buffers; after the first Draw, Draw and
// Fit allocate nothing (beyond what the estimator's first fit of a shape
// allocates in its Workspace). It is not safe for concurrent use.
type Replicator struct {
	gen     *scenarios.Generator
	seed    uint64
	dataKey uint64
	rep     int
	pcg     *rand.PCG
	scratch *scenarios.Scratch
	x       *mat.Dense
	y       []float64
}

// NewReplicator returns a Replicator for the cells of scenario sc (one
// cell's resolved scenario) under the root seed of the run.
func NewReplicator(sc *scenarios.Scenario, seed uint64) (*Replicator, error) {
	g, err := scenarios.NewGenerator(sc)
	if err != nil {
		return nil, err
	}
	return newReplicator(g, DataKey(g), seed), nil
}

// newReplicator returns a Replicator for generator g whose data key is
// dataKey (DataKey(g), computed once by the caller).
func newReplicator(g *scenarios.Generator, dataKey, seed uint64) *Replicator {
	n, k := g.Dims()
	return &Replicator{gen: g, seed: seed, dataKey: dataKey, pcg: rand.NewPCG(0, 0), scratch: g.NewScratch(),
		x: mat.NewDense(n, k, nil), y: make([]float64, n)}
}

// DataKey returns the data key of the Replicator's settings (see DataKey).
func (r *Replicator) DataKey() uint64 { return r.dataKey }

// Draw draws the dataset of replicate rep into the Replicator's buffers
// and returns them: the design (intercept column first when the model has
// one) and the response. They are overwritten by the next Draw.
func (r *Replicator) Draw(rep int) (*mat.Dense, []float64) {
	r.rep = rep
	r.pcg.Seed(ReplicateStream(r.seed, r.dataKey, rep))
	r.gen.Draw(r.pcg, r.x, r.y, r.scratch)
	return r.x, r.y
}

// install makes x and y, a copy of the dataset Draw(rep) returned, the
// replicate last drawn, without drawing it again, and returns the
// Replicator's buffers as Draw does.
func (r *Replicator) install(rep int, x *mat.Dense, y []float64) (*mat.Dense, []float64) {
	r.rep = rep
	r.x.Copy(x)
	copy(r.y, y)
	return r.x, r.y
}

// Fit fits est, labelled label in the scenario, to the dataset of the
// replicate last drawn, seeding ws with the estimator's own stream for
// that replicate, and fills res. A dataset that overflowed float64 (an
// extreme draw of a heavy-tailed model) is not an error: res records it as
// a NonFinite outcome, as in a run. Other errors are Fit's.
func (r *Replicator) Fit(label string, est *estimators.Estimator, ws *estimators.Workspace, res *estimators.Result) error {
	return r.fit(EstimatorKey(label), est, ws, res)
}

// fit is Fit for an estimator whose key, EstimatorKey(label), is known.
func (r *Replicator) fit(estKey uint64, est estimators.Fitter, ws *estimators.Workspace, res *estimators.Result) error {
	ws.SeedRandom(EstimatorStream(r.seed, r.dataKey, r.rep, estKey))
	if err := est.Fit(r.x, r.y, ws, res); err != nil && !errors.Is(err, estimators.ErrNonFinite) {
		return err
	}
	return nil
}
