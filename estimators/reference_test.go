package estimators

import (
	"math"
	"slices"
	"testing"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/psi"
)

// Straightforward reference searches for the S and LTS estimates: every
// elemental subset of a small dataset, each refined to convergence, with
// gonum's dense solvers and the psi package's bisquare, sharing no code
// with fast-S and FAST-LTS. The fast searches draw 500 random subsets and
// refine only the best few, so they must find the same minimum on data
// where it is well separated from the others.

// combinations calls f with every k-subset of 0..n-1 in lexicographic
// order.
func combinations(n, k int, f func([]int)) {
	idx := make([]int, k)
	for i := range idx {
		idx[i] = i
	}
	for {
		f(idx)
		i := k - 1
		for i >= 0 && idx[i] == n-k+i {
			i--
		}
		if i < 0 {
			return
		}
		idx[i]++
		for j := i + 1; j < k; j++ {
			idx[j] = idx[j-1] + 1
		}
	}
}

// weightedLS returns argmin Σ w_i (y_i − x_iᵀβ)² by QR of W^½X, or false.
func weightedLS(x *mat.Dense, y, w []float64, rows []int) ([]float64, bool) {
	_, p := x.Dims()
	if rows == nil {
		rows = make([]int, len(y))
		for i := range rows {
			rows[i] = i
		}
	}
	a := mat.NewDense(len(rows), p, nil)
	b := mat.NewVecDense(len(rows), nil)
	for k, i := range rows {
		sw := 1.0
		if w != nil {
			sw = math.Sqrt(w[i])
		}
		for j := 0; j < p; j++ {
			a.Set(k, j, sw*x.At(i, j))
		}
		b.SetVec(k, sw*y[i])
	}
	var qr mat.QR
	qr.Factorize(a)
	var beta mat.VecDense
	if err := qr.SolveVecTo(&beta, false, b); err != nil {
		return nil, false
	}
	return beta.RawVector().Data, true
}

// refResiduals returns y − Xβ, each residual summed in column order.
func refResiduals(x *mat.Dense, y, beta []float64) []float64 {
	r := make([]float64, len(y))
	for i := range y {
		r[i] = y[i]
		for j, b := range beta {
			r[i] -= x.At(i, j) * b
		}
	}
	return r
}

// refMScale solves (1/d) Σ rho(r_i/s) = b by bisection on log s, over
// [1e-6, 1e6] or, given a previous scale s0 > 0, over [s0/4, 4·s0] when
// the root lies inside it, to about 1e-15 relative.
func refMScale(bq psi.Bisquare, r []float64, b, d, s0 float64) float64 {
	f := func(s float64) float64 {
		var sum float64
		for _, v := range r {
			sum += bq.Rho(v / s)
		}
		return sum/d - b
	}
	lo, hi, steps := 1e-6, 1e6, 72
	if s0 > 0 && f(s0/4) > 0 && f(4*s0) <= 0 {
		lo, hi, steps = s0/4, 4*s0, 52
	}
	for k := 0; k < steps; k++ {
		mid := math.Sqrt(lo * hi)
		if f(mid) > 0 {
			lo = mid
		} else {
			hi = mid
		}
	}
	return math.Sqrt(lo * hi)
}

// refS returns the S-estimate as the smallest M-scale reached from every
// elemental subset by I-steps (weighted least squares with bisquare
// weights at the current M-scale) iterated until the coefficients change
// by less than 1e-13 relative.
func refS(x *mat.Dense, y []float64) (best []float64, bestScale float64) {
	n, p := x.Dims()
	bq := psi.Bisquare{C: DefaultSTuning}
	b := psi.ScaleConsistency(bq)
	d := DivideByN.divisor(n, p)
	bestScale = math.Inf(1)
	combinations(n, p, func(rows []int) {
		beta, ok := weightedLS(x, y, nil, rows)
		if !ok {
			return
		}
		w := make([]float64, n)
		s := 0.0
		for step := 0; step < 2000; step++ {
			r := refResiduals(x, y, beta)
			s = refMScale(bq, r, b, d, s)
			for i, v := range r {
				w[i] = bq.Weight(v / s)
			}
			next, ok := weightedLS(x, y, w, nil)
			if !ok {
				return
			}
			change := 0.0
			for j := range next {
				change = math.Max(change, math.Abs(next[j]-beta[j]))
			}
			beta = next
			if change <= 1e-13*math.Max(1, floats.Norm(beta, math.Inf(1))) {
				break
			}
		}
		if s := refMScale(bq, refResiduals(x, y, beta), b, d, s); s < bestScale {
			best, bestScale = beta, s
		}
	})
	return best, bestScale
}

// refLTS returns the LTS estimate as the smallest objective reached from
// every elemental subset by C-steps (least squares on the h rows with the
// smallest squared residuals, found by sorting) until the subset repeats.
func refLTS(x *mat.Dense, y []float64) (best []float64, bestObj float64) {
	n, p := x.Dims()
	h := Resampling{}.LTSKeep(n, p)
	bestObj = math.Inf(1)
	order := make([]int, n)
	combinations(n, p, func(rows []int) {
		beta, ok := weightedLS(x, y, nil, rows)
		if !ok {
			return
		}
		var prev []int
		var obj float64
		for step := 0; step < 1000; step++ {
			r := refResiduals(x, y, beta)
			for i := range order {
				order[i] = i
			}
			slices.SortStableFunc(order, func(a, b int) int {
				switch {
				case r[a]*r[a] < r[b]*r[b]:
					return -1
				case r[a]*r[a] > r[b]*r[b]:
					return 1
				}
				return 0
			})
			sub := slices.Clone(order[:h])
			slices.Sort(sub)
			obj = 0
			for _, i := range sub {
				obj += r[i] * r[i]
			}
			if slices.Equal(sub, prev) {
				break
			}
			prev = sub
			if beta, ok = weightedLS(x, y, nil, sub); !ok {
				return
			}
		}
		if obj < bestObj {
			best, bestObj = beta, obj
		}
	})
	return best, bestObj
}

// TestSearchesMatchReference: on seeded datasets with 0, 10% and 20%
// vertical outliers and with 20% bad leverage points, the S and LTS
// estimates of the fast searches (default settings) equal those of the
// exhaustive reference searches to 1e-9 relative to max(1, |β|).
func TestSearchesMatchReference(t *testing.T) {
	if testing.Short() {
		t.Skip("exhaustive reference searches skipped with -short")
	}
	type dataset struct {
		name string
		x    *mat.Dense
		y    []float64
	}
	var sets []dataset
	for _, c := range []struct {
		seed     uint64
		n, p     int
		outliers float64
	}{{1, 30, 2, 0}, {2, 30, 2, 0.1}, {3, 30, 2, 0.2}, {4, 24, 3, 0.2}, {5, 40, 2, 0.2}} {
		x, y := simulated(c.seed, c.n, c.p, c.outliers)
		sets = append(sets, dataset{"vertical", x, y})
	}
	// 20% bad leverage points: x far out, y on another line.
	x, y := simulated(6, 30, 2, 0)
	for i := 0; i < 6; i++ {
		x.Set(i, 1, 8+float64(i)/4)
		y[i] = -2
	}
	sets = append(sets, dataset{"leverage", x, y})
	for k, ds := range sets {
		for _, m := range []Method{MethodS, MethodLTS} {
			var want []float64
			if m == MethodS {
				want, _ = refS(ds.x, ds.y)
			} else {
				want, _ = refLTS(ds.x, ds.y)
			}
			var ws Workspace
			var res Result
			ws.SeedRandom(uint64(k), 9)
			if err := (Estimator{Method: m}).Fit(ds.x, ds.y, &ws, &res); err != nil {
				t.Fatal(err)
			}
			tol := 1e-9 * math.Max(1, floats.Norm(want, math.Inf(1)))
			for j := range want {
				if d := math.Abs(res.Coefficients[j] - want[j]); !(d <= tol) {
					t.Errorf("set %d (%s) %v: coefficient %d = %.15g, reference %.15g (|Δ| %.2g)", k, ds.name, m, j, res.Coefficients[j], want[j], d)
				}
			}
		}
	}
}
