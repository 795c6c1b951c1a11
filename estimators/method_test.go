package estimators

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/psi"
)

// The interfaces a harness uses to run and describe an estimator.
var (
	_ Fitter          = Estimator{}
	_ NormalTheory    = Estimator{}
	_ PsiCurves       = Estimator{}
	_ StandardErrorer = Estimator{}
)

// TestMethodTable: the registered methods run from 0 without gaps, their
// names are unique and parse back, and their properties agree with one
// another.
func TestMethodTable(t *testing.T) {
	ms := Methods()
	names := map[string]bool{}
	for i, m := range ms {
		info := m.Info()
		if int(m) != i {
			t.Errorf("method %d is listed at %d: the constants must run from 0 without gaps", m, i)
		}
		if info.Name == "" || names[info.Name] {
			t.Errorf("method %d: empty or repeated name %q", m, info.Name)
		}
		names[info.Name] = true
		if got, ok := ParseMethod(info.Name); !ok || got != m {
			t.Errorf("ParseMethod(%q) = %v, %v", info.Name, got, ok)
		}
		if info.OwnStart != "" && !info.TakesPsi {
			t.Errorf("%s: OwnStart without TakesPsi", m)
		}
		if (info.DefaultPsi == nil) != (info.DefaultFamily == "") {
			t.Errorf("%s: DefaultPsi %v with DefaultFamily %q", m, info.DefaultPsi, info.DefaultFamily)
		}
		if info.DefaultFamily != "" {
			f, ok := psi.LookupFamily(info.DefaultFamily)
			if !ok {
				t.Fatalf("%s: unknown default family %q", m, info.DefaultFamily)
			}
			fn, err := f.New(nil)
			if err != nil || fn != info.DefaultPsi {
				t.Errorf("%s: family %s at its defaults is %v (%v), DefaultPsi is %v", m, info.DefaultFamily, fn, err, info.DefaultPsi)
			}
		}
	}
	if u := Method(len(ms)); u.String() != "unknown-method" || u.Direct() || u.TakesPsi() {
		t.Errorf("method %d past the table: %q", u, u.String())
	}
	if _, err := Fit(Estimator{Method: Method(len(ms))}, mat.NewDense(2, 1, []float64{1, 2}), []float64{1, 2}); err == nil {
		t.Error("fit with an unregistered method: no error")
	}
}

// TestNormalEfficiency checks the asymptotic efficiencies at the normal
// the methods declare.
func TestNormalEfficiency(t *testing.T) {
	const n, p = 1000, 3
	for _, tc := range []struct {
		e    Estimator
		want float64
		tol  float64
	}{
		{Estimator{}, 1, 0},
		// 95% at the default constants of Huber and of MM's bisquare
		// (common practice; the constants are tuned for it).
		{Estimator{Method: MethodIRLS, Psi: psi.Huber{K: 1.345}}, 0.95, 5e-4},
		{Estimator{Method: MethodMM}, 0.95, 1e-6},
		// A fixed scale equal to the noise SD is the same as a consistent one.
		{Estimator{Method: MethodNewton, Psi: psi.Huber{K: 1.345}, Scale: Scale{Rule: ScaleFixed, Value: 2}}, 0.95, 5e-4},
		// The median's 2/π (common practice).
		{Estimator{Method: MethodLAD}, 2 / math.Pi, 0},
		// The S-estimate of 50% breakdown has efficiency about 28.7%
		// (Rousseeuw & Yohai (1984), "Robust regression by means of
		// S-estimators", from memory).
		{Estimator{Method: MethodS}, 0.287, 1e-3},
		// LTS with h = n/2 about 7.1% (common practice).
		{Estimator{Method: MethodLTS, Resampling: Resampling{H: n / 2}}, 0.071, 1e-3},
	} {
		if got := tc.e.NormalEfficiency(2, n, p); math.Abs(got-tc.want) > tc.tol {
			t.Errorf("%s: efficiency %.6g, want %.6g ± %g", tc.e.Method, got, tc.want, tc.tol)
		}
	}
	if got := (Estimator{Method: Method(-1)}).NormalEfficiency(1, n, p); !math.IsNaN(got) {
		t.Errorf("unknown method: efficiency %v, want NaN", got)
	}
}

// TestWeights checks each method's per-observation weights.
func TestWeights(t *testing.T) {
	r := []float64{0.5, -3, 1, 8, -0.2}
	nan := math.NaN()
	h := psi.Huber{K: 1.345}
	b := psi.Bisquare{C: DefaultSTuning}
	mm := psi.Bisquare{C: DefaultMMTuning}
	for _, tc := range []struct {
		e     Estimator
		scale float64
		want  []float64
	}{
		{Estimator{}, 1, []float64{1, 1, 1, 1, 1}},
		{Estimator{Method: MethodLAD}, 1, []float64{nan, nan, nan, nan, nan}},
		{Estimator{Method: MethodIRLS, Psi: h}, 2, []float64{h.Weight(0.25), h.Weight(-1.5), h.Weight(0.5), h.Weight(4), h.Weight(-0.1)}},
		{Estimator{Method: MethodIRLS, Psi: h}, 0, []float64{nan, nan, nan, nan, nan}},
		{Estimator{Method: MethodMM}, 1, []float64{mm.Weight(0.5), mm.Weight(-3), mm.Weight(1), mm.Weight(8), mm.Weight(-0.2)}},
		{Estimator{Method: MethodS}, 1, []float64{b.Weight(0.5), b.Weight(-3), b.Weight(1), b.Weight(8), b.Weight(-0.2)}},
		// h = (5+1+1)/2 = 3 kept: the three smallest |r|.
		{Estimator{Method: MethodLTS}, 1, []float64{1, 0, 1, 0, 1}},
	} {
		w := make([]float64, len(r))
		tc.e.Weights(r, tc.scale, 1, w)
		for i := range w {
			if w[i] != tc.want[i] && !(math.IsNaN(w[i]) && math.IsNaN(tc.want[i])) {
				t.Errorf("%s scale %v: weight %d is %v, want %v", tc.e.Method, tc.scale, i, w[i], tc.want[i])
			}
		}
	}
}

// TestEstimatorStandardErrors: the kind of interval comes with the
// standard errors, and NoInference without them.
func TestEstimatorStandardErrors(t *testing.T) {
	x := mat.NewDense(6, 2, []float64{1, 1, 1, 2, 1, 3, 1, 4, 1, 5, 1, 6})
	y := []float64{1.1, 2.3, 2.8, 4.2, 5.1, 5.8}
	for _, tc := range []struct {
		e    Estimator
		want Inference
	}{
		{Estimator{}, StudentT},
		{Estimator{Method: MethodIRLS, Psi: psi.Huber{K: 1.345}}, Wald},
		{Estimator{Method: MethodLAD}, NoInference},
	} {
		var ws Workspace
		var res Result
		if err := tc.e.Fit(x, y, &ws, &res); err != nil {
			t.Fatal(err)
		}
		se, want := make([]float64, 2), make([]float64, 2)
		ok := ws.StandardErrors(tc.e, x, &res, want)
		got := tc.e.StandardErrors(x, &ws, &res, se)
		if got != tc.want || ok != (tc.want != NoInference) {
			t.Errorf("%s: inference %d (workspace: %v), want %d", tc.e.Method, got, ok, tc.want)
		}
		for j := range se {
			if ok && se[j] != want[j] {
				t.Errorf("%s: standard error %d is %v, workspace gives %v", tc.e.Method, j, se[j], want[j])
			}
		}
	}
}

// TestInferenceQuantile checks the interval multipliers: the normal 97.5%
// quantile 1.959964 and Student's t on 10 degrees of freedom 2.228139
// (common practice; printed in every table of the two distributions).
func TestInferenceQuantile(t *testing.T) {
	for _, tc := range []struct {
		i    Inference
		want float64
	}{
		{StudentT, 2.228139},
		{Wald, 1.959964},
		{NoInference, 0},
	} {
		q, rule := tc.i.Quantile(0.975, 12, 2)
		if math.Abs(q-tc.want) > 5e-7 || (rule == "") != (tc.i == NoInference) {
			t.Errorf("inference %d: quantile %.7g (%q), want %.7g", tc.i, q, rule, tc.want)
		}
	}
}
