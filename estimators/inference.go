package estimators

import (
	"math"
	"reflect"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/psi"
)

// StandardErrors writes to se the standard error of each coefficient of the
// fit just made with e in ws (res must be that fit's result; ws still holds
// its residuals) and reports whether they are defined.
//
// For least squares they are the classical √(s² [(XᵀX)⁻¹]_jj), s² =
// RSS/(n−p), for use with Student's t on n−p degrees of freedom. For an
// M-estimator (IRLS, Newton, the M-step of MM) they come from Huber's
// estimate of the covariance with his small-sample correction
// (Huber (1973), "Robust regression: asymptotics, conjectures and Monte
// Carlo", Ann. Statist. 1:799-821; Huber (1981), Robust Statistics, Wiley,
// §7.6):
//
//	Cov(β̂) ≈ K² · [Σψ(u_i)²/(n−p)] / [Σψ'(u_i)/n]² · σ² (XᵀX)⁻¹,
//	K = 1 + (p/n) · Var(ψ')/mean(ψ')²,
//
// with u_i = r_i/σ at the final fit. S, LTS and exact LAD get none (false),
// nor do fits that did not converge or whose mean ψ' is not positive, nor
// M-estimators whose psi jumps (Talwar's, say): the mean of the pointwise
// ψ' then misses the jumps' share of E[ψ'], and the standard errors would
// be too small.
func (ws *Workspace) StandardErrors(e Estimator, x *mat.Dense, res *Result, se []float64) bool {
	raw := x.RawMatrix()
	n, p := raw.Rows, raw.Cols
	if !res.Status.Converged() || len(se) < p || n <= p || ws.n != n || ws.p != p {
		return false
	}
	s := solverOf(e.Method)
	if s == nil {
		return false
	}
	factor, ok := s.covariance(ws, e, res, n, p)
	if !ok {
		return false
	}
	if !ws.inverseGramDiag(raw, se[:p]) {
		return false
	}
	for j := range se[:p] {
		se[j] = math.Sqrt(factor * se[j])
	}
	return true
}

// huberCovariance returns the factor of Huber's covariance estimate,
// K² · [Σψ(u_i)²/(n−p)] / [Σψ'(u_i)/n]² · σ² (see StandardErrors), at the
// residuals in ws and the scale sigma of an M-estimator with psi fn, and
// false when it is undefined: a scale that is not positive, a psi that
// jumps, or a mean ψ' that is not positive.
func (ws *Workspace) huberCovariance(fn psi.Psi, sigma float64, n, p int) (float64, bool) {
	if !(sigma > 0) || ws.jumps(fn) {
		return 0, false
	}
	var s2, s1, s11 float64
	if h, ok := fn.(psi.Huber); ok {
		s2, s1, s11 = huberCovarianceSums(ws.r, sigma, h.K)
	} else {
		for _, r := range ws.r {
			u := r / sigma
			p := fn.Psi(u)
			d := fn.Deriv(u)
			s2 += p * p
			s1 += d
			s11 += d * d
		}
	}
	nf, pf := float64(n), float64(p)
	m := s1 / nf
	if !(m > 0) {
		return 0, false
	}
	v := s11/nf - m*m
	k := 1 + pf/nf*v/(m*m)
	return k * k * (s2 / (nf - pf)) / (m * m) * sigma * sigma, true
}

// huberCovarianceSums is huberCovariance's loop for Huber's psi, with
// Huber.Psi and Huber.Deriv written inline (the same values, summed in the
// same order, so the same bits): ψ(u) = u and ψ'(u) = 1 on [−k, k];
// outside, ψ(u) = ±k and ψ'(u) = 0; a NaN u gives ψ = u, ψ' = 0.
func huberCovarianceSums(r []float64, sigma, k float64) (s2, s1, s11 float64) {
	for _, ri := range r {
		u := ri / sigma
		p, d := u, 1.0
		if !(math.Abs(u) <= k) {
			d = 0
			switch {
			case u > k:
				p = k
			case u < -k:
				p = -k
			}
		}
		s2 += p * p
		s1 += d
		s11 += d * d
	}
	return s2, s1, s11
}

// jumps reports whether psi is discontinuous, remembering the answer for
// the last psi asked about (the check scans psi when it declares no kinks).
func (ws *Workspace) jumps(fn psi.Psi) bool {
	if t := reflect.TypeOf(fn); t != nil && t.Comparable() && ws.jumpPsi != nil && reflect.TypeOf(ws.jumpPsi) == t && ws.jumpPsi == fn {
		return ws.jumpy
	}
	ws.jumpy = psi.Discontinuous(fn)
	if t := reflect.TypeOf(fn); t != nil && t.Comparable() {
		ws.jumpPsi = fn
	}
	return ws.jumpy
}

// StandardErrorer is implemented by a Fitter that has standard errors for
// its coefficients, for the coverage of confidence intervals.
type StandardErrorer interface {
	// StandardErrors writes to se the standard error of each coefficient
	// of the fit just made into ws and res with the design x, and returns
	// how they make intervals: NoInference when this fit has none.
	StandardErrors(x *mat.Dense, ws *Workspace, res *Result, se []float64) Inference
}

// StandardErrors is Workspace.StandardErrors for e, returning the kind of
// interval its method's standard errors make, or NoInference when the fit
// has none.
func (e Estimator) StandardErrors(x *mat.Dense, ws *Workspace, res *Result, se []float64) Inference {
	if !ws.StandardErrors(e, x, res, se) {
		return NoInference
	}
	return e.Method.Info().Inference
}
