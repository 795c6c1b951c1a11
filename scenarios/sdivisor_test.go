package scenarios

import (
	"testing"

	"github.com/rhomark/rhomark/estimators"
)

// TestSDivisorBuild: resampling.s-divisor reaches the estimator; without
// it the divisor is n.
func TestSDivisorBuild(t *testing.T) {
	src := `
model: {n: 30, columns: [{name: volume}]}
noise: {dist: normal}
estimators:
  - {label: mm-np, method: mm-estimate, resampling: {s-divisor: n-p}}
  - {label: s-n, method: s-estimate, resampling: {s-divisor: n}}
  - {label: mm, method: mm-estimate}
`
	st, err := Parse("divisor.yaml", []byte(src), Limits{})
	if err != nil {
		t.Fatal(err)
	}
	for i, want := range []estimators.ScaleDivisor{estimators.DivideByNMinusP, estimators.DivideByN, estimators.DivideByN} {
		e, err := st.Base.Estimators[i].Build()
		if err != nil {
			t.Fatal(err)
		}
		if e.Resampling.SDivisor != want {
			t.Errorf("estimator %d: divisor %v, want %v", i, e.Resampling.SDivisor, want)
		}
	}
}
