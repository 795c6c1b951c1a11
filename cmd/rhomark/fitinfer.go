package main

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/psi"
)

// describeFitRules says in words where a fit of est starts, how its scale
// is found and what its per-observation weight is.
func describeFitRules(est estimators.Estimator, psiText string, seed uint64) (start, scale, weights string) {
	sScale := func() string {
		return fmt.Sprintf("S-scale of the bisquare rho with c = %s, divisor %s",
			strconv.FormatFloat(est.Resampling.SScale().C, 'g', 5, 64), est.Resampling.SDivisor)
	}
	random := fmt.Sprintf("random elemental subsets (seed %d)", seed)
	switch est.Method {
	case estimators.MethodLS:
		return "none (solved directly by QR)", "√(RSS/(n−p))", "1 for every row (least squares)"
	case estimators.MethodLAD:
		return "none (exact vertex descent)", "MAD of the residuals (only to scale them)", "none (least absolute deviations has no weights)"
	case estimators.MethodS:
		return random + ", the best refined by IRLS", sScale(), "psi(u)/u of the S-scale's bisquare"
	case estimators.MethodLTS:
		return random + " and concentration steps", "√(mean of the h smallest squared residuals), consistency-corrected",
			"1 for the h rows with the smallest |residual|, 0 for the others"
	case estimators.MethodMM:
		return "S-estimate from " + random, "the S-estimate's scale, held fixed (" + sScale() + ")", "psi(u)/u of " + psiText
	}
	start = est.StartFrom.String() + " estimate"
	switch est.StartFrom {
	case estimators.MethodS, estimators.MethodMM, estimators.MethodLTS:
		start += " from " + random
	}
	switch est.Scale.Rule {
	case estimators.ScaleFixed:
		scale = "fixed at " + strconv.FormatFloat(est.Scale.Value, 'g', -1, 64)
	case estimators.ScaleStart:
		scale = "held at the start's scale"
	default:
		scale = "MAD of the residuals (median |r| / 0.6745), re-estimated at each iteration"
	}
	return start, scale, "psi(u)/u of " + psiText
}

// addInference adds standard errors and 95% intervals to fj, from the same
// covariance estimate (Workspace.StandardErrors) and quantiles a run uses
// for its coverage: Student's t on n−p degrees of freedom for least
// squares, the normal quantile (Wald) for M-estimators. ws must hold the
// fit just made. Where there is no covariance estimate it says why.
func addInference(fj *fitJSON, est estimators.Estimator, x *mat.Dense, ws *estimators.Workspace, res *estimators.Result, names []string) {
	n, p := x.Dims()
	se := make([]float64, p)
	if !ws.StandardErrors(est, x, res, se) {
		fj.NoStandardErrors = noSEReason(est, res, n, p)
		return
	}
	q := distuv.UnitNormal.Quantile(0.975)
	fj.IntervalRule = fmt.Sprintf("Wald: estimate ± %.4g × standard error from Huber's covariance with his small-sample correction", q)
	if est.Method == estimators.MethodLS {
		q = distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(n - p)}.Quantile(0.975)
		fj.IntervalRule = fmt.Sprintf("Student t on n−p = %d degrees of freedom: estimate ± %.4g × standard error", n-p, q)
	}
	fj.StandardErrors = map[string]jsonFloat{}
	fj.Intervals = map[string][2]jsonFloat{}
	for k, name := range names {
		b := res.Coefficients[k]
		fj.StandardErrors[name] = jsonFloat(se[k])
		fj.Intervals[name] = [2]jsonFloat{jsonFloat(b - q*se[k]), jsonFloat(b + q*se[k])}
	}
}

// noSEReason says why a fit has no standard errors.
func noSEReason(est estimators.Estimator, res *estimators.Result, n, p int) string {
	switch {
	case est.Method == estimators.MethodS || est.Method == estimators.MethodLTS || est.Method == estimators.MethodLAD:
		return fmt.Sprintf("rhomark has no covariance estimate for %s fits (a run's coverage leaves them out too)", est.Method)
	case !res.Status.Converged():
		return "the fit did not converge (" + res.Status.String() + ")"
	case n <= p:
		return fmt.Sprintf("n = %d rows leave no degrees of freedom for %d coefficients", n, p)
	case est.Method != estimators.MethodLS && psi.Discontinuous(est.MStepPsi()):
		return "psi jumps: the mean of psi' misses the jumps' share of E[psi'], so the covariance formula would understate the standard errors"
	}
	return "the covariance formula is undefined at this fit (the mean of psi' over the rows is not positive, or the scale is zero)"
}

// observations returns each row's residual, scaled residual, final weight
// and outlier flag (|residual/scale| > cut) after a fit of est. Row and
// Line are left for the caller.
func observations(est estimators.Estimator, x *mat.Dense, y []float64, res *estimators.Result, cut float64) []fitObservation {
	n, p := x.Dims()
	r := make([]float64, n)
	for i := range r {
		r[i] = y[i] - mat.Dot(x.RowView(i), mat.NewVecDense(p, res.Coefficients))
	}
	sigma := res.Scale
	scaled := func(v float64) float64 {
		if !(sigma > 0) || math.IsInf(sigma, 0) {
			return math.NaN()
		}
		return v / sigma
	}
	var weight func(i int, u float64) float64
	switch est.Method {
	case estimators.MethodLS:
		weight = func(int, float64) float64 { return 1 }
	case estimators.MethodLAD:
		weight = func(int, float64) float64 { return math.NaN() }
	case estimators.MethodS:
		psi := est.Resampling.SScale()
		weight = func(_ int, u float64) float64 { return psi.Weight(u) }
	case estimators.MethodLTS:
		kept := make([]bool, n)
		order := make([]int, n)
		for i := range order {
			order[i] = i
		}
		sort.SliceStable(order, func(a, b int) bool { return math.Abs(r[order[a]]) < math.Abs(r[order[b]]) })
		for _, i := range order[:min(n, est.Resampling.LTSKeep(n, p))] {
			kept[i] = true
		}
		weight = func(i int, _ float64) float64 {
			if kept[i] {
				return 1
			}
			return 0
		}
	default:
		psi := est.MStepPsi()
		weight = func(_ int, u float64) float64 {
			if math.IsNaN(u) {
				return math.NaN()
			}
			return psi.Weight(u)
		}
	}
	out := make([]fitObservation, n)
	for i, v := range r {
		u := scaled(v)
		out[i] = fitObservation{Resid: jsonFloat(v), Scaled: jsonFloat(u), Weight: jsonFloat(weight(i, u)), Flag: math.Abs(u) > cut}
	}
	return out
}

// weightsCSV renders every fitted row as CSV: group (with --group), row,
// line, residual, scaled residual, weight and outlier flag. Numbers are in
// the shortest form that reads back to the same float64; a missing value
// (no weight, no scale) is empty.
func weightsCSV(out fitOutput, withGroup bool) []byte {
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	head := []string{"row", "line", "residual", "scaled_residual", "weight", "outlier"}
	if withGroup {
		head = append([]string{"group"}, head...)
	}
	w.Write(head)
	f := func(v jsonFloat) string {
		if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			return ""
		}
		return strconv.FormatFloat(float64(v), 'g', -1, 64)
	}
	for _, fit := range out.Fits {
		for _, o := range fit.Observations {
			rec := []string{strconv.Itoa(o.Row), strconv.Itoa(o.Line), f(o.Resid), f(o.Scaled), f(o.Weight), strconv.FormatBool(o.Flag)}
			if withGroup {
				rec = append([]string{fit.Group}, rec...)
			}
			w.Write(rec)
		}
	}
	w.Flush()
	return b.Bytes()
}

// writeFitTable prints fits for a terminal: the rules in a header, then per
// fit the coefficients with their standard errors and 95% intervals, and
// the flagged rows.
func writeFitTable(e env, out fitOutput) {
	w := e.stdout
	es := out.Estimator
	title := es.Method
	if es.psiDesc != "" {
		title += " · " + es.psiDesc
	}
	fmt.Fprintf(w, "fit · %s\n", title)
	fmt.Fprintf(w, "  start    %s\n", es.Start)
	fmt.Fprintf(w, "  scale    %s\n", es.ScaleRule)
	fmt.Fprintf(w, "  weights  %s\n", es.Weights)
	fmt.Fprintf(w, "  outliers rows with |residual / scale| > %s\n", strconv.FormatFloat(es.OutlierCut, 'g', -1, 64))
	for _, f := range out.Fits {
		fmt.Fprintf(w, "\n ▸ group %s · %d rows · %s", f.Group, f.Rows, f.Status)
		if f.Error != "" {
			fmt.Fprintf(w, ": %s\n", f.Error)
			continue
		}
		if f.Iterations > 0 {
			fmt.Fprintf(w, " after %d iterations", f.Iterations)
		}
		fmt.Fprintf(w, " · scale %.6g", f.Scale)
		if f.SRefinement != "" {
			fmt.Fprintf(w, " · S refinement %s after %d steps", f.SRefinement, f.SSteps)
		}
		fmt.Fprintln(w)
		width := len("coefficient")
		for _, n := range f.Order {
			width = max(width, len(n))
		}
		if f.StandardErrors != nil {
			fmt.Fprintf(w, "   %-*s %14s %12s   %s\n", width, "coefficient", "estimate", "std. error", "95% interval")
		} else {
			fmt.Fprintf(w, "   %-*s %14s\n", width, "coefficient", "estimate")
		}
		for _, n := range f.Order {
			fmt.Fprintf(w, "   %-*s %14.8g", width, n, f.Coefficients[n])
			if f.StandardErrors != nil {
				iv := f.Intervals[n]
				fmt.Fprintf(w, " %12.5g   [%.6g, %.6g]", f.StandardErrors[n], iv[0], iv[1])
			}
			fmt.Fprintln(w)
		}
		if f.StandardErrors != nil {
			fmt.Fprintf(w, "   intervals: %s\n", f.IntervalRule)
		} else {
			fmt.Fprintf(w, "   no standard errors or intervals: %s\n", f.NoStandardErrors)
		}
		var flagged []string
		for _, o := range f.Observations {
			if o.Flag {
				s := fmt.Sprintf("row %d (r/σ %+.3g", o.Row, o.Scaled)
				if !math.IsNaN(float64(o.Weight)) {
					s += fmt.Sprintf(", weight %.3g", o.Weight)
				}
				flagged = append(flagged, s+")")
			}
		}
		if len(flagged) == 0 {
			fmt.Fprintf(w, "   outliers: none of %d rows\n", f.Rows)
		} else {
			fmt.Fprintf(w, "   outliers: %d of %d rows: %s\n", len(flagged), f.Rows, strings.Join(flagged, ", "))
		}
	}
	fmt.Fprintln(w, "\nEvery row's residual, weight and flag: --json, or --weights FILE.")
}
