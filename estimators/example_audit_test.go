package estimators_test

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/psi"
)

// benchRuns is a flow-meter calibration bench: a meter read against six
// reference volumes (litres), twice each, and once more at three of them.
// At 10 L the sensor stuck and the meter read a spike.
func benchRuns() (*mat.Dense, []float64) {
	volume := []float64{5, 10, 20, 50, 100, 200, 5, 10, 20, 50, 100, 200, 20, 50, 100}
	reading := []float64{5.31, 10.18, 19.93, 49.42, 98.51, 196.52, 5.22, 31.70, 20.08, 49.31, 98.42, 196.71, 20.01, 49.55, 98.36}
	x := mat.NewDense(len(volume), 2, nil)
	for i, v := range volume {
		x.SetRow(i, []float64{1, v})
	}
	return x, reading
}

// Audit a Huber fit of the bench's calibration line stopped at a loose
// and at the default change tolerance: how far each stopped from the
// fixed point, in standard errors, how fast IRLS contracted, and what each
// tolerance from 1e-2 to 1e-9 would have cost and left.
func ExampleAuditWorkspace_Audit() {
	x, reading := benchRuns()
	var (
		aw  estimators.AuditWorkspace
		ws  estimators.Workspace
		res estimators.Result
		out estimators.Audit
	)
	for _, tol := range []float64{1e-3, 1e-8} {
		e := estimators.Estimator{
			Method:   estimators.MethodIRLS,
			Psi:      psi.Huber{K: 1.345},
			Settings: estimators.Settings{ChangeTol: tol},
		}
		if err := aw.Traced(e).Fit(x, reading, &ws, &res); err != nil {
			fmt.Println(err)
			return
		}
		if err := aw.Audit(e, x, reading, &res, &out); err != nil {
			fmt.Println(err)
			return
		}
		fmt.Printf("tolerance %g: %v after %d iterations, gain %.4f\n", tol, res.Status, res.Iterations, res.Coefficients[1])
		fmt.Printf("  fixed point %v, error %.1g SE\n", out.End, out.MaxErrorSE)
		fmt.Printf("  linear rate %.1f\n", out.Rate.Value)
	}
	fmt.Println("tolerance  iterations  error (SE)")
	for _, row := range out.Tolerances[:8:8] {
		fmt.Printf("%-9g  %10d  %.1g\n", row.Tolerance, row.Iterations, row.MaxErrorSE)
	}
	// Output:
	// tolerance 0.001: converged-change after 5 iterations, gain 0.9810
	//   fixed point stalled, error 0.01 SE
	//   linear rate 0.3
	// tolerance 1e-08: converged-change after 14 iterations, gain 0.9810
	//   fixed point stalled, error 7e-08 SE
	//   linear rate 0.3
	// tolerance  iterations  error (SE)
	// 0.01                4  0.04
	// 0.001               5  0.01
	// 0.0001              7  0.0007
	// 1e-05               9  5e-05
	// 1e-06              11  4e-06
	// 1e-07              12  9e-07
	// 1e-08              14  7e-08
	// 1e-09              16  5e-09
}

// Refit the bench's calibration line with the bisquare from least
// squares, LAD and the S-estimate at the S-scale. Least squares, pulled
// by the spike, leaves every reading beyond the bisquare's rejection point
// at that small scale, so IRLS from it has no weights to work with; LAD
// and the S-estimate reach the same root.
func ExampleFindRoots() {
	x, reading := benchRuns()
	e := estimators.Estimator{Method: estimators.MethodMM}
	var ws estimators.Workspace
	roots, err := estimators.FindRoots(e, x, reading, estimators.RootOptions{}, &ws)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, r := range roots.Roots {
		fmt.Printf("from %-10v %-16v gain %.4f objective %.3f root %d\n", r.Start, r.Status, r.Coefficients[1], r.Objective, r.Group)
	}
	fmt.Printf("distinct roots: %d (scale: %v)\n", roots.Distinct, roots.ScaleSource)
	// Output:
	// from ls         zero-weights     gain 0.9622 objective NaN root -1
	// from lad        converged-change gain 0.9811 objective 9.058 root 0
	// from s-estimate converged-change gain 0.9811 objective 9.058 root 0
	// distinct roots: 1 (scale: s-scale)
}
