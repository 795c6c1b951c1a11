package estimators

import (
	"math"
	"sort"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/internal/refdata"
	"github.com/rhomark/rhomark/psi"
)

// design reads a reference CSV into an intercept-first design.
func design(t *testing.T, file string, xcols []string, ycol string) (*mat.Dense, []float64) {
	t.Helper()
	tab, err := refdata.ReadCSV(file)
	if err != nil {
		t.Fatal(err)
	}
	n := len(tab.Rows)
	x := mat.NewDense(n, len(xcols)+1, nil)
	y, err := tab.Column(ycol)
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < n; i++ {
		x.Set(i, 0, 1)
	}
	for j, name := range xcols {
		col, err := tab.Column(name)
		if err != nil {
			t.Fatal(err)
		}
		x.SetCol(j+1, col)
	}
	return x, y
}

// standardised fits e and returns |r_i|/scale.
func standardised(t *testing.T, e Estimator, x *mat.Dense, y []float64) ([]float64, Result) {
	t.Helper()
	var ws Workspace
	var res Result
	if err := e.Fit(x, y, &ws, &res); err != nil {
		t.Fatal(err)
	}
	if !res.Status.Converged() {
		t.Fatalf("%v: status %v", e.Method, res.Status)
	}
	out := make([]float64, len(y))
	for i, r := range ws.r {
		out[i] = math.Abs(r) / res.Scale
	}
	return out, res
}

// TestHBK uses the artificial data of Hawkins, Bradu & Kass (1984),
// "Location of several outliers in multiple regression data using elemental
// sets", Technometrics 26:197-208: rows 1-10 are bad leverage points, rows
// 11-14 good leverage points, the rest clean. The published finding is that
// high-breakdown fits expose rows 1-10 while least squares and M-estimators
// mask them (and swamp good points).
func TestHBK(t *testing.T) {
	x, y := design(t, "hbk.csv", []string{"X1", "X2", "X3"}, "Y")
	for _, e := range []Estimator{{Method: MethodS}, {Method: MethodMM}, {Method: MethodLTS}} {
		u, res := standardised(t, e, x, y)
		// Rows 1-10 are the ten largest standardised residuals, all far out.
		idx := make([]int, len(u))
		for i := range idx {
			idx[i] = i
		}
		sort.Slice(idx, func(a, b int) bool { return u[idx[a]] > u[idx[b]] })
		for _, i := range idx[:10] {
			if i >= 10 {
				t.Errorf("%v: row %d is among the ten largest residuals", e.Method, i+1)
			}
		}
		for i := 0; i < 10; i++ {
			if u[i] < 10 {
				t.Errorf("%v: row %d has |r|/s = %.2f, not exposed", e.Method, i+1, u[i])
			}
		}
		// Rows 11-75, good leverage points included, fit closely.
		for i := 10; i < len(u); i++ {
			if u[i] > 2.5 {
				t.Errorf("%v: clean row %d has |r|/s = %.2f", e.Method, i+1, u[i])
			}
		}
		if e.Method == MethodMM {
			// The M-step's bisquare weights of rows 1-10 are zero (|r|/s > c).
			for i := 0; i < 10; i++ {
				if w := (psi.Bisquare{C: 4.685}).Weight(u[i]); w > 0.01 {
					t.Errorf("MM weight of row %d is %.3f", i+1, w)
				}
			}
		}
		t.Logf("%v: scale %.3f, rows 1-10 |r|/s from %.1f", e.Method, res.Scale, minOf(u[:10]))
	}
	// Least squares and Huber's M-estimate are pulled by rows 1-10 and mask
	// them: no bad leverage point has a standardised residual above 2.5,
	// while a good point does (swamping). The 2.5 and 4 thresholds are our
	// choice (common practice flags |r|/s > 2.5); the figures that follow
	// are rhomark's own output, recorded when the test was written, not
	// published values: least squares leaves rows 1-10 within 2.01 and a
	// good row at 4.2; Huber within 1.86 and a good row at 13.4.
	for _, e := range []Estimator{{}, {Method: MethodIRLS, Psi: psi.Huber{K: 1.345}}} {
		u, _ := standardised(t, e, x, y)
		if m := maxOf(u[:10]); m > 2.5 {
			t.Errorf("%v: rows 1-10 reach |r|/s = %.2f; they should be masked", e.Method, m)
		}
		if m := maxOf(u[10:]); m < 4 {
			t.Errorf("%v: largest clean-row |r|/s is %.2f; a good point should be swamped", e.Method, m)
		}
	}
}

// TestStarsCYG uses the star cluster CYG OB1 data, Rousseeuw & Leroy
// (1987), Robust Regression and Outlier Detection, Wiley, Table 3: least
// squares gives slope −0.4133 (from memory, and recorded with the data in
// the shared reference notes), pulled by the four giants (rows
// 11, 20, 30, 34); high-breakdown fits give a positive slope and expose the
// giants.
func TestStarsCYG(t *testing.T) {
	x, y := design(t, "stars_cyg.csv", []string{"log.Te"}, "log.light")
	ls, err := Fit(Estimator{}, x, y)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(ls.Coefficients[1]-(-0.4133)) > 0.00005 {
		t.Errorf("least-squares slope %.5f, published -0.4133 (half a unit in the last digit allowed)", ls.Coefficients[1])
	}
	giants := []int{10, 19, 29, 33}
	for _, e := range []Estimator{{Method: MethodS}, {Method: MethodMM}, {Method: MethodLTS}} {
		u, res := standardised(t, e, x, y)
		if res.Coefficients[1] <= 0 {
			t.Errorf("%v: slope %.3f, want positive", e.Method, res.Coefficients[1])
		}
		for _, g := range giants {
			if u[g] < 2.5 {
				t.Errorf("%v: giant row %d has |r|/s = %.2f, not exposed", e.Method, g+1, u[g])
			}
		}
		t.Logf("%v: slope %.3f", e.Method, res.Coefficients[1])
	}
}

// TestStartsFromRobustFits: a bisquare M-step from the S-estimate with the
// scale held at the S-scale is the MM-estimator; a redescending psi
// started from least squares on bad leverage data is not.
func TestStartsFromRobustFits(t *testing.T) {
	x, y := design(t, "hbk.csv", []string{"X1", "X2", "X3"}, "Y")
	mm, err := Fit(Estimator{Method: MethodMM}, x, y)
	if err != nil {
		t.Fatal(err)
	}
	viaStart, err := Fit(Estimator{Method: MethodIRLS, Psi: psi.Bisquare{C: DefaultMMTuning}, StartFrom: MethodS, Scale: Scale{Rule: ScaleStart}}, x, y)
	if err != nil {
		t.Fatal(err)
	}
	for j := range mm.Coefficients {
		if mm.Coefficients[j] != viaStart.Coefficients[j] {
			t.Errorf("coefficient %d: MM %v, bisquare from S %v", j, mm.Coefficients[j], viaStart.Coefficients[j])
		}
	}
	fromLS, _ := Fit(Estimator{Method: MethodIRLS, Psi: psi.Bisquare{C: 4.685}}, x, y)
	if d := math.Abs(fromLS.Coefficients[3] - mm.Coefficients[3]); d < 0.1 {
		t.Errorf("bisquare from least squares should stay near the masked fit, differs from MM by only %v", d)
	}
	for _, m := range []Method{MethodLTS, MethodLAD} {
		if _, err := Fit(Estimator{Method: MethodIRLS, Psi: psi.Huber{K: 1.345}, StartFrom: m}, x, y); err != nil {
			t.Errorf("start from %v: %v", m, err)
		}
	}
	if _, err := Fit(Estimator{Method: MethodIRLS, Psi: psi.Huber{K: 1.345}, StartFrom: MethodNewton}, x, y); err == nil {
		t.Error("an iterative method was accepted as a start")
	}
	// An MM start is the MM-estimate (default bisquare M-step), whatever
	// psi the fit it starts uses: a Huber fit from it, traced, sees only
	// its own iterations, and a Huber fit given the MM coefficients as its
	// start with the MM scale lands on the same estimate.
	var traced int
	fromMM, err := Fit(Estimator{Method: MethodIRLS, Psi: psi.Huber{K: 1.345}, StartFrom: MethodMM, Scale: Scale{Rule: ScaleStart},
		Trace: func(Iteration) { traced++ }}, x, y)
	if err != nil {
		t.Fatal(err)
	}
	if traced != fromMM.Iterations {
		t.Errorf("trace saw %d iterations, the fit took %d: the start's iterations leaked into it", traced, fromMM.Iterations)
	}
	given, err := Fit(Estimator{Method: MethodIRLS, Psi: psi.Huber{K: 1.345}, Start: mm.Coefficients, Scale: Scale{Rule: ScaleFixed, Value: mm.Scale}}, x, y)
	if err != nil {
		t.Fatal(err)
	}
	for j := range given.Coefficients {
		if math.Abs(given.Coefficients[j]-fromMM.Coefficients[j]) > 1e-9 {
			t.Errorf("coefficient %d: psi.Huber from the MM start %v, from the MM coefficients %v", j, fromMM.Coefficients[j], given.Coefficients[j])
		}
	}
	// The start scale rule needs a start method's scale; given start
	// coefficients have none.
	if _, err := Fit(Estimator{Method: MethodIRLS, Psi: psi.Huber{K: 1.345}, Start: mm.Coefficients, Scale: Scale{Rule: ScaleStart}}, x, y); err == nil {
		t.Error("start scale with given start coefficients was accepted")
	}
}

// TestResamplingDeterministic: the same stream gives the same S-estimate;
// the result does not depend on previous fits in the workspace.
func TestResamplingDeterministic(t *testing.T) {
	x, y := simulated(21, 60, 3, 0.2)
	var a, b Workspace
	var ra, rb Result
	e := Estimator{Method: MethodS}
	a.SeedRandom(1, 2)
	e.Fit(x, y, &a, &ra)
	b.SeedRandom(9, 9)
	e.Fit(x, y, &b, &rb) // a different fit first
	b.SeedRandom(1, 2)
	e.Fit(x, y, &b, &rb)
	for j := range ra.Coefficients {
		if ra.Coefficients[j] != rb.Coefficients[j] {
			t.Fatalf("coefficient %d differs: %v vs %v", j, ra.Coefficients[j], rb.Coefficients[j])
		}
	}
	allocs := testing.AllocsPerRun(3, func() {
		b.SeedRandom(1, 2)
		e.Fit(x, y, &b, &rb)
	})
	if allocs != 0 {
		t.Errorf("S fit allocates %v times after warm-up", allocs)
	}
}

func maxOf(a []float64) float64 {
	m := math.Inf(-1)
	for _, v := range a {
		m = math.Max(m, v)
	}
	return m
}

func minOf(a []float64) float64 {
	m := math.Inf(1)
	for _, v := range a {
		m = math.Min(m, v)
	}
	return m
}

// TestSmallSampleNotExact: with n < 2p every elemental fit leaves half the
// residuals at zero; that is not an exact fit of the data, and must not be
// reported as one.
func TestSmallSampleNotExact(t *testing.T) {
	x, y := simulated(30, 5, 3, 0)
	for _, e := range []Estimator{{Method: MethodS}, {Method: MethodMM},
		{Method: MethodIRLS, Psi: psi.Huber{K: 1.345}, StartFrom: MethodLAD, Scale: Scale{Rule: ScaleStart}}} {
		res, err := Fit(e, x, y)
		if err != nil {
			t.Fatal(err)
		}
		if res.Status == ExactFit {
			t.Errorf("%v: n = 5, p = 3 reported as an exact fit", e.Method)
		}
	}
}
