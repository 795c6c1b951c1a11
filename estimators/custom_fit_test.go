package estimators

import (
	"math"
	"testing"

	"github.com/rhomark/rhomark/psi"
)

// TestCustomFitMatchesBuiltin: Huber's psi written as an expression gives the
// fit of the built-in Huber by IRLS and by Newton. Fits stop at a relative
// change of 1e-12, so coefficients near 1 agree to 1e-8.
func TestCustomFitMatchesBuiltin(t *testing.T) {
	c, err := psi.NewCustom(psi.CustomSpec{Psi: "abs(r) <= k ? r : k * sign(r)", Constants: []psi.Constant{{Name: "k", Value: 1.345}}, Kinks: []float64{1.345}})
	if err != nil {
		t.Fatal(err)
	}
	h := psi.Huber{K: 1.345}
	x, y := simulated(4, 80, 3, 0.1)
	for _, m := range []Method{MethodIRLS, MethodNewton} {
		s := Settings{ChangeTol: 1e-12}
		a, err := Fit(Estimator{Method: m, Psi: c, Settings: s}, x, y)
		if err != nil {
			t.Fatal(err)
		}
		b, _ := Fit(Estimator{Method: m, Psi: h, Settings: s}, x, y)
		if !a.Status.Converged() {
			t.Fatalf("%v: custom fit %v", m, a.Status)
		}
		for j := range a.Coefficients {
			if math.Abs(a.Coefficients[j]-b.Coefficients[j]) > 1e-8 {
				t.Errorf("%v coefficient %d: custom %v built-in %v", m, j, a.Coefficients[j], b.Coefficients[j])
			}
		}
	}
}
