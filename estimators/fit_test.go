package estimators

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/internal/refdata"
	"github.com/rhomark/rhomark/psi"
)

// stackloss returns the stack loss design (intercept, air flow, water
// temperature, acid concentration) and response.
func stackloss(t *testing.T) (*mat.Dense, []float64) {
	t.Helper()
	tab, err := refdata.ReadCSV("stackloss.csv")
	if err != nil {
		t.Fatal(err)
	}
	n := len(tab.Rows)
	x := mat.NewDense(n, 4, nil)
	y := make([]float64, n)
	for i, r := range tab.Rows {
		x.SetRow(i, []float64{1, r[0], r[1], r[2]})
		y[i] = r[3]
	}
	return x, y
}

func TestStacklossLeastSquares(t *testing.T) {
	// Brownlee (1965), Statistical Theory and Methodology in Science and
	// Engineering, 2nd ed., Wiley; the least-squares coefficients are those
	// recorded with the data in the shared reference notes (see
	// testdata/refdata/SOURCES.md), printed to six significant digits, so
	// the tolerance is about half a unit in the sixth digit.
	want := []float64{-39.9197, 0.71564, 1.29529, -0.152123}
	x, y := stackloss(t)
	res, err := Fit(Estimator{}, x, y)
	if err != nil {
		t.Fatal(err)
	}
	for j, w := range want {
		if math.Abs(res.Coefficients[j]-w) > 6e-6*math.Max(1, math.Abs(w)) {
			t.Errorf("coefficient %d = %.6g, published %v", j, res.Coefficients[j], w)
		}
	}
}

// TestStacklossHuber fits Huber's M-estimator (k = 1.345, scale the
// normalised median absolute residual re-estimated at each iteration, start
// from least squares) to Brownlee's (1965) stack loss data.
// Published: Venables & Ripley (2002), Modern Applied Statistics with S, 4th
// ed., Springer, section 6.5: coefficients -41.03, 0.829, 0.926, -0.128 and
// scale 2.44 (values from memory, printed to 3-4 significant digits, so the
// tolerance is half a unit in the last printed digit).
func TestStacklossHuber(t *testing.T) {
	x, y := stackloss(t)
	want := []struct{ value, halfUnit float64 }{
		{-41.03, 0.005}, {0.829, 0.0005}, {0.926, 0.0005}, {-0.128, 0.0005},
	}
	for _, method := range []Method{MethodIRLS, MethodNewton} {
		e := Estimator{Method: method, Psi: psi.Huber{K: 1.345}, Settings: Settings{ChangeTol: 1e-10}}
		res, err := Fit(e, x, y)
		if err != nil {
			t.Fatal(err)
		}
		if !res.Status.Converged() {
			t.Fatalf("%v: status %v", method, res.Status)
		}
		for j, w := range want {
			if d := math.Abs(res.Coefficients[j] - w.value); d > w.halfUnit {
				t.Errorf("%v: coefficient %d = %.5f, published %v", method, j, res.Coefficients[j], w.value)
			}
		}
		if math.Abs(res.Scale-2.44) > 0.005 {
			t.Errorf("%v: scale = %.4f, published 2.44", method, res.Scale)
		}
		t.Logf("%v: %.5f scale %.4f after %d iterations (%v)", method, res.Coefficients, res.Scale, res.Iterations, res.Status)
	}
}

// simulated returns a regression dataset with n rows, an intercept and p-1
// standard normal columns, true coefficients all 1, normal errors and a
// fraction of vertical outliers at +10.
func simulated(seed uint64, n, p int, outliers float64) (*mat.Dense, []float64) {
	rng := rand.New(rand.NewPCG(seed, 1))
	x := mat.NewDense(n, p, nil)
	y := make([]float64, n)
	for i := 0; i < n; i++ {
		x.Set(i, 0, 1)
		s := 1.0
		for j := 1; j < p; j++ {
			v := rng.NormFloat64()
			x.Set(i, j, v)
			s += v
		}
		y[i] = s + rng.NormFloat64()
		if float64(i) < outliers*float64(n) {
			y[i] += 10
		}
	}
	return x, y
}

// TestIRLSNewtonAgree: on convex (Huber) problems the M-estimate is unique,
// so IRLS and Newton must find the same coefficients (to 1e-8 relative, with
// tolerances of 1e-12 on the change in coefficients).
func TestIRLSNewtonAgree(t *testing.T) {
	for seed := uint64(1); seed <= 30; seed++ {
		n := 20 + int(seed)*7
		p := 2 + int(seed)%5
		x, y := simulated(seed, n, p, 0.1)
		for _, scale := range []Scale{{Rule: ScaleMAD}, {Rule: ScaleFixed, Value: 1.3}} {
			s := Settings{ChangeTol: 1e-12, MaxIterations: 500}
			a, err := Fit(Estimator{Method: MethodIRLS, Psi: psi.Huber{K: 1.345}, Scale: scale, Settings: s}, x, y)
			if err != nil {
				t.Fatal(err)
			}
			b, err := Fit(Estimator{Method: MethodNewton, Psi: psi.Huber{K: 1.345}, Scale: scale, Settings: s}, x, y)
			if err != nil {
				t.Fatal(err)
			}
			if !a.Status.Converged() || !b.Status.Converged() {
				t.Fatalf("seed %d: statuses %v, %v", seed, a.Status, b.Status)
			}
			for j := range a.Coefficients {
				d := math.Abs(a.Coefficients[j] - b.Coefficients[j])
				if d > 1e-8*math.Max(1, math.Abs(a.Coefficients[j])) {
					t.Errorf("seed %d scale %v: coefficient %d IRLS %.12g Newton %.12g", seed, scale.Rule, j, a.Coefficients[j], b.Coefficients[j])
				}
			}
			if b.Iterations >= a.Iterations && scale.Rule == ScaleFixed {
				t.Logf("seed %d: Newton took %d iterations, IRLS %d", seed, b.Iterations, a.Iterations)
			}
		}
	}
}

func TestStoppingRules(t *testing.T) {
	x, y := simulated(7, 60, 3, 0.1)
	cases := []struct {
		name     string
		settings Settings
		want     Status
	}{
		{"change", Settings{Rules: RuleChange}, ConvergedChange},
		{"equations", Settings{Rules: RuleEquations, EquationTol: 1e-9}, ConvergedEquations},
		{"all", Settings{Rules: RuleChange | RuleEquations, RequireAll: true, EquationTol: 1e-9}, ConvergedAll},
		{"cap", Settings{ChangeTol: 1e-300, MaxIterations: 3}, IterationLimit},
	}
	for _, c := range cases {
		for _, m := range []Method{MethodIRLS, MethodNewton} {
			res, err := Fit(Estimator{Method: m, Psi: psi.Huber{K: 1.345}, Settings: c.settings}, x, y)
			if err != nil {
				t.Fatal(err)
			}
			if res.Status != c.want {
				t.Errorf("%s/%v: status %v, want %v", c.name, m, res.Status, c.want)
			}
			if c.want == IterationLimit && res.Iterations != 3 {
				t.Errorf("%s/%v: %d iterations, cap 3", c.name, m, res.Iterations)
			}
			if c.want == ConvergedEquations && res.EquationNorm > 1e-9 {
				t.Errorf("%s/%v: equation norm %v above tolerance", c.name, m, res.EquationNorm)
			}
		}
	}
}

func TestFailureStatuses(t *testing.T) {
	x, y := simulated(3, 40, 3, 0)
	// A duplicated column makes the design singular.
	dup := mat.NewDense(40, 3, nil)
	dup.Copy(x)
	for i := 0; i < 40; i++ {
		dup.Set(i, 2, x.At(i, 1))
	}
	// Every residual beyond a tiny bisquare constant at a small fixed scale.
	far := make([]float64, 40)
	for i := range far {
		far[i] = y[i] + 100*float64(1-2*(i%2))
	}
	// An exactly linear response: zero residuals.
	exact := make([]float64, 40)
	for i := range exact {
		exact[i] = 2 + 3*x.At(i, 1) - x.At(i, 2)
	}
	// More than half the points fitted exactly, the rest far off.
	half := append([]float64(nil), exact...)
	for i := 0; i < 15; i++ {
		half[i] += 50
	}
	cases := []struct {
		name string
		e    Estimator
		x    *mat.Dense
		y    []float64
		want []Status
	}{
		{"singular LS", Estimator{}, dup, y, []Status{SingularDesign}},
		{"singular IRLS", Estimator{Method: MethodIRLS, Psi: psi.Huber{K: 1.345}}, dup, y, []Status{SingularDesign}},
		{"zero weights", Estimator{Method: MethodIRLS, Psi: psi.Bisquare{C: 1}, Scale: Scale{Rule: ScaleFixed, Value: 0.01}, Start: []float64{0, 0, 0}}, x, far, []Status{ZeroWeights}},
		{"exact fit", Estimator{Method: MethodIRLS, Psi: psi.Huber{K: 1.345}, Start: []float64{2, 3, -1}}, x, exact, []Status{ExactFit}},
		{"zero scale", Estimator{Method: MethodIRLS, Psi: psi.Bisquare{C: 4.685}, Start: []float64{2, 3, -1}}, x, half, []Status{ZeroScale}},
	}
	for _, c := range cases {
		res, err := Fit(c.e, c.x, c.y)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		ok := false
		for _, w := range c.want {
			ok = ok || res.Status == w
		}
		if !ok {
			t.Errorf("%s: status %v, want one of %v", c.name, res.Status, c.want)
		}
	}
}

func TestFitMisuse(t *testing.T) {
	x, y := simulated(1, 10, 2, 0)
	nan := append([]float64(nil), y...)
	nan[3] = math.NaN()
	xinf := mat.DenseCopyOf(x)
	xinf.Set(2, 1, math.Inf(1))
	huber := Estimator{Method: MethodIRLS, Psi: psi.Huber{K: 1.345}}
	cases := []struct {
		name string
		e    Estimator
		x    *mat.Dense
		y    []float64
	}{
		{"short y", Estimator{}, x, y[:5]},
		{"NaN y", huber, x, nan},
		{"Inf x", huber, xinf, y},
		{"no psi", Estimator{Method: MethodIRLS}, x, y},
		{"bad start", Estimator{Method: MethodIRLS, Psi: psi.Huber{K: 1}, Start: []float64{1}}, x, y},
		{"bad scale", Estimator{Method: MethodIRLS, Psi: psi.Huber{K: 1}, Scale: Scale{Rule: ScaleFixed}}, x, y},
		{"bad tol", Estimator{Method: MethodIRLS, Psi: psi.Huber{K: 1}, Settings: Settings{ChangeTol: -1}}, x, y},
		{"bad method", Estimator{Method: 9, Psi: psi.Huber{K: 1}}, x, y},
		{"wide", Estimator{}, mat.NewDense(2, 3, nil), []float64{1, 2}},
	}
	for _, c := range cases {
		if _, err := Fit(c.e, c.x, c.y); err == nil {
			t.Errorf("%s: no error", c.name)
		}
	}
}

// TestNewtonSafeguards: bisquare from a poor start has a Jacobian that is not
// positive definite, so Newton must take IRLS steps and still converge to the
// same root as IRLS.
func TestNewtonSafeguards(t *testing.T) {
	x, y := simulated(11, 100, 3, 0.2)
	// At a fixed scale of 1, the start (4, 0, 0) leaves most residuals near
	// -3, where bisquare's psi' is negative (|u| > c/√5 ≈ 2.1).
	start := []float64{4, 0, 0}
	e := Estimator{Psi: psi.Bisquare{C: 4.685}, Start: start, Scale: Scale{Rule: ScaleFixed, Value: 1},
		Settings: Settings{ChangeTol: 1e-12, MaxIterations: 500}}
	e.Method = MethodNewton
	nw, err := Fit(e, x, y)
	if err != nil {
		t.Fatal(err)
	}
	e.Method = MethodIRLS
	ir, err := Fit(e, x, y)
	if err != nil {
		t.Fatal(err)
	}
	if !nw.Status.Converged() || !ir.Status.Converged() {
		t.Fatalf("statuses %v %v", nw.Status, ir.Status)
	}
	if nw.Fallbacks == 0 {
		t.Errorf("expected IRLS fallbacks from a poor start, got none (halvings %d)", nw.Halvings)
	}
	// Both stop at a relative change of 1e-12 from the same fixed point;
	// 1e-7 absolute allows for the fixed point's conditioning (coefficients
	// near 1, and the two methods approach it from different sides).
	for j := range nw.Coefficients {
		if math.Abs(nw.Coefficients[j]-ir.Coefficients[j]) > 1e-7 {
			t.Errorf("coefficient %d: Newton %v IRLS %v", j, nw.Coefficients[j], ir.Coefficients[j])
		}
	}
	t.Logf("Newton: %d iterations, %d fallbacks, %d halvings; IRLS %d iterations", nw.Iterations, nw.Fallbacks, nw.Halvings, ir.Iterations)
}

// TestTrace checks that a tracer sees every iteration in order.
func TestTrace(t *testing.T) {
	x, y := simulated(5, 50, 3, 0.1)
	var seen []int
	e := Estimator{Method: MethodNewton, Psi: psi.Huber{K: 1.345}, Trace: func(it Iteration) { seen = append(seen, it.Index) }}
	res, err := Fit(e, x, y)
	if err != nil {
		t.Fatal(err)
	}
	if len(seen) != res.Iterations {
		t.Fatalf("traced %d iterations, fit took %d", len(seen), res.Iterations)
	}
	for i, v := range seen {
		if v != i+1 {
			t.Fatalf("trace indices %v", seen)
		}
	}
}

// TestFastPathsMatch: the specialised loops must give exactly what the
// general loop gives through the Psi interface.
func TestFastPathsMatch(t *testing.T) {
	var a, b Workspace
	a.reserve(200, 1)
	b.reserve(200, 1)
	for i := range a.r {
		a.r[i] = float64(i-100) * 0.0731
		if i%17 == 0 {
			a.r[i] = 0
		}
	}
	copy(b.r, a.r)
	custom, err := psi.NewCustom(psi.CustomSpec{Psi: "r / (1 + abs(r)/c)", Constants: []psi.Constant{{Name: "c", Value: 1.4}}})
	if err != nil {
		t.Fatal(err)
	}
	for _, psi := range []psi.Psi{psi.Huber{K: 1.345}, psi.Huber{K: 0.5}, psi.Bisquare{C: 4.685}, psi.Bisquare{C: 1}, custom} {
		for _, sigma := range []float64{0.3, 1, 2.5} {
			got := a.evaluate(psi, sigma, false)
			want := b.evaluateAny(psi, sigma, false)
			if got != want || a.nOff != b.nOff {
				t.Errorf("%T: weight sums %v vs %v, off %d vs %d", psi, got, want, a.nOff, b.nOff)
			}
			for i := range a.r {
				if a.psi[i] != b.psi[i] || a.c[i] != b.c[i] {
					t.Fatalf("%T sigma %v row %d: fast (%v, %v) general (%v, %v)", psi, sigma, i, a.psi[i], a.c[i], b.psi[i], b.c[i])
				}
			}
		}
	}
}

// TestFitZeroAllocs: once a workspace has seen a shape, a fit allocates
// nothing, for every method (the hot loop of a study). Benchmarks report
// the same figure; this test makes it a requirement.
func TestFitZeroAllocs(t *testing.T) {
	x, y := simulated(31, 120, 4, 0.1)
	cases := []Estimator{
		{Method: MethodLS},
		{Method: MethodIRLS, Psi: psi.Huber{K: 1.345}},
		{Method: MethodNewton, Psi: psi.Huber{K: 1.345}},
		{Method: MethodIRLS, Psi: psi.Bisquare{C: 4.685}},
		{Method: MethodNewton, Psi: psi.Welsch{C: 2.9846}},
		{Method: MethodS, Resampling: Resampling{Subsets: 50}},
		{Method: MethodMM, Resampling: Resampling{Subsets: 50}},
		{Method: MethodMM, Resampling: Resampling{Subsets: 50, SDivisor: DivideByNMinusP}},
		{Method: MethodLTS, Resampling: Resampling{Subsets: 50}},
		{Method: MethodLAD},
		{Method: MethodIRLS, Psi: psi.Huber{K: 1.345}, StartFrom: MethodLAD},
	}
	for _, e := range cases {
		var ws Workspace
		var res Result
		if err := e.Fit(x, y, &ws, &res); err != nil {
			t.Fatal(err)
		}
		seed := uint64(0)
		allocs := testing.AllocsPerRun(5, func() {
			seed++
			ws.SeedRandom(seed, 0)
			e.Fit(x, y, &ws, &res)
		})
		if allocs != 0 {
			t.Errorf("%v %T: %v allocations per fit after warm-up", e.Method, e.Psi, allocs)
		}
	}
}

// TestNewtonHandsOverToIRLS: on the aircraft data (Rousseeuw & Leroy
// (1987), Robust Regression and Outlier Detection, Wiley, Table 22) the
// bisquare from the least-squares start with the MAD rescaled every
// iteration makes Newton cycle (its equation norm stays near 0.05 and the
// iteration cap is reached) while IRLS converges. Newton must hand over to
// IRLS, count the IRLS iterations as fallbacks, and reach IRLS's root.
func TestNewtonHandsOverToIRLS(t *testing.T) {
	x, y := design(t, "aircraft.csv", []string{"X1", "X2", "X3", "X4"}, "Y")
	set := Settings{ChangeTol: 1e-12, MaxIterations: 200}
	irls, err := Fit(Estimator{Method: MethodIRLS, Psi: psi.Bisquare{C: DefaultMMTuning}, Settings: set}, x, y)
	if err != nil {
		t.Fatal(err)
	}
	newton, err := Fit(Estimator{Method: MethodNewton, Psi: psi.Bisquare{C: DefaultMMTuning}, Settings: set}, x, y)
	if err != nil {
		t.Fatal(err)
	}
	if !irls.Status.Converged() || !newton.Status.Converged() {
		t.Fatalf("IRLS %v, Newton %v", irls.Status, newton.Status)
	}
	if newton.Fallbacks == 0 {
		t.Error("Newton reached the root without counting the IRLS steps it took")
	}
	for j := range irls.Coefficients {
		if d := math.Abs(newton.Coefficients[j] - irls.Coefficients[j]); d > 1e-8*math.Abs(irls.Coefficients[j]) {
			t.Errorf("coefficient %d: Newton %.12g, IRLS %.12g", j, newton.Coefficients[j], irls.Coefficients[j])
		}
	}
	t.Logf("IRLS %d iterations; Newton %d iterations, %d of them IRLS", irls.Iterations, newton.Iterations, newton.Fallbacks)
}

// TestMethodRoles: which methods can start an M-estimator (Direct) and
// which take a psi of the user's (TakesPsi) are separate questions; MM is
// both.
func TestMethodRoles(t *testing.T) {
	for _, tc := range []struct {
		m                Method
		direct, takesPsi bool
	}{
		{MethodLS, true, false},
		{MethodIRLS, false, true},
		{MethodNewton, false, true},
		{MethodS, true, false},
		{MethodMM, true, true},
		{MethodLTS, true, false},
		{MethodLAD, true, false},
	} {
		if tc.m.Direct() != tc.direct || tc.m.TakesPsi() != tc.takesPsi {
			t.Errorf("%s: Direct %v TakesPsi %v, want %v %v", tc.m, tc.m.Direct(), tc.m.TakesPsi(), tc.direct, tc.takesPsi)
		}
	}
	if len(Methods()) != 7 {
		t.Errorf("%d methods: add the new one to this table", len(Methods()))
	}
}

// TestCheckNamesNonFinite: a fit refuses NaN and ±Inf in the response or
// the design and names the first such value; the largest finite values
// pass.
func TestCheckNamesNonFinite(t *testing.T) {
	for _, c := range []struct {
		row, col int // col −1: the response
		v        float64
		want     string
	}{
		{2, -1, math.NaN(), "response row 3 is NaN"},
		{0, -1, math.Inf(-1), "response row 1 is -Inf"},
		{4, 1, math.Inf(1), "design row 5 column 2 is +Inf"},
		{1, 0, math.NaN(), "design row 2 column 1 is NaN"},
		{3, 1, math.MaxFloat64, ""},
		{3, -1, -math.MaxFloat64, ""},
	} {
		x := mat.NewDense(6, 2, []float64{1, 0, 1, 1, 1, 2, 1, 3, 1, 4, 1, 5})
		y := []float64{0, 1, 2, 3, 4, 5}
		if c.col < 0 {
			y[c.row] = c.v
		} else {
			x.Set(c.row, c.col, c.v)
		}
		var ws Workspace
		var res Result
		err := (Estimator{Method: MethodLS}).Fit(x, y, &ws, &res)
		switch {
		case c.want == "" && errors.Is(err, ErrNonFinite):
			t.Errorf("%v at row %d col %d: refused: %v", c.v, c.row, c.col, err)
		case c.want != "" && (err == nil || !errors.Is(err, ErrNonFinite) || !strings.Contains(err.Error(), c.want)):
			t.Errorf("%v at row %d col %d: error %v, want one saying %q", c.v, c.row, c.col, err, c.want)
		}
	}
}
