package estimators_test

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/psi"
)

// auditData draws n rows of y = 20 + 2 x1 − x2 + N(0, 1) with x1, x2
// standard normal and an intercept column (p = 3), and moves every tenth
// response up by 8 (vertical outliers), from a fixed PCG seed. The
// intercept is large beside the noise, as in calibration data: a change
// tolerance is relative to ‖β‖, while the standard errors follow the
// noise, which is what the audit is there to expose.
func auditData(n int, seed uint64) (*mat.Dense, []float64) {
	rng := rand.New(rand.NewPCG(seed, 15))
	x := mat.NewDense(n, 3, nil)
	y := make([]float64, n)
	for i := range y {
		x1, x2 := rng.NormFloat64(), rng.NormFloat64()
		x.SetRow(i, []float64{1, x1, x2})
		y[i] = 20 + 2*x1 - x2 + rng.NormFloat64()
		if i%10 == 0 {
			y[i] += 8
		}
	}
	return x, y
}

// auditFit fits e traced into aw and audits it.
func auditFit(t *testing.T, aw *estimators.AuditWorkspace, e estimators.Estimator, x *mat.Dense, y []float64) (estimators.Result, estimators.Audit) {
	t.Helper()
	var ws estimators.Workspace
	var res estimators.Result
	if err := aw.Traced(e).Fit(x, y, &ws, &res); err != nil {
		t.Fatal(err)
	}
	var out estimators.Audit
	if err := aw.Audit(e, x, y, &res, &out); err != nil {
		t.Fatal(err)
	}
	return res, out
}

func huberAt(tol float64) estimators.Estimator {
	return estimators.Estimator{
		Method:   estimators.MethodIRLS,
		Psi:      psi.Huber{K: 1.345},
		Settings: estimators.Settings{ChangeTol: tol, MaxIterations: 1000},
	}
}

// TestAuditStoppingRuleError checks the distance from the returned
// estimate to the fixed point, in standard errors, against what the
// stopping rule allows.
func TestAuditStoppingRuleError(t *testing.T) {
	x, y := auditData(100, 1)
	mm := estimators.Estimator{Method: estimators.MethodMM, Settings: estimators.Settings{ChangeTol: 1e-12}}
	tests := []struct {
		name     string
		e        estimators.Estimator
		kind     estimators.AuditKind
		min, max float64 // bounds on MaxErrorSE (min exclusive, max inclusive)
	}{
		// Least squares is direct: no stopping rule, no error.
		{"ls", estimators.Estimator{Method: estimators.MethodLS}, estimators.AuditDirect, -1, 0},
		{"lad", estimators.Estimator{Method: estimators.MethodLAD}, estimators.AuditDirect, -1, 0},
		// A loose change tolerance leaves IRLS visibly short of its fixed
		// point: a few hundredths of a standard error or more.
		{"huber-1e-3", huberAt(1e-3), estimators.AuditIterative, 0.01, math.Inf(1)},
		// A tight one leaves it within rounding of it.
		{"huber-1e-12", huberAt(1e-12), estimators.AuditIterative, -1, 1e-6},
		{"huber-newton-1e-12", func() estimators.Estimator {
			e := huberAt(1e-12)
			e.Method = estimators.MethodNewton
			return e
		}(), estimators.AuditIterative, -1, 1e-6},
		{"mm-1e-12", mm, estimators.AuditIterative, -1, 1e-6},
	}
	var aw estimators.AuditWorkspace
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			res, out := auditFit(t, &aw, tt.e, x, y)
			if !res.Status.Converged() {
				t.Fatalf("fit status %v", res.Status)
			}
			if out.Kind != tt.kind {
				t.Fatalf("kind %v, want %v", out.Kind, tt.kind)
			}
			t.Logf("%v after %d iterations: max error %.3g SE, rate %v %.3g", res.Status, res.Iterations, out.MaxErrorSE, out.Rate.Kind, out.Rate.Value)
			if !(out.MaxErrorSE > tt.min && out.MaxErrorSE <= tt.max) {
				t.Errorf("max error %g SE, want in (%g, %g]", out.MaxErrorSE, tt.min, tt.max)
			}
			if tt.kind != estimators.AuditIterative {
				return
			}
			if out.SEReason != estimators.SEDefined {
				t.Errorf("standard errors %v", out.SEReason)
			}
			switch out.End {
			case estimators.ContinuationSettled, estimators.ContinuationStalled:
			default:
				t.Errorf("continuation ended %v (%v after %d iterations)", out.End, out.ContinuationStatus, out.ContinuationIterations)
			}
			// The fixed point is at machine precision: its wobble is a few
			// units of rounding of ‖β‖.
			if out.PrecisionLimit > 1e-13 {
				t.Errorf("precision limit %g", out.PrecisionLimit)
			}
			for j := range out.Error {
				if got := math.Abs(res.Coefficients[j] - out.Fixed[j]); got != out.Error[j] {
					t.Errorf("error[%d] = %g, |β − β*| = %g", j, out.Error[j], got)
				}
			}
			// Independently: the same estimator stopped at a change of
			// 1e-14 is within rounding of β*, so it gives the same error
			// where the error is well above rounding.
			tight := tt.e
			tight.Settings.ChangeTol, tight.Settings.MaxIterations = 1e-14, 5000
			ref, err := estimators.Fit(tight, x, y)
			if err != nil {
				t.Fatal(err)
			}
			for j := range out.Error {
				d := math.Abs(res.Coefficients[j]-ref.Coefficients[j]) / out.SE[j]
				if math.Abs(d-out.ErrorSE[j]) > 1e-9 {
					t.Errorf("coefficient %d: audit says %g SE, a tight fit %g SE", j, out.ErrorSE[j], d)
				}
			}
		})
	}
}

// TestAuditRate checks the observed convergence rates. IRLS converges
// linearly and Newton quadratically near a simple root (common practice).
func TestAuditRate(t *testing.T) {
	x, y := auditData(100, 2)
	logistic := func(m estimators.Method) estimators.Estimator {
		return estimators.Estimator{
			Method: m,
			Psi:    psi.Logistic{C: 1.205},
			// Newton is quadratic only with the scale held fixed: with the
			// MAD re-estimated each step its Jacobian misses dσ/dβ.
			Scale:    estimators.Scale{Rule: estimators.ScaleFixed, Value: 1},
			Settings: estimators.Settings{ChangeTol: 1e-12, MaxIterations: 1000},
		}
	}
	newtonMAD := logistic(estimators.MethodNewton)
	newtonMAD.Scale = estimators.Scale{}
	welsch := logistic(estimators.MethodNewton)
	welsch.Psi = psi.Welsch{C: 2.985}
	welsch.StartFrom = estimators.MethodS
	tests := []struct {
		name     string
		e        estimators.Estimator
		kind     estimators.RateKind
		min, max float64
		// quadratic asks for an order of 2 within the tolerance derived
		// below from where it was read.
		quadratic bool
	}{
		// A linear rate lies strictly between 0 and 1.
		{"huber-irls", huberAt(1e-12), estimators.RateLinear, 0, 1, false},
		{"logistic-irls", logistic(estimators.MethodIRLS), estimators.RateLinear, 0, 1, false},
		{"mm", estimators.Estimator{Method: estimators.MethodMM, Settings: estimators.Settings{ChangeTol: 1e-12}}, estimators.RateLinear, 0, 1, false},
		{"logistic-newton", logistic(estimators.MethodNewton), estimators.RateOrder, 1, 3, true},
		{"welsch-newton", welsch, estimators.RateOrder, 1, 3, true},
		// With the MAD re-estimated each step, Newton's Jacobian misses
		// dσ/dβ and the convergence is only linear (Rate's doc).
		{"logistic-newton-mad", newtonMAD, estimators.RateOrder, 0.5, 1.5, false},
	}
	var aw estimators.AuditWorkspace
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			res, out := auditFit(t, &aw, tt.e, x, y)
			if !res.Status.Converged() || !out.Traced {
				t.Fatalf("fit status %v, traced %v", res.Status, out.Traced)
			}
			t.Logf("%v after %d iterations: rate %v %.3g from %d at %.2g", res.Status, res.Iterations, out.Rate.Kind, out.Rate.Value, out.Rate.Used, out.Rate.Change)
			if tt.quadratic {
				// The order read at the pair nearest the root is
				// q + ln C / ln Δ_k (Rate's doc). With standardised data,
				// a scale of 1 and a smooth psi, C is taken to lie within
				// a factor e³ ≈ 20 of 1, so |q̂ − 2| ≤ 3/|ln Δ_k|; the
				// test needs that bound below 0.5, so that the order is
				// told from 1 (linear) and 3.
				tol := 3 / math.Abs(math.Log(out.Rate.Change))
				if !(tol < 0.5) || math.Abs(out.Rate.Value-2) > tol {
					t.Errorf("order %g read at Δ = %g: want 2 ± %.2g (< 0.5)", out.Rate.Value, out.Rate.Change, tol)
				}
			}
			if out.Rate.Kind != tt.kind || !(out.Rate.Value > tt.min && out.Rate.Value < tt.max) {
				t.Errorf("rate %v %g from %d, want %v in (%g, %g)", out.Rate.Kind, out.Rate.Value, out.Rate.Used, tt.kind, tt.min, tt.max)
			}
		})
	}
}

// TestAuditToleranceTable checks the table against fits actually stopped
// at each tolerance: IRLS is deterministic, so a fit with change tolerance
// t takes exactly the iterations the table says, and the table's error is
// that fit's audited error.
func TestAuditToleranceTable(t *testing.T) {
	x, y := auditData(100, 3)
	var aw estimators.AuditWorkspace
	_, full := auditFit(t, &aw, huberAt(1e-12), x, y)
	prev := 0
	for i, row := range full.Tolerances {
		if row.Tolerance != estimators.AuditTolerance(i) {
			t.Errorf("row %d tolerance %g", i, row.Tolerance)
		}
		if !row.Reached {
			continue
		}
		if row.Iterations < prev {
			t.Errorf("tolerance %g needs %d iterations, fewer than %d for a looser one", row.Tolerance, row.Iterations, prev)
		}
		prev = row.Iterations
	}
	for _, i := range []int{1, 4, 7} { // 1e-3, 1e-6, 1e-9
		row := full.Tolerances[i]
		if !row.Reached {
			t.Fatalf("tolerance %g not reached", row.Tolerance)
		}
		res, out := auditFit(t, &aw, huberAt(row.Tolerance), x, y)
		if res.Iterations != row.Iterations {
			t.Errorf("tolerance %g: fit took %d iterations, table says %d", row.Tolerance, res.Iterations, row.Iterations)
		}
		// The two fixed points agree to the precision limit, far below
		// the errors compared here (≥ 1e-10 SE).
		if d := math.Abs(out.MaxErrorSE - row.MaxErrorSE); d > 1e-6*out.MaxErrorSE {
			t.Errorf("tolerance %g: audited error %g SE, table %g SE", row.Tolerance, out.MaxErrorSE, row.MaxErrorSE)
		}
	}
}

// TestAuditUntraced checks that an untraced fit is audited the same way,
// without a tolerance table.
func TestAuditUntraced(t *testing.T) {
	x, y := auditData(100, 4)
	e := huberAt(1e-4)
	var aw estimators.AuditWorkspace
	_, traced := auditFit(t, &aw, e, x, y)
	res, err := estimators.Fit(e, x, y)
	if err != nil {
		t.Fatal(err)
	}
	var out estimators.Audit
	if err := aw.Audit(e, x, y, &res, &out); err != nil {
		t.Fatal(err)
	}
	if out.Traced || out.Tolerances[0].Reached {
		t.Errorf("untraced fit has a table: traced %v", out.Traced)
	}
	if out.MaxErrorSE != traced.MaxErrorSE {
		t.Errorf("untraced error %g SE, traced %g SE", out.MaxErrorSE, traced.MaxErrorSE)
	}
	if out.Rate.Kind != estimators.RateLinear || !(out.Rate.Value > 0 && out.Rate.Value < 1) {
		t.Errorf("rate from the continuation alone: %v %g", out.Rate.Kind, out.Rate.Value)
	}
}

// TestAuditNoStandardErrors checks that a psi with jumps gets NaN errors in
// SE units with the reason, and still its distances.
func TestAuditNoStandardErrors(t *testing.T) {
	x, y := auditData(100, 5)
	e := estimators.Estimator{
		Method:    estimators.MethodIRLS,
		Psi:       psi.Talwar{C: 2.795},
		StartFrom: estimators.MethodLAD,
		Settings:  estimators.Settings{ChangeTol: 1e-6},
	}
	var aw estimators.AuditWorkspace
	res, out := auditFit(t, &aw, e, x, y)
	if !res.Status.Converged() {
		t.Fatalf("fit status %v", res.Status)
	}
	if out.SEReason != estimators.SEPsiJumps || !math.IsNaN(out.MaxErrorSE) {
		t.Errorf("reason %v, max error %g SE", out.SEReason, out.MaxErrorSE)
	}
	for j, d := range out.Error {
		if math.IsNaN(d) {
			t.Errorf("error[%d] is NaN", j)
		}
	}
}

// TestAuditNoAllocs checks that auditing a fit of a shape seen before
// allocates nothing.
func TestAuditNoAllocs(t *testing.T) {
	x, y := auditData(100, 6)
	e := huberAt(1e-6)
	var (
		aw  estimators.AuditWorkspace
		ws  estimators.Workspace
		res estimators.Result
		out estimators.Audit
	)
	run := func() {
		if err := aw.Traced(e).Fit(x, y, &ws, &res); err != nil {
			t.Fatal(err)
		}
		if err := aw.Audit(e, x, y, &res, &out); err != nil {
			t.Fatal(err)
		}
	}
	run()
	if a := testing.AllocsPerRun(5, run); a != 0 {
		t.Errorf("%v allocations per audited fit", a)
	}
}

// TestAuditKinds checks what is audited for fits that end otherwise than
// by a stopping rule, and the errors for misuse.
func TestAuditKinds(t *testing.T) {
	x, y := auditData(100, 9)
	// y on an exact line through small integers.
	xl := mat.NewDense(12, 2, nil)
	line := make([]float64, 12)
	for i := range line {
		xl.SetRow(i, []float64{1, float64(i)})
		line[i] = 3 + 2*float64(i)
	}
	bisquare := estimators.Estimator{
		Method: estimators.MethodIRLS,
		Psi:    psi.Bisquare{C: 4.685},
		// A scale so small beside the noise that the least-squares start
		// leaves every residual beyond c: no weights.
		Scale: estimators.Scale{Rule: estimators.ScaleFixed, Value: 1e-3},
	}
	tests := []struct {
		name   string
		e      estimators.Estimator
		x      *mat.Dense
		y      []float64
		status estimators.Status // NotRun: any failure
		kind   estimators.AuditKind
	}{
		{"no-weights", bisquare, x, y, estimators.NotRun, estimators.AuditFailedFit},
		{"exact-fit", func() estimators.Estimator {
			e := huberAt(1e-8)
			e.Start = []float64{3, 2} // on the line, so no rounding either
			return e
		}(), xl, line, estimators.ExactFit, estimators.AuditDirect},
		{"iteration-limit", estimators.Estimator{
			Method:   estimators.MethodIRLS,
			Psi:      psi.Huber{K: 1.345},
			Settings: estimators.Settings{ChangeTol: 1e-12, MaxIterations: 2},
		}, x, y, estimators.IterationLimit, estimators.AuditIterative},
	}
	var aw estimators.AuditWorkspace
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			res, out := auditFit(t, &aw, tt.e, tt.x, tt.y)
			failed := !res.Status.Converged() && res.Status != estimators.IterationLimit
			if tt.status == estimators.NotRun && failed {
				tt.status = res.Status
			}
			if res.Status != tt.status || out.Kind != tt.kind || out.Fit != tt.status {
				t.Fatalf("fit %v, audit %v of %v; want %v, %v", res.Status, out.Kind, out.Fit, tt.status, tt.kind)
			}
			switch tt.kind {
			case estimators.AuditDirect:
				if out.MaxErrorSE != 0 {
					t.Errorf("direct: error %g SE", out.MaxErrorSE)
				}
			case estimators.AuditFailedFit:
				if !math.IsNaN(out.MaxErrorSE) || out.End != estimators.ContinuationNone {
					t.Errorf("failed fit: error %g SE, continuation %v", out.MaxErrorSE, out.End)
				}
			case estimators.AuditIterative:
				// Two IRLS steps from least squares are far from converged.
				if !(out.MaxErrorSE > 0.01) {
					t.Errorf("capped fit: error %g SE", out.MaxErrorSE)
				}
			}
		})
	}
	var res estimators.Result
	var out estimators.Audit
	if err := aw.Audit(huberAt(1e-8), x, y, &res, &out); err == nil {
		t.Error("no error for a result of another shape")
	}
}

// BenchmarkAudit measures a traced Huber fit and its audit, the cost the
// audit adds to a replicate when it is enabled.
func BenchmarkAudit(b *testing.B) {
	x, y := auditData(100, 10)
	e := huberAt(1e-8)
	var (
		aw  estimators.AuditWorkspace
		ws  estimators.Workspace
		res estimators.Result
		out estimators.Audit
	)
	b.ReportAllocs()
	for b.Loop() {
		if err := aw.Traced(e).Fit(x, y, &ws, &res); err != nil {
			b.Fatal(err)
		}
		if err := aw.Audit(e, x, y, &res, &out); err != nil {
			b.Fatal(err)
		}
	}
}
