package main

import (
	"encoding/json"
	"math"
	"strings"
	"testing"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/internal/refdata"
	"gonum.org/v1/gonum/mat"
)

// TestFitSDivisor: --s-divisor reaches the S-scale (the estimators
// package checks the values themselves), the JSON reports the S
// refinement, and the flag is refused where no S-scale is computed.
func TestFitSDivisor(t *testing.T) {
	const file = "../../testdata/refdata/stackloss.csv"
	scales := map[string]float64{}
	for _, div := range []string{"n", "n-p"} {
		code, out, errs := rhomark(t, "fit", file, "--y", "stack.loss", "--method", "mm-estimate", "--s-divisor", div, "--json")
		if code != exitOK {
			t.Fatalf("exit %d: %s", code, errs)
		}
		var got fitOutput
		if err := json.Unmarshal([]byte(out), &got); err != nil {
			t.Fatal(err)
		}
		f := got.Fits[0]
		if f.SRefinement != "converged" || f.SSteps == 0 {
			t.Errorf("divisor %s: S refinement %q after %d steps", div, f.SRefinement, f.SSteps)
		}
		if len(got.Estimator.Tuning) != 1 || got.Estimator.Tuning[0] != estimators.DefaultMMTuning {
			t.Errorf("MM tuning %v, want the exact 95%% constant", got.Estimator.Tuning)
		}
		scales[div] = float64(f.Scale)
	}
	// The same fit through the package, with the same seed.
	tab, err := refdata.ReadCSV("stackloss.csv")
	if err != nil {
		t.Fatal(err)
	}
	x := mat.NewDense(len(tab.Rows), 4, nil)
	y := make([]float64, len(tab.Rows))
	for i, r := range tab.Rows {
		x.SetRow(i, []float64{1, r[0], r[1], r[2]})
		y[i] = r[3]
	}
	var ws estimators.Workspace
	var res estimators.Result
	ws.SeedRandom(1, 0)
	e := estimators.Estimator{Method: estimators.MethodMM, Resampling: estimators.Resampling{SDivisor: estimators.DivideByNMinusP}}
	if err := e.Fit(x, y, &ws, &res); err != nil {
		t.Fatal(err)
	}
	if math.Abs(scales["n-p"]-res.Scale) > 1e-12*res.Scale || !(scales["n-p"] > scales["n"]) {
		t.Errorf("scales %v; package gives %v with n − p", scales, res.Scale)
	}
	for _, args := range [][]string{
		{"--method", "lts", "--s-divisor", "n-p"},
		{"--method", "irls", "--s-divisor", "n-p"},
		{"--method", "s-estimate", "--s-divisor", "p"},
	} {
		code, _, errs := rhomark(t, append([]string{"fit", file, "--y", "stack.loss"}, args...)...)
		if code != exitUsage || !strings.Contains(errs, "--s-divisor") {
			t.Errorf("%v: exit %d, stderr %q", args, code, errs)
		}
	}
}
