package harness

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/internal/exactsum"
)

// The solver study of a run (see results/convergence.go for what is
// reported). For an audited estimator each fit is made traced
// (estimators.AuditWorkspace.Traced) and then audited; for an estimator
// with roots: true each replicate is also refitted from several starts
// (estimators.FindRootsInto, into the worker's reused outcome), the S
// start drawing from the estimator's own stream of the replicate, as the
// fit does. Neither changes the fit: its time is measured before them and
// its estimate is recorded as without them.
//
// The medians must be exact and the same for any number of workers,
// shards or resumes, so every audited fit's values travel in the tallies
// (and in the partial file), and the summary sorts them: memory grows by
// 8·(p + 28) bytes per audited fit of p coefficients (auditWidth float64
// values), and the partial file by 4/3 of that, about 10.7·(p + 28) bytes,
// as the values' bits are base64 encoded. A run refuses an audit of more
// than auditValueBudget values in all. The root searches need only counts
// and exact sums, of fixed size.

// auditValueBudget bounds the values an audited run keeps: 2^25 float64
// (256 MiB), about a million audited fits of three coefficients.
const auditValueBudget = 1 << 25

// auditWidth is the number of values kept per audited fit of p
// coefficients: the worst error in SE, the error of each coefficient, the
// rate, and per audit tolerance the iteration reached and the error left.
func auditWidth(p int) int { return 2 + p + 2*estimators.NumAuditTolerances }

// cellAudit says which estimators of a cell are audited and searched for
// roots; nil slices when none is.
type cellAudit struct {
	audit, roots []bool
}

// audits reports whether estimator j of the cell is audited.
func (c *cellAudit) audits(j int) bool { return c.audit != nil && c.audit[j] }

// searches reports whether estimator j of the cell is searched for roots.
func (c *cellAudit) searches(j int) bool { return c.roots != nil && c.roots[j] }

// studied reports whether estimator j of the cell is studied at all.
func (c *cellAudit) studied(j int) bool { return c.audits(j) || c.searches(j) }

// fitAudit says what a distinct fit of a group needs: an audit if any cell
// that uses it audits it, a root search likewise.
type fitAudit struct {
	audit, roots bool
}

// add notes that the fit serves estimator j of a cell with audits a.
func (f *fitAudit) add(a cellAudit, j int) {
	f.audit = f.audit || a.audits(j)
	f.roots = f.roots || a.searches(j)
}

// planAudits sets each cell's audits from its scenario (solver-audit,
// roots) and, when all is set (run --audit-solvers), audits every
// estimator. It refuses a run whose audit would keep more than
// auditValueBudget values.
func planAudits(plans []cellPlan, all bool) error {
	var values int64
	for i := range plans {
		p := &plans[i]
		specs := p.cell.Scenario.Estimators
		for j, spec := range specs {
			if spec.Outside() {
				continue // another program's iteration cannot be audited
			}
			if spec.SolverAudit || all {
				if p.aud.audit == nil {
					p.aud.audit = make([]bool, len(specs))
				}
				p.aud.audit[j] = true
				values += int64(p.replicates) * int64(auditWidth(len(p.truth)))
			}
			if spec.Roots {
				if p.aud.roots == nil {
					p.aud.roots = make([]bool, len(specs))
				}
				p.aud.roots[j] = true
			}
		}
	}
	if values > auditValueBudget {
		return fmt.Errorf("the solver audit would keep %d values (one set per audited fit, for exact medians), more than the %d it may hold: audit fewer estimators or cells, or run fewer replicates", values, auditValueBudget)
	}
	return nil
}

// auditTally accumulates the solver study of one estimator in one cell.
type auditTally struct {
	p int // coefficients
	// The audit: one record of auditWidth(p) values per audited fit.
	values     []float64
	notAudited int64               // failed fits
	atCap      int64               // continuations that reached their cap
	direct     int64               // fits of a direct method (error 0)
	seReasons  [numSEReasons]int64 // audited fits by SEReason
	roots      *rootTally          // nil unless searched for roots
}

// numSEReasons is the number of estimators.SEReason values counted.
const numSEReasons = int(estimators.SENoFixedPoint) + 1

// rootStarts is the most starts of a root search (ls, lad, S, truth):
// estimators.RootStart numbers them from 0 to RootFromTruth.
const rootStarts = int(estimators.RootFromTruth) + 1

// rootTally accumulates the root searches of one estimator in one cell.
type rootTally struct {
	searched, failed, multiple int64
	converged                  [rootStarts]int64
	best                       [rootStarts]int64 // among searches with several roots
	// statuses counts the refits by final status, per start.
	statuses [rootStarts][statusSlots]int64
	// s1, s2: Σ(root − truth) and Σ(root − truth)² per start and
	// coefficient, over converged refits.
	s1, s2 [rootStarts][]exactsum.Sum
}

// newAuditTally returns the tally of estimator j of a cell with audits a,
// or nil when it is not studied.
func newAuditTally(a cellAudit, j, p int) *auditTally {
	if !a.studied(j) {
		return nil
	}
	t := &auditTally{p: p}
	if a.searches(j) {
		t.roots = &rootTally{}
		for s := range t.roots.s1 {
			t.roots.s1[s] = make([]exactsum.Sum, p)
			t.roots.s2[s] = make([]exactsum.Sum, p)
		}
	}
	return t
}

// sums lists the exact sums of a root tally in their serialised order.
func (r *rootTally) sums() []*exactsum.Sum {
	var out []*exactsum.Sum
	for s := range r.s1 {
		for k := range r.s1[s] {
			out = append(out, &r.s1[s][k], &r.s2[s][k])
		}
	}
	return out
}

// reset empties the tally, keeping its storage.
func (t *auditTally) reset() {
	if t == nil {
		return
	}
	t.values = t.values[:0]
	t.notAudited, t.atCap, t.direct = 0, 0, 0
	t.seReasons = [numSEReasons]int64{}
	if r := t.roots; r != nil {
		r.searched, r.failed, r.multiple = 0, 0, 0
		r.converged, r.best = [rootStarts]int64{}, [rootStarts]int64{}
		r.statuses = [rootStarts][statusSlots]int64{}
		for s := range r.s1 {
			for k := range r.s1[s] {
				r.s1[s][k].Reset()
				r.s2[s][k].Reset()
			}
		}
	}
}

// merge adds u to t. Values are appended: their order does not matter to
// the summary, which sorts them.
func (t *auditTally) merge(u *auditTally) {
	if t == nil || u == nil {
		return
	}
	t.values = append(t.values, u.values...)
	t.notAudited += u.notAudited
	t.atCap += u.atCap
	t.direct += u.direct
	for i := range t.seReasons {
		t.seReasons[i] += u.seReasons[i]
	}
	if r, v := t.roots, u.roots; r != nil && v != nil {
		r.searched += v.searched
		r.failed += v.failed
		r.multiple += v.multiple
		for s := range r.converged {
			r.converged[s] += v.converged[s]
			r.best[s] += v.best[s]
			for k := range r.statuses[s] {
				r.statuses[s][k] += v.statuses[s][k]
			}
			for k := range r.s1[s] {
				r.s1[s][k].Merge(&v.s1[s][k])
				r.s2[s][k].Merge(&v.s2[s][k])
			}
		}
	}
}

// addAudit records one audited fit.
func (t *auditTally) addAudit(a *estimators.Audit) {
	switch a.Kind {
	case estimators.AuditNotRun:
		return
	case estimators.AuditFailedFit:
		t.notAudited++
		return
	case estimators.AuditDirect:
		t.direct++
	}
	if a.End == estimators.ContinuationAtCap {
		t.atCap++
	}
	if r := int(a.SEReason); r >= 0 && r < numSEReasons {
		t.seReasons[r]++
	}
	t.values = append(t.values, a.MaxErrorSE)
	t.values = append(t.values, a.ErrorSE...)
	t.values = append(t.values, a.Rate.Value)
	for _, row := range a.Tolerances {
		it, e := math.NaN(), math.NaN()
		if row.Reached {
			it, e = float64(row.Iterations), row.MaxErrorSE
		}
		t.values = append(t.values, it, e)
	}
}

// addRoots records one root search (err: it could not run).
func (t *auditTally) addRoots(rs *estimators.Roots, truth []float64, err error) {
	r := t.roots
	r.searched++
	if err != nil {
		r.failed++
		return
	}
	if rs.Multiple {
		r.multiple++
	}
	for _, root := range rs.Roots {
		s := int(root.Start)
		if s >= rootStarts {
			continue
		}
		if k := int(root.Status); k >= 0 && k < statusSlots {
			r.statuses[s][k]++
		}
		if !root.Status.Converged() {
			continue
		}
		r.converged[s]++
		for k, b := range root.Coefficients {
			e := b - truth[k]
			r.s1[s][k].Add(e)
			r.s2[s][k].AddProduct(e, e)
		}
	}
	if rs.Best >= 0 && rs.Multiple {
		// Every start that reached the best root counts: starts within
		// RootTolerance of each other reached the same root, whose
		// objectives differ only by rounding.
		for _, root := range rs.Roots {
			if s := int(root.Start); s < rootStarts && root.Group == rs.Roots[rs.Best].Group {
				r.best[s]++
			}
		}
	}
}

// workerAudit holds a worker's buffers for the solver study of its group:
// per distinct fit, the audit workspace and outcome, the traced estimator,
// and the root search's workspace and outcome.
type workerAudit struct {
	fits    []fitAudit
	aw      []estimators.AuditWorkspace
	out     []estimators.Audit
	traced  []estimators.Estimator
	rootWS  []estimators.Workspace
	roots   []estimators.Roots
	rootErr []error
	truth   []float64
}

// newWorkerAudit returns the study's buffers for group g, or nil when no
// fit of the group is studied (the run then does no more work than
// without the study).
func newWorkerAudit(plans []cellPlan, g *groupPlan) *workerAudit {
	studied := false
	for _, f := range g.fits {
		studied = studied || f.aud.audit || f.aud.roots
	}
	if !studied {
		return nil
	}
	n := len(g.fits)
	w := &workerAudit{fits: make([]fitAudit, n), aw: make([]estimators.AuditWorkspace, n), out: make([]estimators.Audit, n),
		traced: make([]estimators.Estimator, n), rootWS: make([]estimators.Workspace, n), roots: make([]estimators.Roots, n),
		rootErr: make([]error, n), truth: plans[g.cells[0]].truth}
	for f := range g.fits {
		w.fits[f] = g.fits[f].aud
	}
	return w
}

// estimator returns the estimator to fit for fit f: traced into its audit
// workspace when it is audited, as planned otherwise.
func (w *workerAudit) estimator(f int, e *estimators.Estimator) *estimators.Estimator {
	if w == nil || !w.fits[f].audit {
		return e
	}
	w.traced[f] = w.aw[f].Traced(*e)
	return &w.traced[f]
}

// study audits fit f of the replicate just fitted (res, to x and y) and
// searches it for roots, as planned.
func (w *workerAudit) study(rp *Replicator, fp *fitPlan, f int, x *mat.Dense, y []float64, res *estimators.Result) error {
	if w.fits[f].audit {
		if err := w.aw[f].Audit(fp.est, x, y, res, &w.out[f]); err != nil {
			return fmt.Errorf("auditing the fit: %w", err)
		}
	}
	if w.fits[f].roots {
		w.rootErr[f] = rp.findRootsInto(fp.key, &fp.est, &w.rootWS[f], estimators.RootOptions{Truth: w.truth}, &w.roots[f])
	}
	return nil
}

// FindRoots searches the dataset of the replicate last drawn for roots of
// est's estimating equations (estimators.FindRoots) from the least-squares,
// LAD and S estimates and the true coefficients, exactly as a run does for
// an estimator with roots: true: ws is seeded with the estimator's own
// stream for the replicate, so the S start draws the subsets the run's
// search drew. opts.Truth, if nil, is the scenario's true coefficients.
func (r *Replicator) FindRoots(label string, est *estimators.Estimator, ws *estimators.Workspace, opts estimators.RootOptions) (estimators.Roots, error) {
	if opts.Truth == nil {
		opts.Truth = r.gen.Truth()
	}
	var out estimators.Roots
	if err := r.findRootsInto(EstimatorKey(label), est, ws, opts, &out); err != nil {
		return estimators.Roots{}, err
	}
	return out, nil
}

// findRootsInto is FindRoots for an estimator whose key is known, into
// out, whose storage it reuses (estimators.FindRootsInto).
func (r *Replicator) findRootsInto(estKey uint64, est *estimators.Estimator, ws *estimators.Workspace, opts estimators.RootOptions, out *estimators.Roots) error {
	ws.SeedRandom(EstimatorStream(r.seed, r.dataKey, r.rep, estKey))
	return estimators.FindRootsInto(*est, r.x, r.y, opts, ws, out)
}

// record adds the study of the replicate's fits to the cell's tally:
// estimator j's fit is use[j].
func (w *workerAudit) record(p *cellPlan, t *cellTally, use []int) {
	for j := range p.ests {
		at := t.ests[j].aud
		if at == nil {
			continue
		}
		f := use[j]
		if p.aud.audits(j) {
			at.addAudit(&w.out[f])
		}
		if at.roots != nil {
			at.addRoots(&w.roots[f], p.truth, w.rootErr[f])
		}
	}
}
