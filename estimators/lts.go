package estimators

import (
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/stat/distuv"
)

// This file computes least trimmed squares (LTS) regression: the
// coefficients β minimising the sum of the h smallest squared residuals,
// Q(β) = Σ_{i ≤ h} r²_(i)(β). The search is FAST-LTS, after Rousseeuw & Van
// Driessen (2006), "Computing LTS regression for large data sets", Data
// Mining and Knowledge Discovery 12:29-45: random elemental starts, a few
// concentration steps (C-steps) on each, then C-steps to a fixed point on the
// best few. The estimator itself is Rousseeuw (1984), "Least median of
// squares regression", JASA 79:871-880 (from memory). Above NestedMinRows
// rows the starts are made in nested blocks of the data (nested.go), as the
// published algorithm does for large n; the final concentration uses all
// rows.

// Default values of ltsSettings, used where a field is zero.
const (
	// ltsDefaultKeep is the number of candidates carried to full
	// concentration.
	ltsDefaultKeep = 10
	// ltsDefaultCSteps is the number of C-steps applied to every start
	// before the candidates are ranked.
	ltsDefaultCSteps = 2
	// ltsDefaultMaxSteps caps the C-steps of each kept candidate.
	ltsDefaultMaxSteps = 100
	// ltsAttemptsPerSubset bounds the draws: at most this many times
	// Subsets draws are made while looking for starts of full rank.
	ltsAttemptsPerSubset = 50
)

// ltsConsistency returns the factor c that makes sqrt(Q/h)·c consistent for
// σ at the normal model when a fraction alpha = h/n of the residuals is
// kept: c = 1/sqrt(E[Z² | |Z| ≤ q]) with q = Φ⁻¹((1+α)/2), where
// E[Z² | |Z| ≤ q] = (1/α)∫_{−q}^{q} z²φ(z) dz = (α − 2qφ(q))/α (common
// practice). No small-sample correction is applied. For alpha ≥ 1 nothing is
// trimmed and c = 1.
func ltsConsistency(alpha float64) float64 {
	if alpha >= 1 {
		return 1
	}
	q := distuv.UnitNormal.Quantile((1 + alpha) / 2)
	m2 := (alpha - 2*q*distuv.UnitNormal.Prob(q)) / alpha
	return 1 / math.Sqrt(m2)
}

// ltsSettings are the knobs of FAST-LTS; zero values mean the documented
// defaults.
type ltsSettings struct {
	H        int // observations kept; 0 means ⌊(n+p+1)/2⌋ (maximal breakdown point)
	Subsets  int // random elemental starts; 0 means ElementalSubsets(p)
	Keep     int // best candidates carried to full concentration; 0 means 10
	CSteps   int // concentration steps applied to every start before selecting; 0 means 2
	MaxSteps int // cap on concentration steps for the kept candidates; 0 means 100
}

// withDefaults returns s with zero fields replaced by their defaults for an
// n×p problem.
func (s ltsSettings) withDefaults(n, p int) ltsSettings {
	if s.H == 0 {
		s.H = Resampling{}.LTSKeep(n, p)
	}
	if s.Subsets == 0 {
		s.Subsets = ElementalSubsets(p)
	}
	if s.Keep == 0 {
		s.Keep = ltsDefaultKeep
	}
	if s.CSteps == 0 {
		s.CSteps = ltsDefaultCSteps
	}
	if s.MaxSteps == 0 {
		s.MaxSteps = ltsDefaultMaxSteps
	}
	return s
}

// check reports an error if s, with its defaults filled in, does not suit an
// n×p problem: H must lie in [p, n] and the counts must be positive.
func (s ltsSettings) check(n, p int) error {
	if p < 1 || n < p {
		return fmt.Errorf("LTS needs at least as many rows as columns and one column, have %d×%d", n, p)
	}
	d := s.withDefaults(n, p)
	switch {
	case d.H < p || d.H > n:
		return fmt.Errorf("LTS keeps h = %d observations; h must lie between p = %d and n = %d", d.H, p, n)
	case d.Subsets < 1:
		return fmt.Errorf("LTS subsets %d must be ≥ 0 (0 means the default)", s.Subsets)
	case d.Keep < 1:
		return fmt.Errorf("LTS keep %d must be ≥ 0 (0 means the default)", s.Keep)
	case d.CSteps < 1:
		return fmt.Errorf("LTS C-steps %d must be ≥ 0 (0 means the default)", s.CSteps)
	case d.MaxSteps < 1:
		return fmt.Errorf("LTS step cap %d must be ≥ 0 (0 means the default)", s.MaxSteps)
	}
	return nil
}

// ltsWork holds the buffers of the LTS solver; zero value ready; grows to the
// largest shape seen.
type ltsWork struct {
	n, p, h int

	idx    []int     // n, row indices permuted by the partial Fisher–Yates draws
	rows   []int     // n+1, the rows of lw.cur in order (subsetRows)
	cur    []bool    // n, membership of the current h-subset
	prev   []bool    // n, membership of the previous h-subset
	r2     []float64 // n, squared residuals
	sel    []float64 // n, a copy of r2 reordered by the selection
	qa     []float64 // n×p, column-major rows of a QR fit
	qy     []float64 // n, right-hand side of a QR fit
	rdiag  []float64 // p, diagonal of R of a QR fit
	cscale []float64 // p, column scales of a QR fit
	gr     []float64 // p×p, R of the rows of a start (row-major upper triangle)
	gz     []float64 // p, the row being rotated into gr, then scratch
	gss    []float64 // p, column sums of squares of the rows in gr
	trial  []float64 // p, coefficients of a refit

	nKept    int       // candidates held in candObj and candBeta
	candObj  []float64 // keep, objectives of the candidates, ascending
	candBeta []float64 // keep×p, their coefficients
	candSt   []Status  // keep, how each kept candidate's concentration ended

	lastT float64 // the h-th smallest squared residual of the last evaluate, 0 if none
	// Refits by updated normal equations, for large n (refitGram).
	useGram     bool      // refit updates the normal equations instead of QR
	gramOK      bool      // gram and gy hold the sums over the rows of gset
	gramUpdates int       // updates since gram was last summed afresh
	gram        []float64 // p×p, Σ x_i x_iᵀ over gset (upper triangle)
	gy          []float64 // p, Σ x_i y_i over gset
	gset        []bool    // n, the rows summed in gram
	gm          []float64 // p×p, scratch for the factor

	nest *nestedWork // nested subsampling for large n, also for S (nested.go)
	col  *colWork    // columns and their products for the searches (colkernel.go)
	sc   *colWork    // col while starts runs on the design it holds, else nil

	start ltsStartWork // C-steps of the starts by normal equations (ltsstart.go)
}

// reserve sizes the buffers for an n×p problem keeping h rows and up to keep
// candidates.
func (lw *ltsWork) reserve(n, p, h, keep int) {
	lw.n, lw.p, lw.h = n, p, h
	grow(&lw.idx, n)
	grow(&lw.rows, n+1)
	grow(&lw.cur, n)
	grow(&lw.prev, n)
	grow(&lw.r2, n)
	grow(&lw.sel, n)
	grow(&lw.qa, n*p)
	grow(&lw.qy, n)
	for _, s := range []*[]float64{&lw.rdiag, &lw.cscale, &lw.gz, &lw.gss, &lw.trial} {
		grow(s, p)
	}
	grow(&lw.gr, p*p)
	grow(&lw.candObj, keep)
	grow(&lw.candBeta, keep*p)
	grow(&lw.candSt, keep)
	lw.nKept = 0
	lw.lastT = 0
	lw.useGram, lw.gramOK = false, false
	lw.start.redone, lw.start.refitted, lw.start.resolved = 0, 0, 0
}

// reserveGram sizes the buffers of refitGram and turns it on.
func (lw *ltsWork) reserveGram() {
	n, p := lw.n, lw.p
	if cap(lw.gram) < p*p {
		lw.gram, lw.gm = make([]float64, p*p), make([]float64, p*p)
	}
	if cap(lw.gy) < p {
		lw.gy = make([]float64, p)
	}
	if cap(lw.gset) < n {
		lw.gset = make([]bool, n)
	}
	lw.gram, lw.gm, lw.gy, lw.gset = lw.gram[:p*p], lw.gm[:p*p], lw.gy[:p], lw.gset[:n]
	lw.useGram, lw.gramOK = true, false
}

// fit computes the LTS estimate of y on x (n×p row-major blas64.General as in
// workspace.go) into beta (len p), drawing elemental subsets from rng (a
// *rand.Rand from math/rand/v2; the caller seeds it per fit, so the result is
// deterministic for a given seed). It returns the raw LTS objective (sum of
// the h smallest squared residuals), a consistency-corrected scale estimate,
// the C-steps taken by the returned candidate (its first s.CSteps and its
// final concentration; as for the S-estimate, the work of the losing starts
// is not counted), and a Status.
//
// The search (Rousseeuw & Van Driessen (2006), "Computing LTS regression for
// large data sets", Data Mining and Knowledge Discovery 12:29-45):
//
//  1. Up to s.Subsets starts: p distinct rows drawn uniformly (a partial
//     Fisher–Yates shuffle of an index buffer reset to the identity, so a
//     start depends only on rng) and the exact fit through them. When those
//     rows are numerically rank deficient, further random rows are added, as
//     in the published algorithm, until they have full rank, but never more
//     than h rows; a draw that reaches h rows without full rank is discarded
//     and another is made, up to 50·Subsets draws in all.
//  2. A C-step takes the h rows with the smallest squared residuals (ties
//     go to the lower row index) and refits least squares to them by
//     Householder QR; Q never increases under a C-step. Every start gets
//     s.CSteps of them.
//  3. The s.Keep starts with the smallest Q (equal objectives are counted
//     once, since they come from the same coefficients) are concentrated
//     further until a fixed point or s.MaxSteps C-steps, and the one with
//     the smallest Q is returned.
//
// The scale is sqrt(Q/h)·ltsConsistency(h/n).
//
// The Status is that of the returned candidate: Solved when its
// concentration reached a fixed point (the h-subset stopped changing, or a
// C-step no longer lowered the objective; see concentrate), IterationLimit
// if MaxSteps was hit first. The failures:
//
//   - SingularDesign: x itself is numerically rank deficient (the same QR
//     test least squares applies), so no subset of rows can have full rank
//     and no number of draws would help; or every start met a singular
//     h-subset in its first C-steps (nothing is fitted in these two cases);
//     or every kept candidate met one later, when beta holds the best of
//     them.
//   - ElementalFailure: x has full rank, but none of the 50·Subsets draws,
//     each extended up to h rows, had full rank. It needs a design whose
//     rank rests on very few rows (for example indicator columns that are
//     nonzero on one row each) and a small Subsets.
//   - NonFinite: x or y holds NaN or Inf values, or every start led to
//     non-finite residuals.
//
// When nothing is fitted, beta, the objective and the scale are NaN.
//
// fit panics if the dimensions of y or beta do not match x or if s fails
// check; callers validate settings with check first. After the first call
// with a given shape and Keep, fit allocates nothing.
func (lw *ltsWork) fit(x blas64.General, y, beta []float64, rng *rand.Rand, s ltsSettings) (objective, scale float64, steps int, st Status) {
	n, p := x.Rows, x.Cols
	if len(y) != n || len(beta) != p {
		panic(fmt.Sprintf("lts: y has %d values and beta %d for a %d×%d design", len(y), len(beta), n, p))
	}
	if err := s.check(n, p); err != nil {
		panic("lts: " + err.Error())
	}
	s = s.withDefaults(n, p)
	h := s.H
	lw.reserve(n, p, h, s.Keep)
	fail := func(st Status) (float64, float64, int, Status) {
		for j := range beta {
			beta[j] = math.NaN()
		}
		return math.NaN(), math.NaN(), steps, st
	}
	if !lw.finite(x, y) {
		return fail(NonFinite)
	}
	if !lw.fullRank(x) {
		return fail(SingularDesign)
	}

	// Starts and their first C-steps: on all the rows, or for large n in
	// nested blocks of them (nested.go).
	var starts, firstSteps int
	var singular bool
	if useNested(n, p) {
		lw.reserveGram()
		starts, firstSteps, singular = lw.nestedStarts(x, y, rng, s)
	}
	if lw.nKept == 0 {
		// The nested starts kept nothing: starts on all rows, counted
		// with the nested ones for the status.
		more, sing := lw.starts(x, y, rng, s.Subsets, s.CSteps, s.Keep)
		starts, singular = starts+more, singular || sing
		firstSteps = s.CSteps
	}
	switch {
	case starts == 0:
		return fail(ElementalFailure)
	case lw.nKept == 0 && singular:
		return fail(SingularDesign)
	case lw.nKept == 0:
		return fail(NonFinite)
	}

	// Concentration of the kept candidates to a fixed point.
	best := -1
	for c := 0; c < lw.nKept; c++ {
		b := lw.candBeta[c*p : (c+1)*p]
		var taken int
		lw.candObj[c], lw.candSt[c], taken = lw.concentrate(x, y, b, s.MaxSteps)
		if best < 0 || lw.better(c, best) {
			best, steps = c, firstSteps+taken
		}
	}
	copy(beta, lw.candBeta[best*p:(best+1)*p])
	objective = lw.candObj[best]
	scale = math.Sqrt(objective/float64(h)) * ltsConsistency(float64(h)/float64(n))
	return objective, scale, steps, lw.candSt[best]
}

// starts draws up to subsets elemental starts (at most
// ltsAttemptsPerSubset·subsets draws), applies csteps C-steps to each and
// offers the results to the kept list (keep places). It returns the number
// of starts drawn and whether some start met a singular h-subset.
func (lw *ltsWork) starts(x blas64.General, y []float64, rng *rand.Rand, subsets, csteps, keep int) (starts int, singular bool) {
	lw.sc = lw.columns(x)
	if lw.sc != nil {
		lw.loadStart(lw.sc, y)
	}
	for attempts := 0; starts < subsets && attempts < ltsAttemptsPerSubset*subsets; attempts++ {
		if lw.draw(x, y, rng) == 0 {
			continue
		}
		starts++
		var sing bool
		if lw.startFast() {
			sing = lw.startSteps(x, y, lw.trial, csteps, keep)
			lw.start.giveUp(starts)
		} else {
			sing = lw.offerSteps(x, y, lw.trial, csteps, keep)
		}
		if sing {
			singular = true
		}
	}
	lw.sc = nil
	return starts, singular
}

// offerSteps applies csteps C-steps to the coefficients b (overwritten) and
// offers the result to the kept list. It reports whether a C-step met a
// singular h-subset (the start is then dropped); a start with non-finite
// residuals is dropped too.
func (lw *ltsWork) offerSteps(x blas64.General, y, b []float64, csteps, keep int) (singular bool) {
	obj, ok := lw.evaluate(x, y, b)
	for k := 0; ok && k < csteps; k++ {
		if !lw.refit(x, y, b) {
			return true
		}
		obj, ok = lw.evaluate(x, y, b)
	}
	if ok {
		lw.offer(obj, b, keep)
	}
	return false
}

// better reports whether kept candidate a is preferred to b: a candidate
// whose concentration ended normally (Solved or IterationLimit) beats one
// that failed; otherwise the smaller objective wins, and on a tie the
// earlier candidate.
func (lw *ltsWork) better(a, b int) bool {
	okA := lw.candSt[a] == Solved || lw.candSt[a] == IterationLimit
	okB := lw.candSt[b] == Solved || lw.candSt[b] == IterationLimit
	if okA != okB {
		return okA
	}
	return lw.candObj[a] < lw.candObj[b]
}

// concentrate applies C-steps to the coefficients b until they reach a fixed
// point or maxSteps C-steps have been taken, and returns the objective at
// the final b, how the concentration ended and the C-steps taken. A fixed
// point (Solved) is reached when the h-subset stops changing, or when a
// C-step fails to lower the objective at all; b then keeps the better of the
// last two coefficient vectors. In exact arithmetic and without tied
// residuals the two rules coincide (a C-step that changes the subset lowers
// the objective strictly); in floating point the second stops the subset
// flipping for ever among rows whose residuals differ only by rounding, as
// happens when more than h rows are fitted exactly. On failure b keeps the
// last coefficients whose residuals were finite.
//
// With refits by normal equations (useGram, large n) the fixed point found
// with them is polished by C-steps with QR refits, so that the returned
// coefficients are the accurate least-squares fit of their h-subset; at a
// fixed point that takes one refit.
func (lw *ltsWork) concentrate(x blas64.General, y, b []float64, maxSteps int) (float64, Status, int) {
	if !lw.useGram {
		return lw.concentrateSteps(x, y, b, maxSteps)
	}
	obj, st, taken := lw.concentrateSteps(x, y, b, maxSteps)
	if st != Solved || taken >= maxSteps {
		return obj, st, taken
	}
	lw.useGram = false
	obj, st, more := lw.concentrateSteps(x, y, b, maxSteps-taken)
	lw.useGram = true
	return obj, st, taken + more
}

// concentrateSteps is concentrate with the current kind of refit.
func (lw *ltsWork) concentrateSteps(x blas64.General, y, b []float64, maxSteps int) (float64, Status, int) {
	obj, ok := lw.evaluate(x, y, b)
	if !ok {
		return obj, NonFinite, 0
	}
	for k := 0; k < maxSteps; k++ {
		if !lw.refit(x, y, lw.trial) {
			return obj, SingularDesign, k
		}
		lw.cur, lw.prev = lw.prev, lw.cur
		o, ok := lw.evaluate(x, y, lw.trial)
		if !ok {
			return obj, NonFinite, k + 1
		}
		if ltsSameSubset(lw.cur, lw.prev) {
			copy(b, lw.trial)
			return o, Solved, k + 1
		}
		if o >= obj {
			// No progress: rounding or tied residuals moved the subset
			// among equally good ones. Keep the better coefficients.
			return obj, Solved, k + 1
		}
		copy(b, lw.trial)
		obj = o
	}
	return obj, IterationLimit, maxSteps
}

// ltsSameSubset reports whether two membership masks are equal.
func ltsSameSubset(a, b []bool) bool {
	for i, v := range a {
		if v != b[i] {
			return false
		}
	}
	return true
}

// offer adds a candidate with objective obj and coefficients b to the kept
// list, which holds the keep smallest objectives seen so far in ascending
// order. A candidate whose objective equals one already kept is dropped: in
// practice it has the same coefficients, from the same h-subset. The status
// of the new entry is NotRun until concentrate sets it.
func (lw *ltsWork) offer(obj float64, b []float64, keep int) {
	p := lw.p
	pos := lw.nKept
	for pos > 0 && lw.candObj[pos-1] > obj {
		pos--
	}
	if pos >= keep || (pos > 0 && lw.candObj[pos-1] == obj) {
		return
	}
	if lw.nKept < keep {
		lw.nKept++
	}
	for c := lw.nKept - 1; c > pos; c-- {
		lw.candObj[c] = lw.candObj[c-1]
		copy(lw.candBeta[c*p:(c+1)*p], lw.candBeta[(c-1)*p:c*p])
	}
	lw.candObj[pos] = obj
	copy(lw.candBeta[pos*p:(pos+1)*p], b)
	lw.candSt[pos] = NotRun
}

// finite reports whether every value of x and y is finite.
func (lw *ltsWork) finite(x blas64.General, y []float64) bool {
	for i := 0; i < lw.n; i++ {
		for _, v := range row(x, i) {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return false
			}
		}
		if math.IsNaN(y[i]) || math.IsInf(y[i], 0) {
			return false
		}
	}
	return true
}

// fullRank reports whether x passes the rank test of householderFactor, the
// test least squares applies to the whole design.
func (lw *ltsWork) fullRank(x blas64.General) bool {
	n := lw.n
	for i := 0; i < n; i++ {
		for j, v := range row(x, i) {
			lw.qa[j*n+i] = v
		}
	}
	return householderFactor(lw.qa, n, lw.p, lw.rdiag, lw.cscale)
}

// draw puts into lw.trial the fit through a random elemental subset: p
// distinct rows drawn uniformly by a partial Fisher–Yates shuffle of lw.idx,
// which is first reset to the identity so that the draw depends only on rng.
// While the rows drawn are numerically rank deficient, further random rows
// are drawn in the same way (the fit through them is then least squares), up
// to h rows. The rank is followed cheaply by rotating each new row into a
// triangular factor with Givens rotations, judged by the rule of
// householderFactor (column-equilibrated diagonal of R above m·eps times its
// largest element); only when that holds is the Householder fit made. draw
// returns the number of rows used, the first ones of lw.idx, or 0 when h
// rows did not reach full rank.
func (lw *ltsWork) draw(x blas64.General, y []float64, rng *rand.Rand) int {
	n, p, h := lw.n, lw.p, lw.h
	idx := lw.idx
	for i := range idx {
		idx[i] = i
	}
	clear(lw.gr)
	clear(lw.gss)
	// While starts runs with the column products, a start of p rows is
	// first solved by LU (luStart), or else the response is rotated along,
	// so that it can be solved from the factor (givensSolve); startSteps
	// then proves either good enough (ltsstart.go).
	var qy []float64
	if lw.startFast() {
		qy = lw.start.gqy[:p]
		clear(qy)
	}
	lw.start.approx = false
	for m := 0; m < h; m++ {
		j := m + rng.IntN(n-m)
		idx[m], idx[j] = idx[j], idx[m]
		xi := row(x, idx[m])
		for k, v := range xi {
			lw.gz[k] = v
			lw.gss[k] += v * v
		}
		rows := m + 1
		switch {
		case qy == nil || rows > p:
			// givensSolve solves only starts of p rows, so the response
			// is not rotated along here.
			ltsGivensAddRow(lw.gr, lw.gz, p, nil, 0)
		case rows < p:
			// The rotations wait: an LU factorisation of the first p
			// rows may prove the rank test passed and solve the start.
			continue
		default:
			if lw.luStart(x, y) {
				return rows
			}
			// Not proved: the p rows are rotated in, as they would have
			// been one by one.
			for _, i := range idx[:p] {
				copy(lw.gz, row(x, i))
				ltsGivensAddRow(lw.gr, lw.gz, p, qy, y[i])
			}
		}
		if rows < p || !lw.givensFullRank(rows) {
			continue
		}
		if rows == p && qy != nil && lw.givensSolve() {
			return rows
		}
		a := lw.qa[:rows*p]
		for k, i := range idx[:rows] {
			for jj, v := range row(x, i) {
				a[jj*rows+k] = v
			}
			lw.qy[k] = y[i]
		}
		if householderSolve(a, rows, p, lw.qy[:rows], lw.trial, lw.rdiag, lw.cscale) {
			return rows
		}
	}
	return 0
}

// ltsGivensAddRow updates the upper triangular p×p factor r (row-major,
// upper triangle used) of a set of rows to include the row z, which it
// overwrites: Givens rotations zero z against the diagonal of r from left to
// right. Unless qy is nil, the same rotations apply to qy (Qᵀ times the
// responses of the rows) and the response zy of the new row.
func ltsGivensAddRow(r, z []float64, p int, qy []float64, zy float64) {
	for k := 0; k < p; k++ {
		zk := z[k]
		if zk == 0 {
			continue
		}
		rk := r[k*p : (k+1)*p]
		d := ltsHypot(rk[k], zk)
		c, s := rk[k]/d, zk/d
		rk[k] = d
		for j := k + 1; j < p; j++ {
			t := rk[j]
			rk[j] = c*t + s*z[j]
			z[j] = c*z[j] - s*t
		}
		if qy != nil {
			t := qy[k]
			qy[k] = c*t + s*zy
			zy = c*zy - s*t
		}
	}
}

// ltsHypot returns math.Hypot(p, q), bit for bit: the same special cases
// and the same operations, max·√(1 + (min/max)²), as the standard library's
// portable version and its amd64 assembly, but inlined into the rotations.
func ltsHypot(p, q float64) float64 {
	p, q = math.Abs(p), math.Abs(q)
	if math.IsInf(p, 1) || math.IsInf(q, 1) {
		return math.Inf(1)
	}
	if p != p || q != q {
		return math.NaN()
	}
	if p < q {
		p, q = q, p
	}
	if p == 0 {
		return 0
	}
	q = q / p
	return p * math.Sqrt(1+float64(q*q))
}

// givensFullRank applies the rank test of householderFactor to the factor in
// lw.gr of m rows: with the columns scaled to unit norm over those rows (which
// scales the columns of R alike), every diagonal element must exceed m·eps
// times the largest. It uses lw.gz as scratch.
func (lw *ltsWork) givensFullRank(m int) bool {
	p := lw.p
	var dmax float64
	for k := 0; k < p; k++ {
		if !(lw.gss[k] > 0) {
			return false
		}
		d := math.Abs(lw.gr[k*p+k]) / math.Sqrt(lw.gss[k])
		lw.gz[k] = d
		dmax = math.Max(dmax, d)
	}
	tol := float64(m) * epsilon * dmax
	for _, d := range lw.gz[:p] {
		if !(d > tol) {
			return false
		}
	}
	return true
}

// ltsWindowRows is the smallest n at which kth first looks near the last
// threshold; below it one selection over all rows is as quick.
const ltsWindowRows = 1000

// ltsWindow is the relative half-width of the window kth searches around
// the last threshold.
const ltsWindow = 0.05

// kth returns the h-th smallest value of r2 (using sel as scratch), by
// selectFast. The value does not depend on how it is found. For large n, successive C-steps
// move the threshold little, so kth first counts the values below a window
// around the last threshold and, when the h-th falls inside the window,
// selects among the window's values only; otherwise (or for small n) it
// selects among all of them.
func (lw *ltsWork) kth(r2, sel []float64) float64 {
	k := lw.h - 1
	if len(r2) >= ltsWindowRows && lw.lastT > 0 {
		lo, hi := lw.lastT*(1-ltsWindow), lw.lastT*(1+ltsWindow)
		below, in := 0, 0
		for _, v := range r2 {
			// Every value is written at sel[in]; only one inside the
			// window moves in on, so the loop has no data-dependent
			// branch.
			sel[in] = v
			isBelow, isAbove := b2i(v < lo), b2i(hi < v)
			below += isBelow
			in += 1 - isBelow - isAbove
		}
		if below <= k && k < below+in {
			t := selectFast(sel[:in], k-below)
			lw.lastT = t
			return t
		}
	}
	copy(sel, r2)
	t := selectFast(sel, k)
	lw.lastT = t
	return t
}

// refit writes to b the least-squares fit to the rows marked in lw.cur,
// taken in row order, by Householder QR. It reports false, leaving b
// unchanged, when those rows are numerically rank deficient.
//
// With useGram set it refits by refitGram instead.
func (lw *ltsWork) refit(x blas64.General, y, b []float64) bool {
	if lw.useGram {
		return lw.refitGram(x, y, b)
	}
	return lw.refitQR(x, y, b)
}

// refitQR is refit by Householder QR.
func (lw *ltsWork) refitQR(x blas64.General, y, b []float64) bool {
	h, p := lw.h, lw.p
	a, qy := lw.qa[:h*p], lw.qy[:h]
	for k, i := range lw.subsetRows() {
		for j, v := range row(x, i) {
			a[j*h+k] = v
		}
		qy[k] = y[i]
	}
	if !householderSolve(a, h, p, qy, lw.gz, lw.rdiag, lw.cscale) {
		return false
	}
	copy(b, lw.gz)
	return true
}

// ltsGramRebuild bounds the updates of the normal equations between sums
// afresh, which bounds the rounding that adding and removing rows
// accumulates.
const ltsGramRebuild = 16

// refitGram is refit by the normal equations XᵀX b = Xᵀy of the rows in
// lw.cur, solved by equilibrated Cholesky. The sums are kept between
// refits and updated by the rows that entered or left the subset, which
// near convergence are a few, so that a C-step on large n costs little more
// than its residuals; they are summed afresh when more than h/8 rows
// changed or after ltsGramRebuild updates. When the normal equations are
// too ill-conditioned (choleskySolve refuses them) it refits by QR.
func (lw *ltsWork) refitGram(x blas64.General, y, b []float64) bool {
	n, p, h := lw.n, lw.p, lw.h
	cur, set := lw.cur[:n], lw.gset[:n]
	changes := 0
	if lw.gramOK {
		for i, in := range cur {
			if in != set[i] {
				changes++
			}
		}
	}
	switch {
	case !lw.gramOK || 8*changes > h || lw.gramUpdates >= ltsGramRebuild:
		clear(lw.gram)
		clear(lw.gy)
		for i, in := range cur {
			set[i] = in
			if in {
				lw.gramAdd(row(x, i), y[i], 1)
			}
		}
		lw.gramOK, lw.gramUpdates = true, 0
	case changes > 0:
		for i, in := range cur {
			if in == set[i] {
				continue
			}
			set[i] = in
			w := -1.0
			if in {
				w = 1
			}
			lw.gramAdd(row(x, i), y[i], w)
		}
		lw.gramUpdates++
	}
	copy(lw.gm, lw.gram)
	sol := lw.gz[:p]
	copy(sol, lw.gy)
	if !choleskySolve(lw.gm, p, sol, lw.cscale) {
		return lw.refitQR(x, y, b)
	}
	for _, v := range sol {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return lw.refitQR(x, y, b)
		}
	}
	copy(b, sol)
	return true
}

// gramAdd adds w·x xᵀ to lw.gram (upper triangle) and w·y·x to lw.gy.
func (lw *ltsWork) gramAdd(xi []float64, yi, w float64) {
	p := lw.p
	g := lw.gram[:p*p]
	for k, v := range xi {
		a := w * v
		lw.gy[k] += a * yi
		for l := k; l < p; l++ {
			g[k*p+l] += a * xi[l]
		}
	}
}
