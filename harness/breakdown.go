package harness

import (
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"github.com/rhomark/rhomark/estimators"
)

// Finite-sample replacement breakdown (Donoho & Huber (1983), "The notion
// of breakdown point", in A Festschrift for Erich L. Lehmann, Wadsworth,
// 157-184): the smallest fraction m/n of observations that, replaced by
// arbitrary values, can carry the estimate beyond any bound.
//
// It is measured on one dataset. The m replaced observations (the first m
// of a seeded permutation) are moved together to one point: at distance t
// the predictors sit at centre + t·spread·d for a direction d, and the
// response at centre + t²·spread, growing faster than any bounded fit can
// follow (moving x and y at the same rate only tilts a fit, which stays
// bounded). The estimate has broken down when, between a moderate and a
// very large t, it moved by a factor of at least ten and ended far from the
// clean estimate. Directions d: vertical (d = 0, the predictors at their
// centre), leverage (every predictor out together) and random unit
// directions. For each direction the smallest breaking m is found by
// bisection, which assumes that more replaced points never break the
// estimate less.

// NamedEstimator is an estimator with its label.
type NamedEstimator struct {
	// Label names the estimator in results, as in the scenario file.
	Label string
	// Estimator is the configured estimator.
	Estimator estimators.Estimator
}

// ReplacementOptions control the breakdown search. Zero values mean the
// defaults.
type ReplacementOptions struct {
	// Directions is the number of random directions besides the vertical
	// and leverage ones. Default 6.
	Directions int
	// Near and Far are the two distances t, in units of the spread of the
	// predictors (the response moves by t² spreads). Defaults 1e2 and 1e5.
	Near, Far float64
	// Seed seeds the replaced rows, the random directions and the
	// estimators' own streams.
	Seed uint64
}

// DirectionBreakdown is the outcome in one direction.
type DirectionBreakdown struct {
	// Direction names the direction d: "vertical", "leverage", or
	// "random-1", "random-2", ... for the random ones.
	Direction string `json:"direction"`
	// M is the smallest number of replaced observations that broke the
	// estimate; 0 if none up to MaxM did.
	M int `json:"m"`
}

// ReplacementBreakdown is the finite-sample breakdown of one estimator.
type ReplacementBreakdown struct {
	Estimator string `json:"estimator"` // the estimator's label
	N         int    `json:"n"`         // number of observations in the dataset
	// MaxM is the largest number of replacements tried, ⌊n/2⌋. For even n,
	// replacing half the data can break every regression equivariant
	// estimator; for odd n, ⌊n/2⌋ is just under half, so an estimator that
	// survives it (the median, say) has the highest breakdown possible.
	MaxM int `json:"max_m"`
	// M is the smallest breaking m over all directions (0: none broke it
	// up to MaxM, so its breakdown point is at least (MaxM+1)/n).
	M int `json:"m"`
	// Fraction is M/n, or (MaxM+1)/n when nothing broke it.
	Fraction float64 `json:"fraction"`
	// AtLeast is set when nothing broke the estimate: Fraction is a lower
	// bound.
	AtLeast bool `json:"at_least"`
	// Direction names the direction that broke it at M.
	Direction string `json:"direction"`
	// Directions holds the outcome in every direction.
	Directions []DirectionBreakdown `json:"directions"`
	// Method says how the figure was found, in a sentence.
	Method string `json:"method"`
}

// direction is a direction of the predictors (intercept excluded).
type direction struct {
	name string
	dx   []float64 // per predictor column
}

// MeasureBreakdown measures the replacement breakdown of each estimator on
// the dataset (x with its intercept column first when intercept is set).
func MeasureBreakdown(x *mat.Dense, y []float64, intercept bool, ests []NamedEstimator, opt ReplacementOptions) ([]ReplacementBreakdown, error) {
	n, p := x.Dims()
	if n != len(y) || n <= p || n < 3 {
		return nil, fmt.Errorf("breakdown needs more rows (%d) than columns (%d) and a response per row", n, p)
	}
	if opt.Directions == 0 {
		opt.Directions = 6
	}
	if opt.Near == 0 {
		opt.Near = 1e2
	}
	if opt.Far == 0 {
		opt.Far = 1e5
	}
	first := 0
	if intercept {
		first = 1
	}
	k := p - first
	// Centre and spread of the data, per column.
	cx, sx := make([]float64, k), make([]float64, k)
	for j := 0; j < k; j++ {
		col := mat.Col(nil, first+j, x)
		cx[j], sx[j] = stat.Mean(col, nil), stat.StdDev(col, nil)
		if sx[j] == 0 {
			sx[j] = 1
		}
	}
	cy, sy := stat.Mean(y, nil), stat.StdDev(y, nil)
	if sy == 0 {
		sy = 1
	}
	rng := rand.New(rand.NewPCG(opt.Seed, 0xb7ea4d))
	dirs := []direction{{name: "vertical", dx: make([]float64, k)}}
	if k > 0 {
		lev := make([]float64, k)
		for j := range lev {
			lev[j] = 1 / math.Sqrt(float64(k))
		}
		dirs = append(dirs, direction{name: "leverage", dx: lev})
		for d := 0; d < opt.Directions; d++ {
			v := make([]float64, k)
			for j := range v {
				v[j] = rng.NormFloat64()
			}
			floats.Scale(1/floats.Norm(v, 2), v)
			dirs = append(dirs, direction{name: fmt.Sprintf("random-%d", d+1), dx: v})
		}
	}
	order := rng.Perm(n)
	maxM := n / 2

	var out []ReplacementBreakdown
	xm := mat.NewDense(n, p, nil)
	ym := make([]float64, n)
	for _, ne := range ests {
		var ws estimators.Workspace
		var res estimators.Result
		fit := func(xx *mat.Dense, yy []float64) ([]float64, bool) {
			ws.SeedRandom(opt.Seed, 0x5eed)
			if err := ne.Estimator.Fit(xx, yy, &ws, &res); err != nil || !finite(res.Coefficients) {
				return nil, false
			}
			return append([]float64(nil), res.Coefficients...), true
		}
		clean, ok := fit(x, y)
		if !ok {
			return nil, fmt.Errorf("estimator %s does not fit the clean data", ne.Label)
		}
		// broken reports whether m replacements along d break the estimate.
		broken := func(d direction, m int) bool {
			var dist [2]float64
			for s, t := range []float64{opt.Near, opt.Far} {
				xm.Copy(x)
				copy(ym, y)
				for _, i := range order[:m] {
					for j := 0; j < k; j++ {
						xm.Set(i, first+j, cx[j]+t*sx[j]*d.dx[j])
					}
					ym[i] = cy + t*t*sy
				}
				b, ok := fit(xm, ym)
				if !ok {
					// A fit that fails far out counts as broken.
					return s == 1
				}
				dist[s] = floats.Distance(b, clean, 2)
			}
			far := 1e3 * (1 + floats.Norm(clean, 2))
			return dist[1] >= 10*dist[0] && dist[1] > far
		}
		rb := ReplacementBreakdown{Estimator: ne.Label, N: n, MaxM: maxM,
			Method: fmt.Sprintf("m of %d observations moved together to x = centre + t·spread·d, y = centre + t²·spread for t = %g and %g along %d directions d; broken when the estimate moves at least 10 times further and ends beyond 1000 (1 + ‖clean estimate‖); smallest m by bisection", n, opt.Near, opt.Far, len(dirs))}
		for _, d := range dirs {
			db := DirectionBreakdown{Direction: d.name}
			if maxM >= 1 && broken(d, maxM) {
				lo, hi := 0, maxM // lo not broken (m = 0 never is), hi broken
				for hi-lo > 1 {
					mid := (lo + hi) / 2
					if broken(d, mid) {
						hi = mid
					} else {
						lo = mid
					}
				}
				db.M = hi
			}
			rb.Directions = append(rb.Directions, db)
			if db.M > 0 && (rb.M == 0 || db.M < rb.M) {
				rb.M, rb.Direction = db.M, d.name
			}
		}
		if rb.M == 0 {
			rb.AtLeast = true
			rb.Fraction = float64(maxM+1) / float64(n)
		} else {
			rb.Fraction = float64(rb.M) / float64(n)
		}
		out = append(out, rb)
	}
	return out, nil
}

func finite(b []float64) bool {
	for _, v := range b {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}
