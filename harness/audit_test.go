package harness

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/rhomark/rhomark/results"
)

// auditScenario is the data of the estimators package's audit tests, as a
// scenario: y = 20 + 2 x1 − x2 + N(0, 1) with 10% of the responses moved
// up by 8. The intercept is large beside the noise, as in calibration
// data, so a relative change tolerance is loose in standard errors.
const auditScenario = `
seed: 15
model:
  n: 100
  intercept: 20
  columns: [{name: x1, slope: 2}, {name: x2, slope: -1}]
noise: {dist: normal, scale: 1}
contamination:
  - {label: spikes, kind: vertical, fraction: 0.1, shift: 8}
estimators:
  - {label: ls, method: ls}
  - {label: huber-loose, method: irls, psi: huber, stop: {change: 1e-3}}
  - {label: huber-tight, method: irls, psi: huber, stop: {change: 1e-12, max-iter: 1000}}
  - {label: logistic-newton, method: newton, psi: logistic, scale: "fixed:1", stop: {change: 1e-12, max-iter: 1000}}
  - {label: logistic-newton-mad, method: newton, psi: logistic, stop: {change: 1e-12, max-iter: 1000}}
`

func estimatorOf(t *testing.T, c results.Cell, label string) results.Estimator {
	t.Helper()
	for _, e := range c.Estimators {
		if e.Label == label {
			return e
		}
	}
	t.Fatalf("no estimator %s", label)
	return results.Estimator{}
}

// TestAuditThroughRun runs the audit end to end (run --audit-solvers) and
// checks what it must find: least squares has no stopping-rule error; a
// change tolerance of 1e-3 leaves Huber's IRLS estimate clearly more than
// 0.01 SE from its fixed point and 1e-12 less than 1e-6 SE; Newton on a
// smooth psi at a fixed scale converges with order about 2, with the MAD
// only about linearly.
func TestAuditThroughRun(t *testing.T) {
	st := parse(t, auditScenario)
	res, err := Run(context.Background(), st, Options{Replicates: 40, AuditSolvers: true})
	if err != nil {
		t.Fatal(err)
	}
	c := res.Cells[0]
	ls := estimatorOf(t, c, "ls").Convergence.StopError
	if ls == nil || !ls.Direct || ls.Audited != 40 || ls.Max != 0 || ls.OverCount != 0 {
		t.Errorf("ls: stop error %+v, want direct and exactly 0 on all 40 fits", ls)
	}
	loose := estimatorOf(t, c, "huber-loose").Convergence.StopError
	if loose == nil {
		t.Fatal("huber 1e-3: no stop error")
	}
	t.Logf("huber 1e-3: median %v, max %v SE; over 0.01 SE %v", loose.Median, loose.Max, loose.Over)
	// "Clearly above": the worst fit is three times past 0.01 SE (the
	// largest of these 40 fixed-seed fits: an order statistic, checked as
	// a property of these datasets, with no MCSE), and more than a quarter
	// of the fits are past it. OverCount is binomial over the fits: it
	// must reach the count that a rate of a quarter reaches with
	// probability below 0.001.
	_, over := binomialBounds(int(loose.Audited), 0.25, 0.001)
	if !(loose.Max > 0.03) || loose.OverCount < int64(over) {
		t.Errorf("huber 1e-3: stop error %+v, want a max above 0.03 SE and at least %d of %d fits past 0.01 SE", loose, over, loose.Audited)
	}
	// Every fit converged to a change of 1e-12, so each one's error is
	// far below 1e-6 SE: a property of every fit, not a rate.
	tight := estimatorOf(t, c, "huber-tight").Convergence.StopError
	if tight == nil || tight.Audited != 40 || !(tight.Max < 1e-6) {
		t.Errorf("huber 1e-12: stop error %+v, want every fit below 1e-6 SE", tight)
	}
	// The loose rule's advice is a tighter tolerance, at a cost in
	// iterations.
	if a, ok := results.AdviseStop(estimatorOf(t, c, "huber-loose")); !ok || !a.Tighten || !(a.Tolerance < 1e-3) || !(a.Iterations > 0) {
		t.Errorf("huber 1e-3: advice %+v, want a tighter change tolerance needing more iterations", a)
	}
	// The tolerance table agrees with the fits actually made: at the
	// loose rule's own tolerance it takes the iterations the loose fits
	// took (IRLS is deterministic and the tight fits pass the same
	// iterates): deterministic.
	hc := estimatorOf(t, c, "huber-tight").Convergence
	if len(hc.Tolerances) < 2 {
		t.Fatalf("huber 1e-12: %d tolerance rows, want the row of 1e-3 among them", len(hc.Tolerances))
	}
	if row := hc.Tolerances[1]; row.Tolerance != 1e-3 || row.MedianIterations != estimatorOf(t, c, "huber-loose").Convergence.MedianIterations {
		t.Errorf("tolerance row %+v: want 1e-3 at the loose fits' median iterations %v", row, estimatorOf(t, c, "huber-loose").Convergence.MedianIterations)
	}
	// Newton converges quadratically near a simple root when its Jacobian
	// is exact (common practice). Its order is read at the pair of steps
	// nearest the root, q +
	// ln C / ln Δ (estimators.Rate); the estimators package's test bounds
	// that bias by 3/|ln Δ| < 0.5 on these data, so the median over fits
	// lies within 0.5 of 2. These bounds, here and for the MAD and IRLS
	// below, are numerical properties of each fit, not estimates of a
	// rate or a mean: no MCSE enters, and the median of the 40 fixed-seed
	// fits is held to the bound each fit meets in the estimators package's
	// tests (order in (0.5, 1.5) with the MAD, a linear rate in (0, 1)).
	nw := estimatorOf(t, c, "logistic-newton").Convergence.Rate
	if nw == nil || nw.Kind != "order" || !(math.Abs(float64(nw.Median)-2) < 0.5) || nw.Note != "" {
		t.Errorf("newton, fixed scale: rate %+v, want an order within 0.5 of 2", nw)
	}
	mad := estimatorOf(t, c, "logistic-newton-mad").Convergence.Rate
	if mad == nil || !(mad.Median > 0.5 && mad.Median < 1.5) || !strings.Contains(mad.Note, "MAD") {
		t.Errorf("newton, MAD: rate %+v, want an order near 1 with the note on the MAD", mad)
	}
	ir := estimatorOf(t, c, "huber-tight").Convergence.Rate
	if ir == nil || ir.Kind != "linear" || !(ir.Median > 0 && ir.Median < 1) {
		t.Errorf("irls: rate %+v, want a linear rate in (0, 1)", ir)
	}
	var b strings.Builder
	if err := results.WriteTable(&b, res, 100); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(b.String(), "huber-loose (change 1e-3): stopping rule leaves the estimate") || !strings.Contains(b.String(), "tighten change to") {
		t.Errorf("the table does not lead with the audit's answer:\n%s", b.String())
	}
}

// rootsScenario has a clean cell and one where 15% of the rows are bad
// leverage points: there least squares and LAD sit near a second root of
// the bisquare's equations, which the S start and the truth avoid.
const rootsScenario = `
seed: 16
model:
  n: 40
  intercept: 0.3
  columns: [{name: volume, slope: 0.98, dist: levels, levels: [5, 10, 20, 50, 100]}]
noise: {dist: normal, scale: 0.15}
contamination:
  - {label: mislabelled, kind: bad-leverage, fraction: 0.15, at: 200, response: 19.9, spread: 0.3}
estimators:
  - {label: ls, method: ls}
  - {label: bisquare, method: irls, psi: bisquare, roots: true, solver-audit: true}
vary:
  contamination.mislabelled.fraction: [0, 0.15]
`

// TestRootsThroughRun checks that a run finds the two roots of the
// bisquare where the data have them, and none on clean data.
func TestRootsThroughRun(t *testing.T) {
	st := parse(t, rootsScenario)
	res, err := Run(context.Background(), st, Options{Replicates: 32})
	if err != nil {
		t.Fatal(err)
	}
	// The counts of searches with several roots are binomial over the 32
	// replicates. "Rare" on clean data: at most the count below which a
	// rate of a quarter falls with probability under 0.001 (here 0).
	// "Most" with bad leverage: at least the count above which a rate of a
	// half rises with probability under 0.001.
	rare, _ := binomialBounds(32, 0.25, 0.001)
	_, most := binomialBounds(32, 0.5, 0.001)
	clean := estimatorOf(t, res.Cells[0], "bisquare").Convergence.Roots
	if clean == nil || clean.Searched != 32 || clean.MultipleCount > int64(rare) {
		t.Errorf("clean cell: %+v, want 32 searches and several roots in at most %d", clean, rare)
	}
	bad := estimatorOf(t, res.Cells[1], "bisquare").Convergence.Roots
	if bad == nil || bad.Searched != 32 || bad.MultipleCount < int64(most) || len(bad.Starts) < 3 {
		t.Fatalf("bad leverage: %+v, want several roots in at least %d of 32 replicates", bad, most)
	}
	lad, s := bad.Starts[1], bad.Starts[2]
	if len(s.Bias) < 2 || len(lad.Bias) < 2 {
		t.Fatalf("gain bias missing: S %+v, LAD %+v", s, lad)
	}
	// The mislabelled runs put y ≈ 19.9 at x = 200, where the meter would
	// read 196: a root that fits them has a gain near 19.9/200, a bias of
	// about −0.88, far below 0.98. At the root near the truth those rows
	// have residuals of hundreds of σ and bisquare weight 0, so the
	// estimate is the M-estimate of the clean rows, whose normal errors
	// and odd psi make it unbiased (common practice): S's mean gain error
	// is 0 within 3 MCSE. LAD's must lie on the other root's side of the
	// midpoint between the roots, by 3 MCSE.
	mid := (19.9/200 - 0.98) / 2
	sb, lb := s.Bias[1], lad.Bias[1]
	if !(math.Abs(float64(sb.Value)) < 3*float64(sb.MCSE)) || !(float64(lb.Value)+3*float64(lb.MCSE) < mid) {
		t.Errorf("gain bias from S %v, from LAD %v: want S within 3 MCSE of 0 and LAD below %.3g by 3 MCSE", sb, lb, mid)
	}
	// Where there are several roots, the S start reaches the best one in
	// every replicate: a property of each such dataset, not a rate.
	if s.Best != bad.MultipleCount {
		t.Errorf("S start reached the best root in %d of %d replicates with several roots", s.Best, bad.MultipleCount)
	}
}

// TestAuditSameForAnySplit: the study's medians come from every fit's
// values, which travel in the partials, so 1 or 3 workers, 3 shards merged
// through their files, and an interrupted and resumed run give the same
// results, bit for bit.
func TestAuditSameForAnySplit(t *testing.T) {
	st := parse(t, rootsScenario)
	const reps = 96
	want := func(r *results.Results) []byte {
		r.Provenance = r.Provenance.WithoutRunDetails()
		b, _ := json.Marshal(r)
		return b
	}
	single, err := Run(context.Background(), st, Options{Replicates: reps, Workers: 1, AuditSolvers: true})
	if err != nil {
		t.Fatal(err)
	}
	ref := want(single)
	if !bytes.Contains(ref, []byte(`"stop_error"`)) || !bytes.Contains(ref, []byte(`"roots"`)) {
		t.Fatal("the results hold no solver study")
	}
	three, err := Run(context.Background(), st, Options{Replicates: reps, Workers: 3, AuditSolvers: true})
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(want(three), ref) {
		t.Error("3 workers differ from 1")
	}
	var parts []*Partial
	for s := 2; s >= 0; s-- {
		_, p, err := RunPartial(context.Background(), st, Options{Replicates: reps, Shard: s, Shards: 3, AuditSolvers: true})
		if err != nil {
			t.Fatal(err)
		}
		parts = append(parts, roundTripPartial(t, p))
	}
	merged, mst, err := MergePartials(parts, scenariosLimits())
	if err != nil {
		t.Fatal(err)
	}
	res, err := Summarise(mst, merged, single.Tool)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(want(res), ref) {
		t.Error("3 shards merged differ from the single run")
	}

	ctx, cancel := context.WithCancel(context.Background())
	var last *Partial
	_, _, err = RunPartial(ctx, st, Options{Replicates: reps, Workers: 1, AuditSolvers: true,
		Progress:   func(r ProgressReport) { cancel() },
		Checkpoint: func(p *Partial) error { last = p; return nil }})
	if err == nil || last == nil || last.Complete() {
		t.Fatalf("the run was not interrupted: %v", err)
	}
	back := roundTripPartial(t, last)
	// The flag is taken from the checkpoint.
	resumed, err := Run(context.Background(), st, Options{Replicates: reps, Resume: back})
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(want(resumed), ref) {
		t.Error("the resumed run differs from the uninterrupted one")
	}
	// A checkpoint without the audit cannot be resumed with it.
	_, plain, err := RunPartial(context.Background(), st, Options{Replicates: reps, Shard: 0, Shards: 2})
	if err != nil {
		t.Fatal(err)
	}
	_, err = Run(context.Background(), st, Options{Replicates: reps, Shard: 0, Shards: 2, Resume: roundTripPartial(t, plain), AuditSolvers: true})
	if err == nil || !strings.Contains(err.Error(), "--audit-solvers") {
		t.Errorf("resuming an unaudited checkpoint with the audit: %v, want a refusal naming --audit-solvers", err)
	}
	// Nor merged with audited shards.
	_, p1, err := RunPartial(context.Background(), st, Options{Replicates: reps, Shard: 1, Shards: 2, AuditSolvers: true})
	if err != nil {
		t.Fatal(err)
	}
	if _, _, err := MergePartials([]*Partial{plain, p1}, scenariosLimits()); err == nil || !strings.Contains(err.Error(), "--audit-solvers") {
		t.Errorf("merging audited and unaudited shards: %v, want a refusal naming --audit-solvers", err)
	}
}

// TestAuditOffLeavesResultsAlone: without the study the results have no
// trace of it (so results files and baselines are unchanged).
func TestAuditOffLeavesResultsAlone(t *testing.T) {
	st := parse(t, flowMeterLike)
	res, err := Run(context.Background(), st, Options{Replicates: 8})
	if err != nil {
		t.Fatal(err)
	}
	b, _ := json.Marshal(res)
	for _, key := range []string{"stop_error", `"rate":{"kind"`, "tolerances", `"roots"`} {
		if bytes.Contains(b, []byte(key)) {
			t.Errorf("results without the audit mention %s", key)
		}
	}
	if results.HasSolverStudy(res) || strings.Contains(string(csvOf(t, res)), "stop_error") {
		t.Error("results without the audit report a solver study")
	}
}

// TestAuditBudget: an audit too large to keep every fit's values is
// refused before any work, naming what to reduce. The context is
// cancelled from the start, so that if the refusal were lost the run
// would stop at once with context.Canceled rather than fit 300,000
// replicates.
func TestAuditBudget(t *testing.T) {
	st := parse(t, flowMeterLike)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	// 4 estimators × 2 coefficients: 4·(2 + 2 + 26) values per replicate,
	// so 300,000 replicates pass 2^25.
	_, err := Run(ctx, st, Options{Replicates: 300_000, AuditSolvers: true})
	if err == nil || !strings.Contains(err.Error(), "fewer replicates") {
		t.Errorf("got %v, want the audit refused for its size", err)
	}
}

// TestRootsStudyAllocatesNothing: with roots: true, a replicate (its
// draw, its fits, the root search and the tallies) allocates nothing once
// the worker's buffers have grown, so the search can run on every
// replicate. The warm-up fits the same replicates as the measured calls:
// the workspaces and the exact sums grow with the data (a sum's digits
// span the exponents of the values added), and only then is every
// replicate's storage in place.
func TestRootsStudyAllocatesNothing(t *testing.T) {
	st := parse(t, strings.Replace(rootsScenario, ", solver-audit: true", "", 1))
	plans, err := plan(st, 64)
	if err != nil {
		t.Fatal(err)
	}
	if err := planAudits(plans, false); err != nil {
		t.Fatal(err)
	}
	const runs = 20 // AllocsPerRun makes runs + 1 calls
	groups := groupCells(plans, 1)
	for g := range groups {
		w := newWorker(plans, &groups[g], 16)
		if w.aud == nil || w.aud.fits[len(w.aud.fits)-1].audit || !w.aud.fits[len(w.aud.fits)-1].roots {
			t.Fatalf("group %d: the bisquare is not planned for a root search alone", g)
		}
		r := 0
		step := func() {
			w.replicate(r)
			if w.err != nil {
				t.Fatal(w.err)
			}
			r = (r + 1) % (runs + 1)
		}
		for range runs + 1 {
			step()
		}
		if a := testing.AllocsPerRun(runs, step); a != 0 {
			t.Errorf("group %d: %v allocations per replicate, want 0", g, a)
		}
		if rt := w.tallies[0].ests[1].aud.roots; rt.searched != 2*(runs+1) || rt.failed != 0 {
			t.Errorf("group %d: %d searches (%d failed), want %d that ran", g, rt.searched, rt.failed, 2*(runs+1))
		}
	}
}

// TestAuditDecodeNamesEstimator: a partial whose solver study does not
// match the scenario is refused naming the cell and the estimator, by
// index and label.
func TestAuditDecodeNamesEstimator(t *testing.T) {
	plansOf := func(src string) []cellPlan {
		t.Helper()
		plans, err := plan(parse(t, src), 32)
		if err != nil {
			t.Fatal(err)
		}
		if err := planAudits(plans, false); err != nil {
			t.Fatal(err)
		}
		return plans
	}
	studied := plansOf(rootsScenario)
	plain := plansOf(strings.Replace(rootsScenario, ", roots: true, solver-audit: true", "", 1))
	tests := []struct {
		name     string
		from, to []cellPlan
	}{
		{"study in the partial only", studied, plain},
		{"study in the scenario only", plain, studied},
	}
	for _, tt := range tests {
		p := &Partial{}
		for i := range tt.from {
			p.raw = append(p.raw, tt.from[i].newTally().encode())
		}
		err := attach(p, tt.to)
		if err == nil || !strings.Contains(err.Error(), "cell 0: estimator 1 (bisquare): ") || !strings.Contains(err.Error(), "--audit-solvers") {
			t.Errorf("%s: got %v, want an error naming cell 0 and estimator 1 (bisquare)", tt.name, err)
		}
	}
}

// binomialBounds returns, for a count K of n trials with rate p, the
// largest count lo with P(K ≤ lo) < alpha and the smallest count hi with
// P(K ≥ hi) < alpha (exact binomial tails; lo is −1 and hi n + 1 when
// there is none): a count at most lo, or at least hi, rejects the rate p
// at level alpha, one-sided (common practice).
func binomialBounds(n int, p, alpha float64) (lo, hi int) {
	b := distuv.Binomial{N: float64(n), P: p}
	lo, hi = -1, n+1
	for k := 0; k <= n && b.CDF(float64(k)) < alpha; k++ {
		lo = k
	}
	for k := n; k >= 0 && 1-b.CDF(float64(k-1)) < alpha; k-- {
		hi = k
	}
	return lo, hi
}

// TestBinomialBounds checks the helper against tails summed term by term
// from the binomial probabilities, C(n, k) p^k (1 − p)^(n−k) (common
// practice): for n = 32, p = 1/2, P(K ≥ 26) ≈ 2.7e-4 while P(K ≥ 25) ≈
// 1.05e-3, and P(K ≤ 6) ≈ 2.7e-4 while P(K ≤ 7) ≈ 1.05e-3.
func TestBinomialBounds(t *testing.T) {
	tests := []struct {
		n      int
		p      float64
		lo, hi int
	}{
		{40, 0.25, 1, 20},
		{32, 0.25, 0, 17},
		{32, 0.5, 6, 26},
		{10, 0.5, 0, 10},
		{5, 0.5, -1, 6}, // no count of 5 fair trials is that rare
	}
	for _, tt := range tests {
		if lo, hi := binomialBounds(tt.n, tt.p, 0.001); lo != tt.lo || hi != tt.hi {
			t.Errorf("n %d, p %g: bounds %d, %d, want %d, %d", tt.n, tt.p, lo, hi, tt.lo, tt.hi)
		}
	}
}
