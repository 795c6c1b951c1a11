package harness

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"runtime"
	"sort"
	"sync"
	"sync/atomic"
	"time"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

// Options control a run. The zero value runs the scenario as written on
// every core.
type Options struct {
	// Workers is the number of goroutines fitting in parallel; zero means
	// GOMAXPROCS.
	Workers int
	// Replicates, if positive, replaces the scenario's replicate count.
	Replicates int
	// Seed, if not nil, replaces the scenario's seed.
	Seed *uint64
	// Progress, if not nil, is called from time to time with the replicates
	// finished and the total. It must be safe for concurrent use.
	Progress func(done, total int64)
	// Tool names the program for the results' provenance.
	Tool results.Tool
	// Build identifies the build doing the work, recorded in its Partial
	// and checked against a resumed checkpoint's; empty means BuildID().
	Build string
	// KeepReplicates, if not nil, receives the replicate file: every
	// replicate's estimates, iterations and status (see results). The
	// blocks are written in cell and replicate order, so the file does not
	// depend on the number of workers.
	KeepReplicates io.Writer
	// Shard and Shards split the run: with Shards > 0 this run does only
	// the units u with u mod Shards = Shard, and its Partial is merged with
	// the other shards' by MergePartials.
	Shard, Shards int
	// Resume, if not nil, is a checkpoint of this run: its finished units
	// are kept and only the others are run.
	Resume *Partial
	// Checkpoint, if not nil, receives the finished work every
	// CheckpointEvery (if positive) and once at the end, also when the run
	// is cancelled. It must write it somewhere safe (atomically).
	Checkpoint      func(*Partial) error
	CheckpointEvery time.Duration // interval between checkpoints; 0 or less writes only the final one
	// Adjust, if not nil, may change each estimator after it is built from
	// the scenario, without changing the scenario (and so its hash): the way
	// to run a modified solver against a baseline of the same scenario.
	Adjust func(cell int, label string, e *estimators.Estimator)
}

// blockSize is the number of consecutive replicates of one cell in a unit
// of work.
const blockSize = 32

// cellPlan is everything a worker needs to run one cell.
type cellPlan struct {
	cell       scenarios.Cell
	gen        *scenarios.Generator
	ests       []estimators.Estimator
	truth      []float64
	ref        int // index of the reference estimator
	replicates int
	blocks     int
	firstSlope int     // index of the first slope (1 with an intercept)
	tq, zq     float64 // 97.5% quantiles of Student t (n−p df) and the normal
	threshold  float64 // breakdown threshold on the slope error norm; 0 if none
}

// slopes returns the number of slopes.
func (p *cellPlan) slopes() int { return len(p.truth) - p.firstSlope }

// newTally returns an empty tally shaped for the cell.
func (p *cellPlan) newTally() *cellTally {
	return newCellTally(len(p.ests), len(p.truth), p.slopes())
}

// Run runs every cell of the study and returns the results. If ctx is
// cancelled, Run stops at the next replicate, and returns the results of
// the units that finished, marked incomplete, with ctx's error.
func Run(ctx context.Context, st *scenarios.Study, opt Options) (*results.Results, error) {
	res, _, err := RunPartial(ctx, st, opt)
	return res, err
}

// RunPartial is Run that also returns the finished work as a Partial: all
// of it, or one shard's share (Options.Shard), or a resumed run's whole
// (Options.Resume). The results summarise exactly the finished units; they
// are complete only when every unit of the run is finished.
func RunPartial(ctx context.Context, st *scenarios.Study, opt Options) (*results.Results, *Partial, error) {
	workers := opt.Workers
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	seed := st.Base.Seed
	if opt.Seed != nil {
		seed = *opt.Seed
	}
	reps := st.Base.Replicates
	if opt.Replicates > 0 {
		reps = opt.Replicates
	}
	if opt.Shards < 0 || (opt.Shards > 0 && (opt.Shard < 0 || opt.Shard >= opt.Shards)) {
		return nil, nil, fmt.Errorf("shard %d of %d: want 0 ≤ shard < shards", opt.Shard, opt.Shards)
	}
	plans, err := plan(st, reps)
	if err != nil {
		return nil, nil, err
	}
	if opt.Adjust != nil {
		for i := range plans {
			for j, spec := range plans[i].cell.Scenario.Estimators {
				opt.Adjust(i, spec.Label, &plans[i].ests[j])
			}
		}
	}
	state, err := newPartial(st, plans, seed, reps, opt)
	if err != nil {
		return nil, nil, err
	}
	var keep *orderedBlocks
	if opt.KeepReplicates != nil {
		if opt.Resume != nil || opt.Shards > 0 {
			return nil, nil, errors.New("kept replicates cannot be combined with a resumed or sharded run")
		}
		if keep, err = newOrderedBlocks(opt.KeepReplicates, st, plans, seed, reps); err != nil {
			return nil, nil, err
		}
	}
	started := time.Now()

	// Units are numbered cell by cell; unit u of cell c covers replicates
	// [b·blockSize, min((b+1)·blockSize, reps)). This run takes the units
	// not yet finished that belong to its shard.
	var firstUnit []int
	total := 0
	for _, p := range plans {
		firstUnit = append(firstUnit, total)
		total += p.blocks
	}
	var todo []int
	var todoReps int64
	for u := 0; u < total; u++ {
		if state.isDone(u) || (opt.Shards > 0 && u%opt.Shards != opt.Shard) {
			continue
		}
		todo = append(todo, u)
		ci := cellOf(firstUnit, u)
		b := u - firstUnit[ci]
		todoReps += int64(min((b+1)*blockSize, reps) - b*blockSize)
	}
	var mu sync.Mutex // guards state
	var next atomic.Int64
	var done atomic.Int64

	ctx, stop := context.WithCancel(ctx)
	defer stop()
	var failOnce sync.Once
	var failure error

	// Periodic checkpoints of the finished work.
	checkpoint := func() error {
		if opt.Checkpoint == nil {
			return nil
		}
		return opt.Checkpoint(state.snapshot(&mu, firstUnit))
	}
	tickerDone := make(chan struct{})
	var tickerWG sync.WaitGroup
	if opt.Checkpoint != nil && opt.CheckpointEvery > 0 {
		tickerWG.Add(1)
		go func() {
			defer tickerWG.Done()
			t := time.NewTicker(opt.CheckpointEvery)
			defer t.Stop()
			for {
				select {
				case <-tickerDone:
					return
				case <-t.C:
					if err := checkpoint(); err != nil {
						failOnce.Do(func() { failure = fmt.Errorf("writing a checkpoint: %w", err); stop() })
						return
					}
				}
			}
		}()
	}

	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var wk *worker
			for {
				k := int(next.Add(1) - 1)
				if k >= len(todo) || ctx.Err() != nil {
					return
				}
				u := todo[k]
				ci := cellOf(firstUnit, u)
				p := &plans[ci]
				if wk == nil || wk.plan != p {
					wk = newWorker(p, seed, ci)
					wk.keep = keep != nil
				}
				b := u - firstUnit[ci]
				lo, hi := b*blockSize, min((b+1)*blockSize, p.replicates)
				if !wk.runBlock(ctx, lo, hi) {
					if wk.err != nil {
						failOnce.Do(func() { failure = wk.err; stop() })
					}
					return
				}
				mu.Lock()
				state.cells[ci].merge(wk.tally)
				state.done.SetBit(state.done, u, 1)
				mu.Unlock()
				if keep != nil {
					keep.put(u, wk.encodeBlock(ci, lo, hi))
				}
				if opt.Progress != nil {
					opt.Progress(done.Add(int64(hi-lo)), todoReps)
				}
			}
		}()
	}
	wg.Wait()
	close(tickerDone)
	tickerWG.Wait()
	if keep != nil {
		if err := keep.close(); err != nil && failure == nil {
			failure = fmt.Errorf("writing the replicate file: %w", err)
		}
	}
	// The last checkpoint records everything finished, also when the run
	// was stopped, so that it can be resumed. The workers have stopped,
	// so the state itself is handed over (and returned below) rather than
	// a copy: at 10,000 cells a copy of the tallies is hundreds of MB.
	if opt.Checkpoint != nil {
		if err := opt.Checkpoint(state); err != nil && failure == nil {
			failure = fmt.Errorf("writing a checkpoint: %w", err)
		}
	}
	res := summariseAll(st, plans, state.cells, seed, reps, opt.Tool)
	res.Provenance = provenance(workers, started, plans, state.cells)
	if !state.Complete() {
		res.Complete = false
	}
	final := state
	if failure != nil {
		res.Complete = false
		return res, final, failure
	}
	if err := ctx.Err(); err != nil {
		res.Complete = false
		return res, final, err
	}
	return res, final, nil
}

// summariseAll builds the results and their derived views from tallies.
func summariseAll(st *scenarios.Study, plans []cellPlan, tallies []*cellTally, seed uint64, reps int, tool results.Tool) *results.Results {
	res := summarise(st, plans, tallies, seed, reps)
	res.Breakdown = breakdownView(st.Cells[0].Scenario.Breakdown, res)
	res.Functions = functionCurves(plans[0])
	res.TuningTheory = tuningCurves(st, plans)
	res.Tool = tool
	return res
}

// cellOf returns the cell of unit u given the first unit of each cell.
func cellOf(firstUnit []int, u int) int {
	lo, hi := 0, len(firstUnit)-1
	for lo < hi {
		mid := (lo + hi + 1) / 2
		if firstUnit[mid] <= u {
			lo = mid
		} else {
			hi = mid - 1
		}
	}
	return lo
}

// plan prepares every cell.
func plan(st *scenarios.Study, reps int) ([]cellPlan, error) {
	plans := make([]cellPlan, len(st.Cells))
	for i, c := range st.Cells {
		g, err := scenarios.NewGenerator(c.Scenario)
		if err != nil {
			return nil, fmt.Errorf("cell %d: %w", i, err)
		}
		p := cellPlan{cell: c, gen: g, truth: g.Truth(), replicates: reps, blocks: (reps + blockSize - 1) / blockSize}
		if !c.Scenario.Model.Intercept.None {
			p.firstSlope = 1
		}
		n, k := g.Dims()
		p.tq = distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(n - k)}.Quantile(0.975)
		p.zq = distuv.UnitNormal.Quantile(0.975)
		if b := c.Scenario.Breakdown; b != nil {
			p.threshold = b.Threshold
		}
		for j, spec := range c.Scenario.Estimators {
			e, err := spec.Build()
			if err != nil {
				return nil, fmt.Errorf("cell %d: %w", i, err)
			}
			p.ests = append(p.ests, e)
			if spec.Label == c.Scenario.Reference {
				p.ref = j
			}
		}
		plans[i] = p
	}
	return plans, nil
}

// worker holds one goroutine's buffers for one cell.
type worker struct {
	plan    *cellPlan
	seed    uint64
	cell    int
	pcg     *rand.PCG
	x       *mat.Dense
	y       []float64
	scratch *scenarios.Scratch
	ws      []estimators.Workspace
	res     []estimators.Result
	se      []float64 // standard errors of one fit
	tally   *cellTally
	// Kept replicates of the current block, when keeping them.
	keep       bool
	keepStatus []uint8
	keepIters  []int
	keepCoefs  []float64
	keepBuf    []byte
	err        error // a fit failed in a way that is not a status
}

func newWorker(p *cellPlan, seed uint64, cell int) *worker {
	n, k := p.gen.Dims()
	return &worker{
		plan:    p,
		seed:    seed,
		cell:    cell,
		pcg:     rand.NewPCG(0, 0),
		x:       mat.NewDense(n, k, nil),
		y:       make([]float64, n),
		scratch: p.gen.NewScratch(),
		ws:      make([]estimators.Workspace, len(p.ests)),
		res:     make([]estimators.Result, len(p.ests)),
		se:      make([]float64, k),
		tally:   p.newTally(),
	}
}

// runBlock runs replicates [lo, hi) into w.tally (reset first). It reports
// false if ctx was cancelled before the block finished; the partial block
// is then discarded.
func (w *worker) runBlock(ctx context.Context, lo, hi int) bool {
	w.tally.reset()
	w.keepStatus, w.keepIters, w.keepCoefs = w.keepStatus[:0], w.keepIters[:0], w.keepCoefs[:0]
	for r := lo; r < hi; r++ {
		if ctx.Err() != nil {
			return false
		}
		w.replicate(r)
		if w.err != nil {
			return false
		}
	}
	return true
}

// replicate draws replicate r's dataset and fits every estimator to it.
func (w *worker) replicate(r int) {
	p := w.plan
	w.pcg.Seed(ReplicateStream(w.seed, w.cell, r))
	p.gen.Draw(w.pcg, w.x, w.y, w.scratch)
	for i := range p.ests {
		// Each estimator's own randomness (elemental subsets) comes from a
		// stream of its own for this replicate.
		w.ws[i].SeedRandom(EstimatorStream(w.seed, w.cell, r, i))
		t0 := time.Now()
		if err := p.ests[i].Fit(w.x, w.y, &w.ws[i], &w.res[i]); err != nil {
			if !errors.Is(err, estimators.ErrNonFinite) {
				// Shapes and settings were validated, so this is a bug;
				// stop the run and report it rather than guess.
				w.err = fmt.Errorf("cell %d replicate %d, estimator %s: %w", w.cell, r, p.cell.Scenario.Estimators[i].Label, err)
				return
			}
			// The model drew a value beyond float64 (an extreme draw of
			// a heavy-tailed distribution): the dataset cannot be fitted,
			// and Fit left res as a NonFinite outcome with NaN estimates.
		}
		w.tally.ests[i].nanos += int64(time.Since(t0))
		w.tally.ests[i].record(&w.res[i])
		if w.keep {
			w.keepStatus = append(w.keepStatus, uint8(w.res[i].Status))
			w.keepIters = append(w.keepIters, w.res[i].Iterations)
			w.keepCoefs = append(w.keepCoefs, w.res[i].Coefficients...)
		}
	}
	w.tally.replicates++
	ref := &w.res[p.ref]
	refOK := ref.Status.Converged()
	for i := range p.ests {
		res := &w.res[i]
		if !res.Status.Converged() {
			// A fit that fails is counted as broken down.
			if p.threshold > 0 {
				w.tally.ests[i].past++
			}
			continue
		}
		et := &w.tally.ests[i]
		var norm2 float64
		for j, b := range res.Coefficients {
			e := b - p.truth[j]
			et.coefs[j].add(e)
			if refOK {
				et.coefs[j].addPair(e, ref.Coefficients[j]-p.truth[j])
			}
			if j >= p.firstSlope {
				norm2 += e * e
			}
		}
		if et.cross != nil {
			k := 0
			for a := p.firstSlope; a < len(p.truth); a++ {
				ea := res.Coefficients[a] - p.truth[a]
				for b := a + 1; b < len(p.truth); b++ {
					et.cross[k].AddProduct(ea, res.Coefficients[b]-p.truth[b])
					k++
				}
			}
		}
		if p.threshold > 0 && norm2 > p.threshold*p.threshold {
			et.past++
		}
		if w.ws[i].StandardErrors(p.ests[i], w.x, res, w.se) {
			q := p.zq
			if p.ests[i].Method == estimators.MethodLS {
				q = p.tq
			}
			for j, b := range res.Coefficients {
				half := q * w.se[j]
				et.coefs[j].addInterval(2*half, math.Abs(b-p.truth[j]) <= half)
			}
		}
	}
}

// encodeBlock encodes the kept replicates of the block [lo, hi) of cell.
func (w *worker) encodeBlock(cell, lo, hi int) []byte {
	w.keepBuf = results.EncodeBlock(w.keepBuf[:0], cell, lo, hi-lo, w.keepStatus, w.keepIters, w.keepCoefs, len(w.plan.truth))
	return append([]byte(nil), w.keepBuf...)
}

// orderedBlocks writes encoded blocks to a replicate file in unit order,
// holding back blocks that finish early.
type orderedBlocks struct {
	mu      sync.Mutex
	w       *results.ReplicateWriter
	next    int
	pending map[int][]byte
	err     error
}

func newOrderedBlocks(dst io.Writer, st *scenarios.Study, plans []cellPlan, seed uint64, reps int) (*orderedBlocks, error) {
	h := results.ReplicateHeader{Scenario: st.Base.Name, Hash: st.Hash, Seed: seed, Replicates: reps}
	for s := range estimators.NumStatuses {
		h.Statuses = append(h.Statuses, estimators.Status(s).String())
	}
	for _, p := range plans {
		var lay results.ReplicateLayout
		for _, spec := range p.cell.Scenario.Estimators {
			lay.Estimators = append(lay.Estimators, spec.Label)
		}
		lay.Coefficients = p.cell.Scenario.CoefficientNames()
		h.Cells = append(h.Cells, lay)
	}
	rw, err := results.NewReplicateWriter(dst, h)
	if err != nil {
		return nil, err
	}
	return &orderedBlocks{w: rw, pending: map[int][]byte{}}, nil
}

// put hands over unit u's block.
func (o *orderedBlocks) put(u int, block []byte) {
	o.mu.Lock()
	defer o.mu.Unlock()
	o.pending[u] = block
	for {
		b, ok := o.pending[o.next]
		if !ok {
			return
		}
		if o.err == nil {
			o.err = o.w.WriteBlock(b)
		}
		delete(o.pending, o.next)
		o.next++
	}
}

// close writes any blocks left behind a unit that never finished (an
// interrupted run), in unit order, and finishes the file.
func (o *orderedBlocks) close() error {
	o.mu.Lock()
	defer o.mu.Unlock()
	units := make([]int, 0, len(o.pending))
	for u := range o.pending {
		units = append(units, u)
	}
	sort.Ints(units)
	for _, u := range units {
		if o.err == nil {
			o.err = o.w.WriteBlock(o.pending[u])
		}
	}
	if err := o.w.Close(); o.err == nil {
		o.err = err
	}
	return o.err
}
