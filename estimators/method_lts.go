package estimators

import (
	"math"
	"sort"

	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/stat/distuv"

	"github.com/rhomark/rhomark/psi"
)

// MethodLTS is least trimmed squares by FAST-LTS (Rousseeuw & Van
// Driessen (2006), Data Min. Knowl. Discov. 12:29-45).
const MethodLTS Method = 5

// ltsSolver is least trimmed squares.
type ltsSolver struct{}

func (ltsSolver) info() MethodInfo {
	return MethodInfo{Name: "lts", Direct: true, Trims: true}
}

// fit runs FAST-LTS (lts.go).
func (ltsSolver) fit(ws *Workspace, e Estimator, x blas64.General, y []float64, res *Result) {
	beta := res.Coefficients
	res.Objective, res.Scale, res.Iterations, res.Status = ws.lts.fit(x, y, beta, ws.rng,
		ltsSettings{H: e.Resampling.H, Subsets: e.Resampling.Subsets, Keep: e.Resampling.Keep})
	ws.residuals(x, y, beta)
}

// efficiency: LTS keeping a fraction α of the data is asymptotically the
// M-estimator with psi(u) = u·1(|u| ≤ q), q = Φ⁻¹((1+α)/2) (common
// practice): its efficiency is α − 2qφ(q), about 7.1% at α = 1/2.
func (ltsSolver) efficiency(e Estimator, _ float64, n, p int) float64 {
	h := e.Resampling.LTSKeep(n, p)
	q := distuv.UnitNormal.Quantile((1 + float64(h)/float64(n)) / 2)
	return psiEfficiency(psi.Talwar{C: q}, 1)
}

func (ltsSolver) covariance(*Workspace, Estimator, *Result, int, int) (float64, bool) {
	return 0, false
}

func (ltsSolver) curve(e Estimator) (psi.Psi, string) { return e.Psi, "" }

func (ltsSolver) rules(_ Estimator, _ string, seed uint64) FitRules {
	return FitRules{Start: randomSubsets(seed) + " and concentration steps",
		Scale:   "√(mean of the h smallest squared residuals), consistency-corrected",
		Weights: "1 for the h rows with the smallest |residual|, 0 for the others"}
}

// weights are 1 for the h rows of smallest |residual| (ties in row order)
// and 0 for the others.
func (ltsSolver) weights(e Estimator, r []float64, _ float64, p int, w []float64) {
	n := len(r)
	order := make([]int, n)
	for i := range order {
		order[i] = i
		w[i] = 0
	}
	sort.SliceStable(order, func(a, b int) bool { return math.Abs(r[order[a]]) < math.Abs(r[order[b]]) })
	for _, i := range order[:min(n, e.Resampling.LTSKeep(n, p))] {
		w[i] = 1
	}
}
