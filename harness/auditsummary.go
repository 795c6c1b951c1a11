package harness

import (
	"math"
	"slices"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/results"
)

// auditSummary fills the solver study of estimator j of the cell of plan p
// into c, from its tally; it does nothing for an estimator not studied.
func auditSummary(c *results.Convergence, p *cellPlan, j int, et *estTally, names []string) {
	t := et.aud
	if t == nil {
		return
	}
	if p.aud.audits(j) {
		c.StopError, c.Rate, c.Tolerances = t.summarise(p.ests[j], names)
	}
	if t.roots != nil {
		c.Roots = t.roots.summarise()
	}
}

// median returns the median of xs (the mean of the two middle values when
// their number is even), sorting xs; NaN when empty.
func median(xs []float64) float64 {
	if len(xs) == 0 {
		return math.NaN()
	}
	slices.Sort(xs)
	h := len(xs)
	if h%2 == 1 {
		return xs[h/2]
	}
	return (xs[h/2-1] + xs[h/2]) / 2
}

// column returns the finite values of column k of the records, in a new
// slice.
func (t *auditTally) column(k int) []float64 {
	w := auditWidth(t.p)
	var out []float64
	for i := k; i < len(t.values); i += w {
		if v := t.values[i]; !math.IsNaN(v) && !math.IsInf(v, 0) {
			out = append(out, v)
		}
	}
	return out
}

// summarise turns the audit records into the stopping-rule error, the
// median rate and the tolerance table.
func (t *auditTally) summarise(e estimators.Estimator, names []string) (*results.StopError, *results.ObservedRate, []results.ToleranceCost) {
	w := auditWidth(t.p)
	fits := int64(len(t.values) / w)
	worst := t.column(0)
	se := &results.StopError{Audited: int64(len(worst)), Direct: t.direct > 0 && t.direct == fits,
		Undefined: fits - int64(len(worst)), NotAudited: t.notAudited, AtCap: t.atCap}
	for _, v := range worst {
		if v > results.StopErrorThreshold {
			se.OverCount++
		}
	}
	se.Max = results.Num(math.NaN())
	if len(worst) > 0 {
		se.Max = results.Num(slices.Max(worst))
		se.Over = results.Num(float64(se.OverCount) / float64(len(worst)))
	} else {
		se.Over = results.Num(math.NaN())
	}
	se.Median = results.Num(median(worst))
	if se.Undefined > 0 {
		var top int64
		for r := estimators.SEDefined + 1; int(r) < numSEReasons; r++ {
			if n := t.seReasons[r]; n > top {
				top, se.UndefinedReason = n, r.String()
			}
		}
	}
	for k, name := range names {
		col := t.column(1 + k)
		mx := math.NaN()
		if len(col) > 0 {
			mx = slices.Max(col)
		}
		se.Coefficients = append(se.Coefficients, results.CoefficientStopError{Name: name, Median: results.Num(median(col)), Max: results.Num(mx)})
	}
	if se.Direct {
		return se, nil, nil
	}

	rates := t.column(1 + t.p)
	rate := &results.ObservedRate{Kind: estimators.RateLinear.String(), Median: results.Num(median(rates)), Fits: int64(len(rates))}
	if e.Method == estimators.MethodNewton {
		rate.Kind = estimators.RateOrder.String()
		if e.Scale.Rule == estimators.ScaleMAD {
			rate.Note = "the MAD is re-estimated at every step and Newton's Jacobian leaves out its dependence on the coefficients, so Newton converges about linearly here (order near 1, not 2)"
		}
	}

	var tols []results.ToleranceCost
	for i := range estimators.NumAuditTolerances {
		its, errs := t.column(2+t.p+2*i), t.column(3+t.p+2*i)
		row := results.ToleranceCost{Tolerance: estimators.AuditTolerance(i), Reached: int64(len(its)),
			MedianIterations: results.Num(median(its)), MedianErrorSE: results.Num(math.NaN()),
			MaxErrorSE: results.Num(math.NaN()), Over: results.Num(math.NaN())}
		if len(errs) > 0 {
			over := 0
			for _, v := range errs {
				if v > results.StopErrorThreshold {
					over++
				}
			}
			row.MaxErrorSE = results.Num(slices.Max(errs))
			row.Over = results.Num(float64(over) / float64(len(errs)))
			row.MedianErrorSE = results.Num(median(errs))
		}
		tols = append(tols, row)
	}
	return se, rate, tols
}

// summarise turns the root searches into their summary.
func (r *rootTally) summarise() *results.RootStudy {
	out := &results.RootStudy{Searched: r.searched, Failed: r.failed, MultipleCount: r.multiple,
		Multiple: results.Wilson(r.multiple, r.searched-r.failed)}
	for s := range rootStarts {
		st := results.RootStart{Start: estimators.RootStart(s).String(), Converged: r.converged[s], Best: r.best[s],
			BestRate: results.Num(float64(r.best[s]) / float64(r.multiple))}
		if r.multiple == 0 {
			st.BestRate = results.Num(math.NaN())
		}
		for _, status := range estimators.Statuses() {
			if k := r.statuses[s][int(status)]; k > 0 && !status.Converged() {
				st.Failures = append(st.Failures, results.StatusCount{Status: status.String(), Count: k, Rate: results.Wilson(k, r.searched-r.failed)})
			}
		}
		n := r.converged[s]
		for k := range r.s1[s] {
			m := results.Measure{Value: results.Num(math.NaN()), MCSE: results.Num(math.NaN())}
			if n > 0 {
				m.Value = results.Num(r.s1[s][k].Float64() / float64(n))
			}
			if n > 1 {
				v := centred(&r.s1[s][k], &r.s2[s][k], n) / float64(n-1)
				m.MCSE = results.Num(math.Sqrt(math.Max(0, v) / float64(n)))
			}
			st.Bias = append(st.Bias, m)
		}
		out.Starts = append(out.Starts, st)
	}
	return out
}
