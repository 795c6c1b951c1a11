package estimators

import (
	"math"

	"gonum.org/v1/gonum/blas/blas64"
)

// The S-estimator minimises an M-scale s(β) of the residuals, the solution
// of (1/n) Σ rho(r_i/s) = b with rho the bisquare and b = E[rho(Z)] at the
// normal (Rousseeuw & Yohai (1984), "Robust regression by means of
// S-estimators", Lecture Notes in Statistics 26:256-272). It is computed by
// fast-S (Salibian-Barrera & Yohai (2006), "A fast algorithm for
// S-regression estimates", J. Comput. Graph. Statist. 15:414-427): each of
// many random elemental subsets gives an exact fit, refined by two
// I-steps (an IRLS step with bisquare weights at the current scale, then one
// update of the scale); candidates whose residuals cannot beat the current
// best scales are skipped without solving for their scale; the best few are
// refined to convergence and the one with the smallest scale wins.

// Fast-S settings (Salibian-Barrera & Yohai 2006, from memory).
const (
	sRefineSteps   = 2 // I-steps applied to every elemental start
	sDefaultKeep   = 5 // candidates refined to convergence
	sMaxRefine     = 500
	sRefineTol     = 1e-10
	sDefaultC      = 1.547
	mmDefaultC     = 4.685
	scaleMaxSteps  = 500
	scaleRelTol    = 1e-12
	subsetAttempts = 50 // draws allowed per requested subset
)

// sConsistency returns b = E[rho_c(Z)] for the bisquare with constant c,
// cached in the workspace (quadrature is costly next to one fit).
func (ws *Workspace) sConsistency(c float64) float64 {
	if ws.sC != c || ws.sB == 0 {
		ws.sC, ws.sB = c, ScaleConsistency(Bisquare{C: c})
	}
	return ws.sB
}

// meanRho returns (1/n) Σ rho(r_i/s) for the bisquare psi.
func meanRho(psi Bisquare, r []float64, s float64) float64 {
	var sum float64
	for _, v := range r {
		sum += psi.Rho(v / s)
	}
	return sum / float64(len(r))
}

// mScale solves (1/n) Σ rho(r_i/s) = b for s by the fixed-point iteration
// s ← s·√(mean rho(r/s)/b), from s0 > 0. The iteration converges
// monotonically for a bounded rho. It returns 0 if s0 is 0.
func mScale(psi Bisquare, r []float64, b, s0 float64) float64 {
	s := s0
	if s == 0 {
		return 0
	}
	for k := 0; k < scaleMaxSteps; k++ {
		next := s * math.Sqrt(meanRho(psi, r, s)/b)
		if math.Abs(next-s) <= scaleRelTol*s || next == 0 || math.IsNaN(next) {
			return next
		}
		s = next
	}
	return s
}

// iStep applies one fast-S I-step to beta at scale s: an IRLS step with
// bisquare weights, then the residuals. It reports false when the weighted
// system has no solution (the candidate is dropped).
func (ws *Workspace) iStep(psi Bisquare, x blas64.General, y, beta []float64, s float64) bool {
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

// sFit computes the S-estimate into beta and returns its scale, the
// refinement steps of the winner and the status.
func (ws *Workspace) sFit(x blas64.General, y, beta []float64, rs Resampling) (scale float64, iters int, st Status) {
	p := ws.p
	psi := rs.SScale()
	c := psi.C
	b := ws.sConsistency(c)
	subsets := rs.Subsets
	if subsets == 0 {
		subsets = ElementalSubsets(p)
	}
	keep := rs.Keep
	if keep == 0 {
		keep = sDefaultKeep
	}
	ws.reserveCandidates(keep, p)
	cands, scales := ws.cand[:keep*p], ws.candScale[:keep]
	for k := range scales {
		scales[k] = math.Inf(1)
	}
	found := 0
	cur := ws.trial
	for j := 0; j < subsets; j++ {
		if !ws.elementalFit(x, y, cur, subsetAttempts) {
			break
		}
		ws.residuals(x, y, cur)
		s := MAD(ws.r, ws.buf)
		if s == 0 {
			// At least half the residuals are zero. If more than half the
			// observations, and more than the p the subset was fitted
			// through, lie exactly on this fit, its M-scale is 0 and no fit
			// can do better; otherwise (n < 2p) the subset only fits itself
			// and is no candidate.
			zeros := 0
			for _, r := range ws.r {
				if r == 0 {
					zeros++
				}
			}
			if 2*zeros > ws.n && zeros > p {
				copy(beta, cur)
				return 0, 0, ExactFit
			}
			continue
		}
		ok := true
		for k := 0; k < sRefineSteps && ok; k++ {
			ok = ws.iStep(psi, x, y, cur, s)
			s *= math.Sqrt(meanRho(psi, ws.r, s) / b)
			if !(s > 0) || math.IsInf(s, 0) {
				ok = false
			}
		}
		if !ok {
			continue
		}
		found++
		worst := 0
		for k := range scales {
			if scales[k] > scales[worst] {
				worst = k
			}
		}
		// The M-scale is decreasing in its left side, so a candidate beats
		// the worst kept scale exactly when mean rho(r/s_worst) < b.
		if !math.IsInf(scales[worst], 1) && meanRho(psi, ws.r, scales[worst]) >= b {
			continue
		}
		s = mScale(psi, ws.r, b, s)
		if s < scales[worst] {
			scales[worst] = s
			copy(cands[worst*p:(worst+1)*p], cur)
		}
	}
	if found == 0 {
		return 0, 0, ElementalFailure
	}
	// Refine each kept candidate to convergence; keep the smallest scale.
	best := math.Inf(1)
	st = IterationLimit
	for k := 0; k < keep; k++ {
		if math.IsInf(scales[k], 1) {
			continue
		}
		copy(cur, cands[k*p:(k+1)*p])
		ws.residuals(x, y, cur)
		s := scales[k]
		steps, kst := 0, IterationLimit
		for steps < sMaxRefine {
			old := norm2(cur)
			if !ws.iStep(psi, x, y, cur, s) {
				kst = SingularDesign
				break
			}
			steps++
			s = mScale(psi, ws.r, b, s)
			if s == 0 {
				kst = ExactFit
				break
			}
			if norm2(ws.delta) <= sRefineTol*math.Max(old, math.SmallestNonzeroFloat64) {
				kst = ConvergedChange
				break
			}
		}
		if kst == SingularDesign {
			continue
		}
		if s < best {
			best, iters, st = s, steps, kst
			copy(beta, cur)
		}
	}
	if math.IsInf(best, 1) {
		return 0, 0, SingularDesign
	}
	ws.residuals(x, y, beta)
	return best, iters, st
}
