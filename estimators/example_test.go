package estimators_test

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/psi"
)

// A flow meter read against five reference volumes, twice each; one reading
// is a stuck-sensor spike. Huber's M-estimator by IRLS down-weights it.
func ExampleEstimator_Fit() {
	volume := []float64{5, 10, 20, 50, 100, 5, 10, 20, 50, 100}
	reading := []float64{5.21, 10.05, 19.93, 49.35, 98.21, 5.12, 16.40, 19.95, 49.40, 98.30}
	x := mat.NewDense(len(volume), 2, nil)
	for i, v := range volume {
		x.SetRow(i, []float64{1, v})
	}
	e := estimators.Estimator{
		Method: estimators.MethodIRLS,
		Psi:    psi.Huber{K: 1.345},
	}
	var ws estimators.Workspace
	var res estimators.Result
	if err := e.Fit(x, reading, &ws, &res); err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("offset %.3f, gain %.4f (%v)\n", res.Coefficients[0], res.Coefficients[1], res.Status)
	// Output:
	// offset 0.333, gain 0.9796 (converged-change)
}

// Least squares by QR, with the status saying the solution is direct.
func ExampleFit() {
	x := mat.NewDense(4, 2, []float64{1, 0, 1, 1, 1, 2, 1, 3})
	y := []float64{1, 3, 5, 7}
	res, err := estimators.Fit(estimators.Estimator{Method: estimators.MethodLS}, x, y)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%.6f %.6f %v\n", res.Coefficients[0], res.Coefficients[1], res.Status)
	// Output:
	// 1.000000 2.000000 solved
}
