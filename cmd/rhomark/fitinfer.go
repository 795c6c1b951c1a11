package main

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
)

// addInference adds standard errors and 95% intervals to fj, from the same
// covariance estimate (Workspace.StandardErrors) and quantiles a run uses
// for its coverage: Student's t on n−p degrees of freedom for least
// squares, the normal quantile (Wald) for M-estimators. ws must hold the
// fit just made. Where there is no covariance estimate it says why.
func addInference(fj *fitJSON, est estimators.Estimator, x *mat.Dense, ws *estimators.Workspace, res *estimators.Result, names []string) {
	n, p := x.Dims()
	se := make([]float64, p)
	if !ws.StandardErrors(est, x, res, se) {
		fj.NoStandardErrors = est.NoStandardErrorsReason(res, n, p)
		return
	}
	q, rule := est.Method.Info().Inference.Quantile(0.975, n, p)
	fj.IntervalRule = rule
	fj.StandardErrors = map[string]jsonFloat{}
	fj.Intervals = map[string][2]jsonFloat{}
	for k, name := range names {
		b := res.Coefficients[k]
		fj.StandardErrors[name] = jsonFloat(se[k])
		fj.Intervals[name] = [2]jsonFloat{jsonFloat(b - q*se[k]), jsonFloat(b + q*se[k])}
	}
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
	w := make([]float64, n)
	est.Weights(r, sigma, p, w)
	out := make([]fitObservation, n)
	for i, v := range r {
		u := scaled(v)
		out[i] = fitObservation{Resid: jsonFloat(v), Scaled: jsonFloat(u), Weight: jsonFloat(w[i]), Flag: math.Abs(u) > cut}
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
