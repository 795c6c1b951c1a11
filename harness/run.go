package harness

import (
	"context"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"reflect"
	"runtime"
	"slices"
	"sort"
	"sync"
	"sync/atomic"
	"time"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

// ProgressReport is what Options.Progress is told after a unit of work.
type ProgressReport struct {
	// Done and Total count replicate fits of cells: a replicate of a unit
	// that serves k cells (cells that share their datasets) counts k.
	Done, Total int64
	// Cells are the cells of the unit just finished, in increasing order.
	// The slice belongs to the harness: read it, do not keep or change it.
	Cells []int
}

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
	// Progress, if not nil, is called after every unit of work with the
	// replicates finished, the total, and the cells the unit covered. It
	// must be safe for concurrent use.
	Progress func(ProgressReport)
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
	// Cells that draw the same datasets fit an estimator once per dataset
	// when its label and every field of the adjusted estimator are equal
	// (the psi compared as a value; a psi that cannot be compared, or a
	// Trace, is fitted in each cell).
	Adjust func(cell int, label string, e *estimators.Estimator)
	// AllowCommands lets the estimators of method external run their
	// programs (see harness/external.go); without it a scenario with one
	// is refused with a *CommandError.
	AllowCommands bool
	// Fitters are the estimators of method go, by label. Every worker
	// calls them, each with its own Workspace: they must be safe for
	// concurrent use. One that implements estimators.StandardErrorer has
	// the coverage of its intervals measured; the theory beside it comes
	// from the psi its scenario entry declares, if any.
	Fitters map[string]estimators.Fitter
	// Stderr receives the standard error of external programs, each line
	// prefixed by the label, and a line for each failed external fit; nil
	// means os.Stderr.
	Stderr io.Writer

	// AuditSolvers audits the fits of every estimator rhomark fits itself
	// as if each had solver-audit: true (see results.StopError); the
	// estimators of methods external and go are not audited, as their
	// iterations are not rhomark's. A resumed run keeps its checkpoint's
	// setting.
	AuditSolvers bool

	// unitCells, if positive, replaces the default group size (tests).
	unitCells int
	// startTimeout, if positive, replaces the extra time each program
	// has for its first reply after a start (tests: starting a test
	// binary on a loaded machine must not pass for a hang).
	startTimeout time.Duration
}

// auditAll reports whether the run audits every estimator: AuditSolvers,
// or a resumed checkpoint's setting.
func (o Options) auditAll() bool {
	return o.AuditSolvers || (o.Resume != nil && o.Resume.AuditSolvers)
}

// blockSize is the number of consecutive replicates in a unit of work.
const blockSize = 32

// unitCells is the most cells a unit of work covers: cells that draw the
// same datasets are run together, up to this many at a time, so that an
// estimator they share is fitted once per dataset. It bounds a worker's
// tallies and the time a checkpoint holds the lock on one unit's cells.
const unitCells = 64

// keepBudget bounds the bytes of kept replicates held back, when keeping
// them, for blocks that finish before the blocks the file needs first (see
// keepUnitCells).
const keepBudget = 64 << 20

// cellPlan is everything a worker needs to run one cell.
type cellPlan struct {
	cell       scenarios.Cell
	gen        *scenarios.Generator
	data       string // the generator's settings (Generator.AppendSettings)
	dataKey    uint64 // DataKey of gen
	ests       []estimators.Estimator
	estKeys    []uint64 // EstimatorKey of each estimator's label
	truth      []float64
	ref        int // index of the reference estimator
	replicates int
	blocks     int
	firstSlope int     // index of the first slope (1 with an intercept)
	tq, zq     float64 // 97.5% quantiles of Student t (n−p df) and the normal
	threshold  float64 // breakdown threshold on the slope error norm; 0 if none
	aud        cellAudit
}

// slopes returns the number of slopes.
func (p *cellPlan) slopes() int { return len(p.truth) - p.firstSlope }

// newTally returns an empty tally shaped for the cell.
func (p *cellPlan) newTally() *cellTally {
	t := newCellTally(len(p.ests), len(p.truth), p.slopes())
	for j := range t.ests {
		t.ests[j].aud = newAuditTally(p.aud, j, len(p.truth))
	}
	return t
}

// groupPlan is the cells one unit of work covers: cells with the same
// data-generating settings (so the same datasets), in cell order, and the
// distinct fits they need. A unit is one block of replicates of a group:
// each replicate's dataset is drawn once, each distinct fit computed once,
// and every cell records the fits of its estimators.
type groupPlan struct {
	cells     []int // the cells, ascending
	gen       *scenarios.Generator
	dataKey   uint64
	fits      []fitPlan
	use       [][]int // use[i][j] is the fit that gives estimator j of cells[i]
	firstUnit int
	blocks    int
}

// fitPlan is one distinct fit of a group.
type fitPlan struct {
	est   estimators.Estimator
	key   uint64 // EstimatorKey of the label: the estimator's stream
	label string
	cell  int // the first cell that uses it, for messages
	aud   fitAudit
	// outside, for an estimator of method external or go, says what fits
	// it (bindOutside); nil for rhomark's own methods.
	outside *outsideFit
}

// fitIdentity is what makes two cells' estimators the same fit of the same
// dataset: the label (which selects the estimator's random stream) and
// every field of the adjusted estimator. A psi that cannot be compared, or
// an estimator with a trace, gets an identity of its own.
type fitIdentity struct {
	label      string
	method     estimators.Method
	psi        any
	scale      estimators.Scale
	start      string // the bits of the given start, if any
	startGiven bool
	startFrom  estimators.Method
	resampling estimators.Resampling
	settings   estimators.Settings
	outside    string // outsideKey of the estimator's entry
}

// unshared marks an estimator that is fitted for its own cell only.
type unshared struct{ cell, est int }

func identityOf(label string, e *estimators.Estimator, cell, est int) fitIdentity {
	id := fitIdentity{label: label, method: e.Method, psi: e.Psi, scale: e.Scale, startGiven: e.Start != nil,
		startFrom: e.StartFrom, resampling: e.Resampling, settings: e.Settings}
	if e.Start != nil {
		b := make([]byte, 0, 8*len(e.Start))
		for _, v := range e.Start {
			b = binary.LittleEndian.AppendUint64(b, math.Float64bits(v))
		}
		id.start = string(b)
	}
	if e.Trace != nil || (e.Psi != nil && !reflect.ValueOf(e.Psi).Comparable()) {
		id.psi = unshared{cell, est}
	}
	return id
}

// groupCells groups the cells that draw the same datasets, in the order of
// their first cells, cut into groups of at most size cells, and finds the
// fits each group shares.
func groupCells(plans []cellPlan, size int) []groupPlan {
	var order []string
	members := map[string][]int{}
	for i := range plans {
		d := plans[i].data
		if _, ok := members[d]; !ok {
			order = append(order, d)
		}
		members[d] = append(members[d], i)
	}
	var groups []groupPlan
	first := 0
	for _, d := range order {
		cells := members[d]
		for len(cells) > 0 {
			n := min(size, len(cells))
			g := groupPlan{cells: cells[:n:n], gen: plans[cells[0]].gen, dataKey: plans[cells[0]].dataKey,
				firstUnit: first, blocks: plans[cells[0]].blocks}
			ids := map[fitIdentity]int{}
			for _, c := range g.cells {
				p := &plans[c]
				use := make([]int, len(p.ests))
				for j := range p.ests {
					label := p.cell.Scenario.Estimators[j].Label
					id := identityOf(label, &p.ests[j], c, j)
					id.outside = outsideKey(p.cell.Scenario.Estimators[j])
					f, ok := ids[id]
					if !ok {
						f = len(g.fits)
						ids[id] = f
						g.fits = append(g.fits, fitPlan{est: p.ests[j], key: p.estKeys[j], label: label, cell: c})
					}
					use[j] = f
					g.fits[f].aud.add(p.aud, j)
				}
				g.use = append(g.use, use)
			}
			groups = append(groups, g)
			first += g.blocks
			cells = cells[n:]
		}
	}
	return groups
}

// keepUnitCells is the group size of a run that keeps its replicates. The
// file holds the cells in order, so the blocks of a group's later cells
// wait for its first cell to finish: about (size − 1) × replicates records.
// The size is cut so that they fit keepBudget, however many replicates.
func keepUnitCells(plans []cellPlan, reps int) int {
	p := &plans[0]
	perCell := float64(reps) * float64(len(p.ests)) * float64(1+10+8*len(p.truth))
	return max(1, min(unitCells, 1+int(keepBudget/perCell)))
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
	if opt.KeepReplicates != nil && (opt.Resume != nil || opt.Shards > 0) {
		return nil, nil, errors.New("kept replicates cannot be combined with a resumed or sharded run")
	}
	plans, err := plan(st, reps)
	if err != nil {
		return nil, nil, err
	}
	if err := planAudits(plans, opt.auditAll()); err != nil {
		return nil, nil, err
	}
	if opt.Adjust != nil {
		for i := range plans {
			for j, spec := range plans[i].cell.Scenario.Estimators {
				opt.Adjust(i, spec.Label, &plans[i].ests[j])
			}
		}
	}
	// The units: blocks of replicates of groups of cells that draw the
	// same datasets. A resumed run keeps the grouping of its checkpoint.
	size := unitCells
	if opt.unitCells > 0 {
		size = opt.unitCells
	}
	switch {
	case opt.Resume != nil:
		if size = opt.Resume.UnitCells; size < 1 {
			return nil, nil, fmt.Errorf("the checkpoint's units cover %d cells each; want at least 1", size)
		}
	case opt.KeepReplicates != nil:
		size = keepUnitCells(plans, reps)
	}
	groups := groupCells(plans, size)
	if err := bindOutside(st, plans, groups, opt); err != nil {
		return nil, nil, err
	}
	total := 0
	for _, g := range groups {
		total += g.blocks
	}
	state, err := newPartial(st, plans, total, size, seed, reps, opt)
	if err != nil {
		return nil, nil, err
	}
	var keep *orderedBlocks
	if opt.KeepReplicates != nil {
		if keep, err = newOrderedBlocks(opt.KeepReplicates, st, plans, seed, reps); err != nil {
			return nil, nil, err
		}
	}
	started := time.Now()

	// Unit u of group g covers replicates [b·blockSize,
	// min((b+1)·blockSize, reps)) of every cell of g, b = u − g.firstUnit.
	// This run takes the units not yet finished that belong to its shard.
	var todo []int
	var todoReps int64
	for u := 0; u < total; u++ {
		if state.isDone(u) || (opt.Shards > 0 && u%opt.Shards != opt.Shard) {
			continue
		}
		todo = append(todo, u)
		g := &groups[groupOf(groups, u)]
		b := u - g.firstUnit
		todoReps += int64(min((b+1)*blockSize, reps)-b*blockSize) * int64(len(g.cells))
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
		return opt.Checkpoint(state.snapshot(&mu, groups))
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
			pool := newOutsidePool(ctx, opt)
			defer pool.close()
			var wk *worker
			for {
				k := int(next.Add(1) - 1)
				if k >= len(todo) || ctx.Err() != nil {
					return
				}
				u := todo[k]
				g := &groups[groupOf(groups, u)]
				if wk == nil || wk.group != g {
					wk = newWorker(plans, g, seed)
					wk.pool = pool
					wk.keep = keep != nil
				}
				b := u - g.firstUnit
				lo, hi := b*blockSize, min((b+1)*blockSize, reps)
				if !wk.runBlock(ctx, lo, hi) {
					if wk.err != nil {
						failOnce.Do(func() { failure = wk.err; stop() })
					}
					return
				}
				mu.Lock()
				for i, c := range g.cells {
					state.cells[c].merge(wk.tallies[i])
				}
				state.done.SetBit(state.done, u, 1)
				mu.Unlock()
				if keep != nil {
					for i, c := range g.cells {
						keep.put(c*g.blocks+b, wk.encodeBlock(i, lo, hi))
					}
				}
				if opt.Progress != nil {
					opt.Progress(ProgressReport{Done: done.Add(int64(hi-lo) * int64(len(g.cells))), Total: todoReps, Cells: g.cells})
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
	res.Breakdown = breakdownView(st, res)
	res.Functions = functionCurves(plans[0])
	res.TuningTheory = tuningCurves(st, plans)
	res.Tool = tool
	return res
}

// groupOf returns the group of unit u.
func groupOf(groups []groupPlan, u int) int {
	lo, hi := 0, len(groups)-1
	for lo < hi {
		mid := (lo + hi + 1) / 2
		if groups[mid].firstUnit <= u {
			lo = mid
		} else {
			hi = mid - 1
		}
	}
	return lo
}

// plan prepares every cell. Cells whose estimator is written the same way
// share one built estimator (a custom psi is compiled once).
func plan(st *scenarios.Study, reps int) ([]cellPlan, error) {
	plans := make([]cellPlan, len(st.Cells))
	built := map[string]estimators.Estimator{}
	for i, c := range st.Cells {
		g, err := scenarios.NewGenerator(c.Scenario)
		if err != nil {
			return nil, fmt.Errorf("cell %d: %w", i, err)
		}
		p := cellPlan{cell: c, gen: g, data: string(g.AppendSettings(nil)), dataKey: DataKey(g), truth: g.Truth(),
			replicates: reps, blocks: (reps + blockSize - 1) / blockSize}
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
			text, err := json.Marshal(spec)
			if err != nil {
				return nil, fmt.Errorf("cell %d: estimator %s: %w", i, spec.Label, err)
			}
			e, ok := built[string(text)]
			if !ok {
				if e, err = buildSpec(spec); err != nil {
					return nil, fmt.Errorf("cell %d: %w", i, err)
				}
				built[string(text)] = e
			}
			// Each cell has its own copy, which Options.Adjust may change.
			e.Start = slices.Clone(e.Start)
			p.ests = append(p.ests, e)
			p.estKeys = append(p.estKeys, EstimatorKey(spec.Label))
			if spec.Label == c.Scenario.Reference {
				p.ref = j
			}
		}
		plans[i] = p
	}
	return plans, nil
}

// keptBlock holds one cell's kept replicates of the current block.
type keptBlock struct {
	status []uint8
	iters  []int
	coefs  []float64
}

// worker holds one goroutine's buffers for one group of cells.
type worker struct {
	plans []cellPlan
	group *groupPlan
	rp    *Replicator // the group's datasets and the fits' streams
	// Per distinct fit of the group: workspace, result, fitting time of
	// the current replicate, and standard errors (seOK: computed; seT:
	// their intervals use Student's t rather than the normal quantile).
	ws    []estimators.Workspace
	res   []estimators.Result
	nanos []int64
	se    [][]float64
	seOK  []bool
	seT   []bool
	// Per cell of the group: the block's tallies and kept replicates.
	tallies []*cellTally
	keep    bool
	kept    []keptBlock
	keepBuf []byte
	err     error // a fit failed in a way that is not a status
	aud     *workerAudit
	// The worker goroutine's outside programs, and the unit's batch.
	pool  *outsidePool
	batch *outsideBatch
}

func newWorker(plans []cellPlan, g *groupPlan, seed uint64) *worker {
	_, k := g.gen.Dims()
	w := &worker{
		plans: plans,
		group: g,
		rp:    newReplicator(g.gen, g.dataKey, seed),
		ws:    make([]estimators.Workspace, len(g.fits)),
		res:   make([]estimators.Result, len(g.fits)),
		nanos: make([]int64, len(g.fits)),
		se:    make([][]float64, len(g.fits)),
		seOK:  make([]bool, len(g.fits)),
		seT:   make([]bool, len(g.fits)),
		kept:  make([]keptBlock, len(g.cells)),
	}
	for f := range w.se {
		w.se[f] = make([]float64, k)
	}
	for _, c := range g.cells {
		w.tallies = append(w.tallies, plans[c].newTally())
	}
	w.aud = newWorkerAudit(plans, g)
	return w
}

// runBlock runs replicates [lo, hi) of every cell of the group into
// w.tallies (reset first). It reports false if ctx was cancelled before
// the block finished; the partial block is then discarded.
func (w *worker) runBlock(ctx context.Context, lo, hi int) bool {
	for i, t := range w.tallies {
		t.reset()
		k := &w.kept[i]
		k.status, k.iters, k.coefs = k.status[:0], k.iters[:0], k.coefs[:0]
	}
	if !w.fetchOutside(ctx, lo, hi) {
		return false
	}
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

// replicate draws replicate r's dataset (or installs the copy fetchOutside
// drew for the unit's programs), computes each distinct fit of the group
// once, and records in every cell the fits of its estimators.
func (w *worker) replicate(r int) {
	g := w.group
	x, y := w.dataset(r)
	for f := range g.fits {
		fp := &g.fits[f]
		if w.takeReply(f, r) {
			continue
		}
		var fitter estimators.Fitter = w.aud.estimator(f, &fp.est)
		if fp.outside != nil {
			fitter = fp.fitter()
		}
		t0 := time.Now()
		if err := w.rp.fit(fp.key, fitter, &w.ws[f], &w.res[f]); err != nil {
			// Shapes and settings were validated, so this is a bug; stop
			// the run and report it rather than guess.
			w.err = fmt.Errorf("cell %d replicate %d, estimator %s: %w", fp.cell, r, fp.label, err)
			return
		}
		w.nanos[f] = int64(time.Since(t0))
		res := &w.res[f]
		w.seOK[f], w.seT[f] = w.standardErrors(fp, f, x, res)
		if w.aud != nil {
			if err := w.aud.study(w.rp, fp, f, x, y, res); err != nil {
				w.err = fmt.Errorf("cell %d replicate %d, estimator %s: %w", fp.cell, r, fp.label, err)
				return
			}
		}
	}
	for i, c := range g.cells {
		w.record(&w.plans[c], w.tallies[i], g.use[i], &w.kept[i])
	}
}

// record adds one replicate's fits to a cell's tally: estimator j's fit is
// w.res[use[j]].
func (w *worker) record(p *cellPlan, t *cellTally, use []int, kept *keptBlock) {
	for j := range p.ests {
		f := use[j]
		res := &w.res[f]
		// A shared fit counts its time in every cell it serves, so that
		// seconds per fit stays the cost of one fit of the estimator.
		t.ests[j].nanos += w.nanos[f]
		t.ests[j].record(res)
		if w.keep {
			kept.status = append(kept.status, uint8(res.Status))
			kept.iters = append(kept.iters, res.Iterations)
			kept.coefs = append(kept.coefs, res.Coefficients...)
		}
	}
	t.replicates++
	if w.aud != nil {
		w.aud.record(p, t, use)
	}
	ref := &w.res[use[p.ref]]
	refOK := ref.Status.Converged()
	for j := range p.ests {
		f := use[j]
		res := &w.res[f]
		if !res.Status.Converged() {
			// A fit that fails is counted as broken down.
			if p.threshold > 0 {
				t.ests[j].past++
			}
			continue
		}
		et := &t.ests[j]
		var norm2 float64
		for k, b := range res.Coefficients {
			e := b - p.truth[k]
			et.coefs[k].add(e)
			if refOK {
				et.coefs[k].addPair(e, ref.Coefficients[k]-p.truth[k])
			}
			if k >= p.firstSlope {
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
		if w.seOK[f] {
			q := p.zq
			if w.seT[f] {
				q = p.tq
			}
			for k, b := range res.Coefficients {
				half := q * w.se[f][k]
				et.coefs[k].addInterval(2*half, math.Abs(b-p.truth[k]) <= half)
			}
		}
	}
}

// encodeBlock encodes the kept replicates [lo, hi) of the group's cell i.
func (w *worker) encodeBlock(i, lo, hi int) []byte {
	c := w.group.cells[i]
	k := &w.kept[i]
	w.keepBuf = results.EncodeBlock(w.keepBuf[:0], c, lo, hi-lo, k.status, k.iters, k.coefs, len(w.plans[c].truth))
	return append([]byte(nil), w.keepBuf...)
}

// orderedBlocks writes encoded blocks to a replicate file in cell order and
// within a cell in replicate order, holding back blocks that finish early.
// Block b of cell c is number c·blocks + b in that order.
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

// put hands over block number q.
func (o *orderedBlocks) put(q int, block []byte) {
	o.mu.Lock()
	defer o.mu.Unlock()
	o.pending[q] = block
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

// close writes any blocks left behind a block that never finished (an
// interrupted run), in order, and finishes the file.
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
