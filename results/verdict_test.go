package results

import (
	"math"
	"slices"
	"strings"
	"testing"
)

// vcoef builds a coefficient with the measures the verdict reads. The MSE
// ratio against the reference is derived from rmse and refRMSE, with the
// given MCSE; for the reference it is 1 with a null MCSE, as the harness
// writes it.
func vcoef(name string, bias, biasMCSE, rmse, rmseMCSE, refRMSE, ratioMCSE float64) Coefficient {
	ratio := Measure{Value: Num(refRMSE * refRMSE / (rmse * rmse)), MCSE: Num(ratioMCSE)}
	if math.IsNaN(ratioMCSE) {
		ratio = Measure{Value: 1, MCSE: Num(math.NaN())}
	}
	return Coefficient{Name: name, Bias: Measure{Num(bias), Num(biasMCSE)}, RMSE: Measure{Num(rmse), Num(rmseMCSE)}, MSERatio: ratio}
}

func vest(label string, failed int64, k ...Coefficient) Estimator {
	return Estimator{Label: label, Coefficients: k, Convergence: Convergence{Fits: 1000, Converged: 1000 - failed}}
}

// TestDecide checks the verdict on invented cells (no outside figures).
func TestDecide(t *testing.T) {
	nan := math.NaN()
	heavyLS := vest("ls", 0, vcoef("x", 0.1, nan, 5, nan, 5, nan))
	heavyLS.Coefficients[0].HeavyTails = true
	for _, tc := range []struct {
		name      string
		ests      []Estimator
		choice    string
		tied      []string
		excluded  []string // labels not recommended
		criterion string   // a word the criterion must contain
		bestRMSE  string   // best by RMSE on the first coefficient
		bestBias  string
		last      string // the last in the ranking
	}{
		{
			// The case of the issue: least squares has the smallest spread
			// but a bias of −0.71 (10% spikes, 3% bad leverage); its RMSE
			// is about 0.71, the robust fits' about 0.1, so it must lose.
			name: "biased ls with the smallest spread",
			ests: []Estimator{
				vest("ls", 0, vcoef("slope", -0.71, 0.0016, 0.7118, 0.0017, 0.7118, nan)),
				vest("huber", 0, vcoef("slope", 0.05, 0.003, 0.103, 0.0025, 0.7118, 2.0)),
				vest("bisquare", 0, vcoef("slope", 0.01, 0.003, 0.1005, 0.0025, 0.7118, 2.0)),
			},
			choice: "bisquare", tied: []string{"huber"}, criterion: "relative to ls",
			bestRMSE: "bisquare", bestBias: "bisquare", last: "ls",
		},
		{
			name: "clean cell: the reference wins",
			ests: []Estimator{
				vest("ls", 0, vcoef("a", 0.001, 0.003, 0.1, 0.002, 0.1, nan), vcoef("b", 0, 0.003, 0.2, 0.004, 0.2, nan)),
				vest("huber", 0, vcoef("a", 0.002, 0.003, 0.105, 0.002, 0.1, 0.005), vcoef("b", 0, 0.003, 0.21, 0.004, 0.2, 0.005)),
			},
			choice: "ls", criterion: "relative to ls", bestRMSE: "ls", bestBias: "ls", last: "huber",
		},
		{
			name: "a difference within 2 MCSE of the paired ratio is a tie",
			ests: []Estimator{
				vest("ls", 0, vcoef("a", 0, 0.003, 0.1, 0.002, 0.1, nan)),
				vest("huber", 0, vcoef("a", 0, 0.003, 0.1005, 0.002, 0.1, 0.02)),
			},
			choice: "ls", tied: []string{"huber"}, criterion: "relative to ls", bestRMSE: "ls", bestBias: "ls", last: "huber",
		},
		{
			name: "too many failures: not recommended despite the best RMSE",
			ests: []Estimator{
				vest("ls", 0, vcoef("a", 0.5, 0.003, 0.6, 0.002, 0.6, nan)),
				vest("mm", 50, vcoef("a", 0, 0.003, 0.1, 0.002, 0.6, 1)),
				vest("huber", 10, vcoef("a", 0.1, 0.003, 0.2, 0.002, 0.6, 1)),
			},
			choice: "huber", excluded: []string{"mm"}, criterion: "relative to ls", bestRMSE: "huber", bestBias: "huber", last: "ls",
		},
		{
			name: "worst coefficient decides",
			ests: []Estimator{
				vest("ls", 0, vcoef("a", 0, 0.003, 0.1, 0.002, 0.1, nan), vcoef("b", 0, 0.003, 0.1, 0.002, 0.1, nan)),
				vest("odd", 0, vcoef("a", 0, 0.003, 0.05, 0.001, 0.1, 0.1), vcoef("b", 0, 0.003, 0.3, 0.006, 0.1, 0.01)),
			},
			choice: "ls", criterion: "relative to ls", bestRMSE: "odd", bestBias: "ls", last: "odd",
		},
		{
			name: "heavy-tailed reference: ranked against the best RMSE",
			ests: []Estimator{
				heavyLS,
				vest("huber", 0, vcoef("x", 0.01, 0.003, 0.2, 0.004, 5, nan)),
				vest("bisquare", 0, vcoef("x", 0.02, 0.003, 0.3, 0.004, 5, nan)),
			},
			choice: "huber", excluded: []string{"ls"}, criterion: "best on that coefficient", bestRMSE: "huber", bestBias: "huber", last: "bisquare",
		},
	} {
		t.Run(tc.name, func(t *testing.T) {
			v := Decide(Cell{Estimators: tc.ests}, "ls")
			if v.Choice != tc.choice || !slices.Equal(v.Tied, tc.tied) {
				t.Errorf("choice %q tied %v, want %q tied %v", v.Choice, v.Tied, tc.choice, tc.tied)
			}
			var ex []string
			for _, e := range v.NotRecommended {
				ex = append(ex, e.Estimator)
				if e.Detail == "" {
					t.Errorf("%s excluded without a reason", e.Estimator)
				}
			}
			if !slices.Equal(ex, tc.excluded) {
				t.Errorf("not recommended %v, want %v", ex, tc.excluded)
			}
			if !strings.Contains(v.Criterion, tc.criterion) {
				t.Errorf("criterion %q, want it to say %q", v.Criterion, tc.criterion)
			}
			if len(v.Coefficients) == 0 || v.Coefficients[0].BestRMSE != tc.bestRMSE || v.Coefficients[0].SmallestBias != tc.bestBias {
				t.Errorf("coefficient verdicts %+v, want best RMSE %s, smallest bias %s", v.Coefficients, tc.bestRMSE, tc.bestBias)
			}
			if n := len(v.Ranking); n == 0 || v.Ranking[0].Estimator != tc.choice || v.Ranking[n-1].Estimator != tc.last {
				t.Errorf("ranking %+v, want %s first and %s last", v.Ranking, tc.choice, tc.last)
			}
			for _, r := range v.Ranking {
				// The reference scores exactly 1 against itself, with no
				// MCSE: it is not ranked against itself.
				if r.Estimator == "ls" && v.Criterion == "worst-coefficient RMSE relative to ls" &&
					(r.Score.Value != 1 || !math.IsNaN(float64(r.Score.MCSE))) {
					t.Errorf("reference scored %v ± %v against itself", r.Score.Value, r.Score.MCSE)
				}
				if slices.Contains(ex, r.Estimator) {
					t.Errorf("%s ranked although not recommended", r.Estimator)
				}
			}
		})
	}
}
