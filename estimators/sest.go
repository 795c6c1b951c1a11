package estimators

import (
	"math"

	"gonum.org/v1/gonum/blas/blas64"

	"github.com/rhomark/rhomark/psi"
)

// The S-estimator minimises an M-scale s(β) of the residuals, the solution
// of (1/d) Σ rho(r_i/s) = b with rho the bisquare, b = E[rho(Z)] at the
// normal and d = n (Rousseeuw & Yohai (1984), "Robust regression by means
// of S-estimators", Lecture Notes in Statistics 26:256-272) or, as a
// small-sample correction, d = n − p (Resampling.SDivisor). It is computed by
// fast-S (Salibian-Barrera & Yohai (2006), "A fast algorithm for
// S-regression estimates", J. Comput. Graph. Statist. 15:414-427): each of
// many random elemental subsets gives an exact fit, refined by two
// I-steps (an IRLS step with bisquare weights at the current scale, then one
// update of the scale); candidates whose residuals cannot beat the current
// best scales are skipped without solving for their scale; the best few are
// refined to convergence (by Newton steps guarded by I-steps, see sRefine)
// and the one with the smallest scale wins.

// Fast-S settings (Salibian-Barrera & Yohai 2006, from memory, except the
// stopping rule of the refinement and the rounds, which are ours).
const (
	sRefineSteps = 2 // I-steps applied to every elemental start
	sDefaultKeep = 5 // candidates refined to convergence
	// sMaxRefine caps the refinement steps of one candidate. Ordinary
	// data need 3 or 4 (see sScaleTol), but where about half the rows lie
	// on one hyperplane, as after replacing n/2 − p + 1 rows by one point,
	// the minimum of the scale sits at a kink (a residual at the rejection
	// point c·s) and the steps converge sublinearly, the change in the
	// coefficients falling like 1/k²: a breakdown experiment at n = 40,
	// p = 3 met the change rule after 580 steps.
	sMaxRefine = 1000
	// sRefineTol stops the refinement of a candidate when an I-step
	// changes the coefficients by at most this fraction of their norm.
	sRefineTol = 1e-10
	// sScaleTol stops it when a step lowers the M-scale by at most this
	// fraction. The scale is minimised, so it settles quadratically in
	// the coefficients' error: I-steps alone, contracting by about
	// 1 − E[psi']/E[w] ≈ 0.72 per step for the 50% bisquare at the normal,
	// reach it in some 35 steps where a change in coefficients below 1e-10
	// takes some 60; Newton steps (sNewtonStep) reach it in 3 or 4.
	sScaleTol = 1e-12
	// sPolishTol and sPolishSteps bound the polish of the winning
	// candidate (sPolish): it stops when a step changes the coefficients
	// by at most the fraction sPolishTol, or after sPolishSteps steps.
	// Newton steps from a settled scale take one or two. sPolishSlack is
	// the relative rise of the M-scale a polish step may make and still be
	// taken: at the minimum the scale is flat to rounding.
	sPolishTol   = 1e-12
	sPolishSteps = 60
	sPolishSlack = 1e-14
	// sMaxRounds bounds the rounds of drawing: a round is drawn again,
	// admitting only candidates with a larger scale than those dropped,
	// when every kept candidate of the last round was dropped because its
	// I-step met a singular weighted design.
	sMaxRounds = 4
	// sNewtonRefusals: after this many Newton steps refused (no positive
	// definite Jacobian, or no lower scale), a candidate is refined by
	// I-steps alone.
	sNewtonRefusals = 3
	// sZeroTol: a residual is zero to rounding when it is at most this
	// fraction of the sizes it was computed from (see roundingZeros).
	sZeroTol       = 1e-10
	scaleMaxSteps  = 500
	scaleRelTol    = 1e-12
	subsetAttempts = 50 // draws allowed per requested subset, over a round
)

// sConsistency returns b = E[rho_c(Z)] for the bisquare with constant c,
// cached in the workspace (quadrature is costly next to one fit).
func (ws *Workspace) sConsistency(c float64) float64 {
	if ws.sC != c || ws.sB == 0 {
		ws.sC, ws.sB = c, psi.ScaleConsistency(psi.Bisquare{C: c})
	}
	return ws.sB
}

// meanRho returns (1/d) Σ rho(r_i/s) for the bisquare psi. The loop is
// psi.Bisquare.Rho written out with its constant C²/6 formed once, in the
// same order of operations, so the sum is bit-for-bit that of calling Rho
// (TestMeanRhoMatchesRho).
func meanRho(psi psi.Bisquare, r []float64, s, d float64) float64 {
	c := psi.C
	top := c * c / 6
	var sum float64
	for _, v := range r {
		u := v / s
		if math.Abs(u) >= c {
			sum += top
			continue
		}
		w := u / c
		t := 1 - w*w
		sum += top * (1 - t*t*t)
	}
	return sum / d
}

// mScale solves (1/d) Σ rho(r_i/s) = b for s by the fixed-point iteration
// s ← s·√(mean rho(r/s)/b), from s0 > 0. The iteration converges
// monotonically for a bounded rho. It returns 0 if s0 is 0.
func mScale(psi psi.Bisquare, r []float64, b, d, s0 float64) float64 {
	s := s0
	if s == 0 {
		return 0
	}
	for k := 0; k < scaleMaxSteps; k++ {
		next := s * math.Sqrt(meanRho(psi, r, s, d)/b)
		if math.Abs(next-s) <= scaleRelTol*s || next == 0 || math.IsNaN(next) {
			return next
		}
		s = next
	}
	return s
}

// iStep applies one fast-S I-step to beta at scale s: an IRLS step with
// bisquare weights, then the residuals. It reports false when the weighted
// system has no solution (the candidate is dropped). Because rho(√t) is
// concave in t for the bisquare, the step does not raise Σ rho(r_i/s), so
// the M-scale of the new residuals is at most s.
func (ws *Workspace) iStep(psi psi.Bisquare, x blas64.General, y, beta []float64, s float64) bool {
	if ws.evaluateBisquare(psi, s) == 0 {
		return false
	}
	ws.psiSums(x)
	ws.normalMatrix(x)
	var it Iteration
	if _, ok := ws.weightedStep(x, s, &it); !ok {
		return false
	}
	for j := range beta {
		beta[j] += ws.delta[j]
	}
	ws.residuals(x, y, beta)
	return true
}

// sNewtonStep takes a Newton step for the S-estimate from beta at its
// M-scale s: Δ = s (Σ psi'(u_i) x_i x_iᵀ)⁻¹ Σ psi(u_i) x_i, u = r/s. The
// scale's own dependence on β drops out of the Jacobian at the minimum
// (there ∂s/∂β ∝ Σ psi(u_i) x_i = 0), so near it the step converges
// quadratically where the I-step contracts by about 1 − E[psi']/E[w]. It
// reports false, leaving beta unchanged, when psi' gives no positive
// definite matrix; the caller checks that the step lowers the scale.
func (ws *Workspace) sNewtonStep(psi psi.Bisquare, x blas64.General, y, beta []float64, s float64) bool {
	if ws.evaluateBisquareAs(psi, s, true) == 0 {
		return false
	}
	ws.psiSums(x)
	ws.normalMatrix(x)
	for j, hj := range ws.h {
		ws.delta[j] = s * hj
	}
	if !choleskySolve(ws.m, ws.p, ws.delta, ws.pscale) {
		return false
	}
	for j := range beta {
		beta[j] += ws.delta[j]
	}
	ws.residuals(x, y, beta)
	return true
}

// sStep takes one fast-S I-step from beta, whose residuals are in ws.r, at
// scale s: an IRLS step with bisquare weights. It then sets ws.r to the new
// residuals and returns their sums rho and psiu at s and rhoW at sw
// (sResiduals, or bisqResidualSums with the column products; rhoW is NaN
// when sw is NaN). It reports false, leaving beta and ws.r unchanged, when the step
// has no solution (every weight is zero, or the weighted design is
// singular; the candidate is then dropped). Because rho(√t) is concave in
// t for the bisquare, the step does not raise Σ rho(r_i/s), so the
// M-scale of the new residuals is at most s.
//
// With the column products cw (not nil) it forms its normal equations and
// residuals from them (sStepCols).
func (ws *Workspace) sStep(cw *colWork, psi psi.Bisquare, x blas64.General, y, beta []float64, s, sw float64) (rho, psiu, rhoW float64, ok bool) {
	if cw != nil {
		return ws.sStepCols(cw, psi.C, x, y, beta, s, sw)
	}
	if ws.sWeighted(x, s, psi.C) == 0 || !ws.sSolve(x, beta, s, psi.C) {
		return 0, 0, 0, false
	}
	rho, psiu, rhoW = ws.sResiduals(x, y, beta, s, sw, psi.C)
	return rho, psiu, rhoW, true
}

// sOutcome is how an S fit ended.
type sOutcome struct {
	scale  float64 // the M-scale of the returned coefficients
	steps  int     // refinement steps of the winning candidate
	status Status
}

// sFit computes the S-estimate into beta. A candidate whose I-step meets a
// singular weighted design (it fits more than half the data to rounding,
// so that the bisquare weights leave too few rows) is dropped; when every
// kept candidate of a round is dropped, another round of subsets is drawn
// from the stream, admitting only candidates whose scale exceeds that of
// every dropped one, up to sMaxRounds rounds. A full-rank design therefore
// ends in SingularDesign only if every round fails.
func (ws *Workspace) sFit(x blas64.General, y, beta []float64, rs Resampling) sOutcome {
	return ws.sFitCapped(x, y, beta, rs, sMaxRefine)
}

// sFitCapped is sFit with at most maxRefine refinement steps per
// candidate. Above NestedMinRows rows it draws the candidates in nested
// blocks (sFitNested).
func (ws *Workspace) sFitCapped(x blas64.General, y, beta []float64, rs Resampling, maxRefine int) sOutcome {
	if useNested(ws.n, ws.p) {
		return ws.sFitNested(x, y, beta, rs, maxRefine)
	}
	return ws.sFitPlain(x, y, beta, rs, maxRefine)
}

// sCounts returns the elemental subsets of an S search on p columns and the
// candidates it refines to convergence, with rs's zero values replaced by
// their defaults (ElementalSubsets(p) and sDefaultKeep).
func (rs Resampling) sCounts(p int) (subsets, keep int) {
	subsets, keep = rs.Subsets, rs.Keep
	if subsets == 0 {
		subsets = ElementalSubsets(p)
	}
	if keep == 0 {
		keep = sDefaultKeep
	}
	return subsets, keep
}

// sFitPlain is sFitCapped drawing every candidate from all the rows.
func (ws *Workspace) sFitPlain(x blas64.General, y, beta []float64, rs Resampling, maxRefine int) sOutcome {
	p := ws.p
	psi := rs.SScale()
	b := ws.sConsistency(psi.C)
	d := rs.SDivisor.divisor(ws.n, p)
	subsets, keep := rs.sCounts(p)
	ws.reserveCandidates(keep, p)
	floor := 0.0
	drawn := false
	for round := 0; round < sMaxRounds; round++ {
		found, exact := ws.sCandidates(x, y, beta, psi, b, d, subsets, keep, floor)
		if exact {
			return sOutcome{status: ExactFit}
		}
		if found == 0 {
			break
		}
		drawn = true
		out, dropped := ws.sRefine(x, y, beta, psi, b, d, keep, maxRefine)
		if out.status != SingularDesign {
			return out
		}
		floor = dropped
	}
	if !drawn {
		return sOutcome{status: ElementalFailure}
	}
	return sOutcome{status: SingularDesign}
}

// sCandidates draws subsets elemental fits and keeps in ws.cand the keep
// whose M-scales, after sRefineSteps I-steps, are the smallest above floor
// (their scales in ws.candScale, +Inf for empty places). It returns the
// number of candidates that survived their I-steps and whether one fits
// the data exactly (beta then holds it).
func (ws *Workspace) sCandidates(x blas64.General, y, beta []float64, psi psi.Bisquare, b, d float64, subsets, keep int, floor float64) (found int, exact bool) {
	p, n := ws.p, ws.n
	scales := ws.candScale[:keep]
	for k := range scales {
		scales[k] = math.Inf(1)
	}
	cur := ws.trial
	var yMax float64
	for _, v := range y {
		yMax = math.Max(yMax, math.Abs(v))
	}
	cw := ws.lts.columns(x)
	// Draws are budgeted over the whole round, so a run of singular
	// subsets (many identical rows) does not end it early.
	budget := subsetAttempts * subsets
	for j := 0; j < subsets; j++ {
		if !ws.elementalFit(x, y, cur, &budget) {
			break
		}
		var s float64
		if cw != nil {
			top, sum := residualsAbs(y[:n], cw.xt, cur, ws.r[:n], ws.buf[:n])
			s = madCountAbs(ws.r[:n], ws.buf, cw.w, top, sum)
		} else {
			ws.residuals(x, y, cur)
			s, _, _ = madFirst(ws.r, ws.buf)
		}
		if s <= sZeroTol*yMax {
			// At least half the residuals are zero, or zero to rounding.
			// If so many observations, and more than the p the subset was
			// fitted through, lie on this fit that the rest cannot reach
			// b·d (n − zeros < d/2), its M-scale is 0 and no fit can do
			// better; otherwise (n < 2p, or exactly half the rows on the
			// fit) the subset fits too few rows to be scaled and is no
			// candidate. Its I-steps would see weights on a rank-deficient
			// set of rows.
			zeros := roundingZeros(x, y, cur, ws.r)
			if 2*zeros > 2*n-int(d) && zeros > p {
				copy(beta, cur)
				return found, true
			}
			continue
		}
		if ws.sOffer(cw, x, y, cur, s, psi, b, d, keep, floor) {
			found++
		}
	}
	return found, false
}

// sOffer refines the candidate cur, whose residuals are in ws.r and whose
// starting scale is s, by sRefineSteps I-steps and keeps it among the keep
// candidates in ws.cand when its M-scale is smaller than the largest kept
// one and above floor. It reports whether the candidate survived its
// I-steps.
func (ws *Workspace) sOffer(cw *colWork, x blas64.General, y, cur []float64, s float64, psi psi.Bisquare, b, d float64, keep int, floor float64) bool {
	p := ws.p
	cands, scales := ws.cand[:keep*p], ws.candScale[:keep]
	worst := 0
	for k := range scales {
		if scales[k] > scales[worst] {
			worst = k
		}
	}
	top := psi.C * psi.C / 6
	var rho, psiu, rhoW, last float64
	for k := 0; k < sRefineSteps; k++ {
		// The last step also sums rho at the worst kept scale (NaN: no
		// sums but rho).
		sw := math.NaN()
		if k == sRefineSteps-1 {
			sw = scales[worst]
		}
		var ok bool
		if rho, psiu, rhoW, ok = ws.sStep(cw, psi, x, y, cur, s, sw); !ok {
			return false
		}
		last = s
		s *= math.Sqrt(top * rho / d / b)
		if !(s > 0) || math.IsInf(s, 0) {
			return false
		}
	}
	// The M-scale is decreasing in its left side, so a candidate beats
	// the worst kept scale exactly when mean rho(r/s_worst) < b.
	if !math.IsInf(scales[worst], 1) && top*rhoW/d >= b {
		return true
	}
	// The scale solve starts from the scale of the last I-step, where the
	// sums are at hand.
	s = mScaleFrom(ws.r, b, d, psi.C, last, rho, psiu)
	if s <= floor {
		return true
	}
	if s < scales[worst] {
		scales[worst] = s
		copy(cands[worst*p:(worst+1)*p], cur)
	}
	return true
}

// sRefine refines every kept candidate by steps that lower its M-scale: a
// Newton step when it lowers the scale, otherwise an I-step (after
// sNewtonRefusals refused Newton steps, I-steps only), until a step lowers
// the M-scale by at most the fraction sScaleTol or changes the
// coefficients by at most the fraction sRefineTol, or sMaxRefine steps
// (maxRefine) are taken, and puts the candidate with the smallest final scale in beta
// (its residuals in ws.r). Candidates whose I-step fails are dropped; if
// all are, the status is SingularDesign and dropped is the largest kept
// scale among them.
func (ws *Workspace) sRefine(x blas64.General, y, beta []float64, psi psi.Bisquare, b, d float64, keep, maxRefine int) (out sOutcome, dropped float64) {
	p := ws.p
	cands, scales := ws.cand[:keep*p], ws.candScale[:keep]
	cur := ws.trial
	best := math.Inf(1)
	out.status = SingularDesign
	for k := 0; k < keep; k++ {
		if math.IsInf(scales[k], 1) {
			continue
		}
		// The candidate's slot keeps the coefficients before each step,
		// for a Newton step that is refused.
		back := cands[k*p : (k+1)*p]
		copy(cur, back)
		ws.residuals(x, y, cur)
		s := scales[k]
		steps, kst := 0, IterationLimit
		refused := 0
		for steps < maxRefine {
			old := norm2(cur)
			prev := s
			newton := false
			if refused < sNewtonRefusals {
				copy(back, cur)
				if ws.sNewtonStep(psi, x, y, cur, s) {
					if next := sScale(ws.r, b, d, psi.C, s); next < s {
						s, newton = next, true
					}
				}
				if !newton {
					refused++
					copy(cur, back)
					ws.residuals(x, y, cur)
				}
			}
			if !newton {
				if !ws.iStep(psi, x, y, cur, s) {
					kst = SingularDesign
					break
				}
				s = sScale(ws.r, b, d, psi.C, s)
			}
			steps++
			if s == 0 {
				kst = ExactFit
				break
			}
			if s >= prev*(1-sScaleTol) || norm2(ws.delta) <= sRefineTol*math.Max(old, math.SmallestNonzeroFloat64) {
				kst = ConvergedChange
				break
			}
		}
		if kst == SingularDesign {
			dropped = math.Max(dropped, scales[k])
			continue
		}
		if s < best {
			best = s
			out = sOutcome{scale: s, steps: steps, status: kst}
			copy(beta, cur)
		}
	}
	if out.status == ConvergedChange {
		out = ws.sPolish(x, y, beta, psi, b, d, out, maxRefine)
	}
	if out.status != SingularDesign {
		ws.residuals(x, y, beta)
	}
	return out, dropped
}

// sPolish continues the winning candidate beta, at M-scale out.scale, until
// a step changes its coefficients by at most the fraction sPolishTol of
// their norm, by at most sPolishSteps further steps (and within maxRefine
// in all): a Newton step when it does not raise the M-scale, an I-step
// otherwise. The refinement's own stopping rule lets a candidate stop
// where its scale has settled to sScaleTol, which leaves the coefficients
// settled only to about √sScaleTol after I-steps; the polish makes the
// returned estimate a property of the minimum it lies in, not of the path
// the arithmetic took to it, so two ways of computing the candidates that
// reach the same minimum return the same estimate to about 1e-12. When
// no step settles within the budget (a minimum at a kink of the scale,
// where the steps converge sublinearly) the estimate is left as the
// refinement returned it.
func (ws *Workspace) sPolish(x blas64.General, y, beta []float64, psi psi.Bisquare, b, d float64, out sOutcome, maxRefine int) sOutcome {
	p := ws.p
	back := ws.trial[:p]
	copy(back, beta)
	ws.residuals(x, y, beta)
	s := out.scale
	for k := 0; k < sPolishSteps && out.steps < maxRefine; k++ {
		old := math.Max(norm2(beta), math.SmallestNonzeroFloat64)
		next := math.Inf(1)
		if ws.sNewtonStep(psi, x, y, beta, s) {
			next = sScale(ws.r, b, d, psi.C, s)
		}
		// At the minimum the scale is flat to rounding, so a step that
		// raises it by a few units in the last place is taken.
		if !(next <= s*(1+sPolishSlack)) {
			copy(beta, back)
			ws.residuals(x, y, beta)
			if !ws.iStep(psi, x, y, beta, s) {
				break
			}
			next = sScale(ws.r, b, d, psi.C, s)
		}
		if !(next <= s*(1+sPolishSlack)) || next == 0 {
			// No step lowers the scale (or the fit became exact): keep
			// the refinement's estimate.
			copy(beta, back)
			break
		}
		out.steps++
		s = next
		out.scale = s
		copy(back, beta)
		if norm2(ws.delta) <= sPolishTol*old {
			break
		}
	}
	return out
}

// roundingZeros counts the residuals r_i = y_i − x_iᵀβ that are zero to
// rounding: |r_i| ≤ sZeroTol·(|y_i| + Σ_j |x_ij β_j|). An elemental fit
// through rows that lie on one hyperplane leaves such residuals, a few
// units in the last place, where exact arithmetic would give zeros.
func roundingZeros(x blas64.General, y, beta, r []float64) int {
	zeros := 0
	for i, ri := range r {
		size := math.Abs(y[i])
		for j, v := range row(x, i) {
			size += math.Abs(v * beta[j])
		}
		if math.Abs(ri) <= sZeroTol*size {
			zeros++
		}
	}
	return zeros
}
