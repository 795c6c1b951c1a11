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
// clean estimate. A fit that ends in a failure status under contamination
// is neither: it is recorded as its own outcome, because an estimator that
// returns no estimate has shown no resistance. Directions d: vertical
// (d = 0, the predictors at their centre), leverage (every predictor out
// together) and random unit directions.
//
// Breakdown need not be monotone in m on a finite sample (a resampling
// estimator can miss at m what it catches at m+1), so each direction is
// scanned upwards from m = 1, never bisected. The scan stops at the
// equivariance bound ⌊(n−p)/2⌋+1: no regression equivariant estimator
// survives that many replacements in every configuration (Rousseeuw &
// Leroy (1987), Robust Regression and Outlier Detection, Wiley, ch. 3), so
// no figure above it is ever reported.

// NamedEstimator is an estimator with its label.
type NamedEstimator struct {
	// Label names the estimator in results, as in the scenario file.
	Label string
	// Estimator is the configured estimator.
	Estimator estimators.Estimator
	// Fitter, if not nil, fits instead of Estimator (an outside
	// estimator, such as a *ProgramFitter).
	Fitter estimators.Fitter
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

// BreakdownOutcome is what m replaced observations did to an estimate, or,
// for a whole measurement, what ended it.
type BreakdownOutcome int

const (
	// BreakdownHeld: the estimate stayed bounded (for a measurement:
	// nothing broke it and no fit failed up to the equivariance bound).
	BreakdownHeld BreakdownOutcome = iota + 1
	// BreakdownBroken: the estimate was carried away (for a measurement:
	// the first non-held trial broke it).
	BreakdownBroken
	// BreakdownFitFailed: the fit under contamination ended in a failure
	// status, so it showed neither resistance nor breakdown (for a
	// measurement: a fit failed at or below the smallest breaking m, so
	// the breakdown point is only bounded).
	BreakdownFitFailed
)

// String returns the outcome's name: "held", "broken" or "fit-failed".
func (o BreakdownOutcome) String() string {
	switch o {
	case BreakdownHeld:
		return "held"
	case BreakdownBroken:
		return "broken"
	case BreakdownFitFailed:
		return "fit-failed"
	}
	return "unknown"
}

// MarshalText writes the outcome's name.
func (o BreakdownOutcome) MarshalText() ([]byte, error) { return []byte(o.String()), nil }

// UnmarshalText reads an outcome's name.
func (o *BreakdownOutcome) UnmarshalText(b []byte) error {
	for _, v := range []BreakdownOutcome{BreakdownHeld, BreakdownBroken, BreakdownFitFailed} {
		if string(b) == v.String() {
			*o = v
			return nil
		}
	}
	return fmt.Errorf("unknown breakdown outcome %q (want held, broken or fit-failed)", b)
}

// BreakdownTrial is the outcome of m replacements in one direction.
type BreakdownTrial struct {
	M       int              `json:"m"`
	Outcome BreakdownOutcome `json:"outcome"`
	// Status is the failing fit's status when Outcome is fit-failed
	// ("singular-design", ...; "error" when Fit refused the data).
	Status string `json:"status,omitempty"`
}

// DirectionBreakdown is the outcome in one direction.
type DirectionBreakdown struct {
	// Direction names the direction d: "vertical", "leverage", or
	// "random-1", "random-2", ... for the random ones.
	Direction string `json:"direction"`
	// M is the smallest number of replaced observations that broke the
	// estimate; 0 if none up to Scanned did.
	M int `json:"m"`
	// FailedM is the smallest m at which the fit failed; 0 if none did.
	FailedM int `json:"failed_m"`
	// Scanned is the largest m tried; every m from 1 to Scanned was tried.
	// It is below the bound when another direction had already broken the
	// estimate at Scanned+1 or less.
	Scanned int `json:"scanned"`
	// Trials lists the outcome of every m tried, in order.
	Trials []BreakdownTrial `json:"trials"`
}

// ReplacementBreakdown is the finite-sample breakdown of one estimator.
type ReplacementBreakdown struct {
	Estimator string `json:"estimator"` // the estimator's label
	N         int    `json:"n"`         // number of observations in the dataset
	P         int    `json:"p"`         // number of coefficients
	// Bound is the equivariance bound ⌊(n−p)/2⌋+1, the most replacements
	// tried: at most Bound/n for any regression equivariant estimator
	// (Rousseeuw & Leroy 1987, ch. 3).
	Bound int `json:"bound"`
	// Outcome says what ended the measurement: broken (Fraction = M/n),
	// held (nothing broke it and no fit failed up to Bound: Fraction =
	// Bound/n, a lower bound that the equivariance bound makes exact), or
	// fit-failed (a fit failed at FailedM before anything broke it: the
	// breakdown point is at least FailedM/n and, when M > 0, at most M/n).
	Outcome BreakdownOutcome `json:"outcome"`
	// M is the smallest breaking m over all directions (0: none broke it).
	M int `json:"m"`
	// Direction names the direction that broke it at M.
	Direction string `json:"direction"`
	// FailedM is the smallest m at which a fit failed in any direction (0:
	// none), FailedDirection where, FailedStatus with which status.
	FailedM         int    `json:"failed_m"`
	FailedDirection string `json:"failed_direction,omitempty"`
	FailedStatus    string `json:"failed_status,omitempty"`
	// Fraction is the reported breakdown point: M/n when broken, Bound/n
	// when held, FailedM/n when a fit failed first. It never exceeds
	// Bound/n.
	Fraction float64 `json:"fraction"`
	// AtLeast is set when Fraction is a lower bound (held, fit-failed).
	AtLeast bool `json:"at_least"`
	// Directions holds the outcome in every direction.
	Directions []DirectionBreakdown `json:"directions"`
	// Method says how the figure was found, in a sentence.
	Method string `json:"method"`
}

// equivarianceBound returns ⌊(n−p)/2⌋+1, the number of replaced
// observations that can break any regression equivariant estimator
// (Rousseeuw & Leroy (1987), Robust Regression and Outlier Detection,
// Wiley, ch. 3).
func equivarianceBound(n, p int) int { return (n-p)/2 + 1 }

// scanDirection tries m = 1, 2, ..., limit in turn and stops at the first m
// that breaks the estimate. Fit failures are recorded and the scan goes on
// past them, since a failure shows neither resistance nor breakdown. No
// monotonicity in m is assumed.
func scanDirection(limit int, try func(m int) (BreakdownOutcome, string)) DirectionBreakdown {
	var d DirectionBreakdown
	for m := 1; m <= limit; m++ {
		o, status := try(m)
		d.Scanned = m
		d.Trials = append(d.Trials, BreakdownTrial{M: m, Outcome: o, Status: status})
		switch o {
		case BreakdownFitFailed:
			if d.FailedM == 0 {
				d.FailedM = m
			}
		case BreakdownBroken:
			d.M = m
			return d
		}
	}
	return d
}

// summariseDirections combines the directions' scans into the
// measurement's outcome.
func summariseDirections(rb *ReplacementBreakdown) {
	for _, d := range rb.Directions {
		if d.M > 0 && (rb.M == 0 || d.M < rb.M) {
			rb.M, rb.Direction = d.M, d.Direction
		}
		if d.FailedM > 0 && (rb.FailedM == 0 || d.FailedM < rb.FailedM) {
			rb.FailedM, rb.FailedDirection = d.FailedM, d.Direction
			for _, t := range d.Trials {
				if t.M == d.FailedM {
					rb.FailedStatus = t.Status
				}
			}
		}
	}
	n := float64(rb.N)
	switch {
	case rb.FailedM > 0 && (rb.M == 0 || rb.FailedM <= rb.M):
		rb.Outcome, rb.Fraction, rb.AtLeast = BreakdownFitFailed, float64(rb.FailedM)/n, true
	case rb.M > 0:
		rb.Outcome, rb.Fraction, rb.AtLeast = BreakdownBroken, float64(rb.M)/n, false
	default:
		rb.Outcome, rb.Fraction, rb.AtLeast = BreakdownHeld, float64(rb.Bound)/n, true
	}
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
	rng := rand.New(rand.NewPCG(breakdownSearchStream(opt.Seed)))
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
	bound := equivarianceBound(n, p)

	var out []ReplacementBreakdown
	xm := mat.NewDense(n, p, nil)
	ym := make([]float64, n)
	for _, ne := range ests {
		var fitter estimators.Fitter = ne.Estimator
		if ne.Fitter != nil {
			fitter = ne.Fitter
		}
		var ws estimators.Workspace
		var res estimators.Result
		// fit returns the coefficients, or the status that made the fit
		// unusable ("error" when Fit refused the data).
		fit := func(xx *mat.Dense, yy []float64) ([]float64, string) {
			ws.SeedRandom(breakdownFitStream(opt.Seed))
			if err := fitter.Fit(xx, yy, &ws, &res); err != nil {
				return nil, "error"
			}
			if !res.Status.Converged() {
				return nil, res.Status.String()
			}
			if !finite(res.Coefficients) {
				return nil, estimators.NonFinite.String()
			}
			return append([]float64(nil), res.Coefficients...), ""
		}
		clean, bad := fit(x, y)
		if bad != "" {
			return nil, fmt.Errorf("estimator %s does not fit the clean data (%s)", ne.Label, bad)
		}
		far := 1e3 * (1 + floats.Norm(clean, 2))
		// try reports what m replacements along d do to the estimate.
		try := func(d direction, m int) (BreakdownOutcome, string) {
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
				b, bad := fit(xm, ym)
				if bad != "" {
					return BreakdownFitFailed, bad
				}
				dist[s] = floats.Distance(b, clean, 2)
			}
			if dist[1] >= 10*dist[0] && dist[1] > far {
				return BreakdownBroken, ""
			}
			return BreakdownHeld, ""
		}
		rb := ReplacementBreakdown{Estimator: ne.Label, N: n, P: p, Bound: bound,
			Method: fmt.Sprintf("m of %d observations moved together to x = centre + t·spread·d, y = centre + t²·spread for t = %g and %g along %d directions d; broken when the estimate moves at least 10 times further and ends beyond 1000 (1 + ‖clean estimate‖); a fit ending in a failure status counts as neither; every m from 1 up to the equivariance bound ⌊(n−p)/2⌋+1 = %d scanned (no monotonicity assumed), stopping at the smallest m broken so far", n, opt.Near, opt.Far, len(dirs), bound)}
		limit := bound
		for _, d := range dirs {
			db := scanDirection(limit, func(m int) (BreakdownOutcome, string) { return try(d, m) })
			db.Direction = d.name
			rb.Directions = append(rb.Directions, db)
			if db.M > 0 {
				// A larger m elsewhere cannot lower the smallest.
				limit = db.M - 1
			}
		}
		summariseDirections(&rb)
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
