package estimators

import (
	"math"
	"strconv"

	"gonum.org/v1/gonum/blas/blas64"

	"github.com/rhomark/rhomark/psi"
)

// mEstimator holds what IRLS and Newton share: a start (given, or the
// estimate of a direct method), a scale rule, and the iteration of
// iterate.go, which tells the two apart by e.Method. irlsSolver and
// newtonSolver embed it and add their info.
type mEstimator struct{}

// fit starts e from e.Start or from the estimate of e.StartFrom, takes the
// start's scale if the scale rule says so, and iterates.
func (mEstimator) fit(ws *Workspace, e Estimator, x blas64.General, y []float64, res *Result) {
	beta := res.Coefficients
	if e.Start != nil {
		copy(beta, e.Start)
		ws.residuals(x, y, beta)
	} else {
		// The start is fitted into res itself (a Result of its own would
		// escape through the solver's interface call and allocate), then
		// res is cleared but for the coefficients and the S refinement.
		if e.StartFrom == MethodLS {
			ws.lsStart(x, y, res)
		} else {
			ws.direct(e, e.StartFrom, x, y, res)
		}
		start := *res
		*res = Result{Coefficients: beta, SRefinement: start.SRefinement, SSteps: start.SSteps}
		// An S refinement stopped at its cap is still an S-scale and the
		// best candidate, as for MM.
		capped := e.StartFrom == MethodS && start.Status == IterationLimit
		if !start.Status.Converged() && !capped {
			res.Status = start.Status
			return
		}
		if e.Scale.Rule == ScaleStart {
			if start.Scale == 0 {
				// An exact fit only if the data lie on it, not merely the
				// observations a start passes through.
				res.Status, res.Scale = ZeroScale, 0
				if allZero(ws.r) {
					res.Status = ExactFit
				}
				return
			}
			e.Scale = Scale{Rule: ScaleFixed, Value: start.Scale}
		}
	}
	ws.iterate(e, x, y, res)
}

// lsStart is ws.direct(e, MethodLS, x, y, res) for a start: the same
// coefficients, residuals in ws.r, scale and status (classifyNonFinite
// included), without the objective and equation norm of finishLS, which a
// start's result does not keep.
func (ws *Workspace) lsStart(x blas64.General, y []float64, res *Result) {
	beta := res.Coefficients
	if !ws.leastSquares(x, y, beta, false) {
		res.Status = SingularDesign
		return
	}
	ws.residuals(x, y, beta)
	n, p := ws.n, ws.p
	ss := norm2(ws.r)
	if n > p {
		res.Scale = ss / math.Sqrt(float64(n-p))
	}
	res.Status = Solved
	classifyNonFinite(res)
}

// efficiency is E[ψ']²/E[ψ²] at κZ, κ = sd/S for a fixed scale S and 1
// for a scale estimated from the data.
func (mEstimator) efficiency(e Estimator, sd float64, _, _ int) float64 {
	kappa := 1.0
	if e.Scale.Rule == ScaleFixed {
		kappa = sd / e.Scale.Value
	}
	return psiEfficiency(e.Psi, kappa)
}

func (mEstimator) covariance(ws *Workspace, e Estimator, res *Result, n, p int) (float64, bool) {
	return ws.huberCovariance(e.MStepPsi(), res.Scale, n, p)
}

func (mEstimator) curve(e Estimator) (psi.Psi, string) { return e.Psi, "" }

// rules describes the start, scale rule and psi weights of an M-estimator.
func (mEstimator) rules(e Estimator, psiText string, seed uint64) FitRules {
	start := e.StartFrom.String() + " estimate"
	if e.StartFrom.Info().Resamples() {
		start += " from " + randomSubsets(seed)
	}
	var scale string
	switch e.Scale.Rule {
	case ScaleFixed:
		scale = "fixed at " + strconv.FormatFloat(e.Scale.Value, 'g', -1, 64)
	case ScaleStart:
		scale = "held at the start's scale"
	default:
		scale = "MAD of the residuals (median |r| / 0.6745), re-estimated at each iteration"
	}
	return FitRules{Start: start, Scale: scale, Weights: "psi(u)/u of " + psiText}
}

func (mEstimator) weights(e Estimator, r []float64, scale float64, _ int, w []float64) {
	psiWeights(e.MStepPsi(), r, scale, w)
}

// psiEfficiency returns E[ψ'(κZ)]²/E[ψ(κZ)²], the asymptotic efficiency
// at the normal of the M-estimator of fn relative to least squares.
func psiEfficiency(fn psi.Psi, kappa float64) float64 {
	a, b := psi.Moments(fn, kappa)
	return b * b / a
}

// psiWeights writes w_i = fn.Weight(r_i/scale), NaN where the scale is not
// positive and finite.
func psiWeights(fn psi.Psi, r []float64, scale float64, w []float64) {
	for i, v := range r {
		u := scaledResidual(v, scale)
		if math.IsNaN(u) {
			w[i] = math.NaN()
			continue
		}
		w[i] = fn.Weight(u)
	}
}

// scaledResidual returns r/scale, or NaN when the scale is not positive
// and finite.
func scaledResidual(r, scale float64) float64 {
	if !(scale > 0) || math.IsInf(scale, 0) {
		return math.NaN()
	}
	return r / scale
}

// randomSubsets names the random elemental subsets drawn with seed.
func randomSubsets(seed uint64) string {
	return "random elemental subsets (seed " + strconv.FormatUint(seed, 10) + ")"
}
