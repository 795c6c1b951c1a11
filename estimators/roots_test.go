package estimators_test

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/psi"
)

// twoClusters is a location design (an intercept only) whose responses
// form two clusters: 30 around 0 and 20 around 10 (standard deviation
// 0.5), plus 4 gross values at 60 that pull the mean, and so the
// least-squares start, over to the smaller cluster. With σ = 1 the
// bisquare (c = 4.685) then has a root at each cluster.
func twoClusters() (*mat.Dense, []float64) {
	rng := rand.New(rand.NewPCG(7, 15))
	var y []float64
	for range 30 {
		y = append(y, 0.5*rng.NormFloat64())
	}
	for range 20 {
		y = append(y, 10+0.5*rng.NormFloat64())
	}
	for range 4 {
		y = append(y, 60)
	}
	x := mat.NewDense(len(y), 1, nil)
	for i := range y {
		x.Set(i, 0, 1)
	}
	return x, y
}

// TestFindRootsTwoClusters checks that the search finds both roots of a
// redescending psi built in on purpose. Redescending M-estimates need not
// be unique, and the root reached depends on the start (Maronna, Martin &
// Yohai (2006), Robust Statistics: Theory and Methods, Wiley).
func TestFindRootsTwoClusters(t *testing.T) {
	x, y := twoClusters()
	e := estimators.Estimator{Method: estimators.MethodIRLS, Psi: psi.Bisquare{C: 4.685}}
	var ws estimators.Workspace
	got, err := estimators.FindRoots(e, x, y, estimators.RootOptions{Truth: []float64{0}, Scale: 1}, &ws)
	if err != nil {
		t.Fatal(err)
	}
	if got.ScaleSource != estimators.RootScaleFixed || got.Scale != 1 {
		t.Errorf("scale %g from %v, want 1 fixed", got.Scale, got.ScaleSource)
	}
	want := []struct {
		start  estimators.RootStart
		centre float64 // the cluster the refit should settle in
	}{
		{estimators.RootFromLS, 10},
		{estimators.RootFromLAD, 0},
		{estimators.RootFromS, 0},
		{estimators.RootFromTruth, 0},
	}
	if len(got.Roots) != len(want) {
		t.Fatalf("%d roots, want %d", len(got.Roots), len(want))
	}
	for i, w := range want {
		r := got.Roots[i]
		t.Logf("%v: root %.6f, objective %.4f, %v after %d, group %d", r.Start, r.Coefficients[0], r.Objective, r.Status, r.Iterations, r.Group)
		if r.Start != w.start || !r.Status.Converged() {
			t.Errorf("root %d: start %v status %v, want %v converged", i, r.Start, r.Status, w.start)
			continue
		}
		if math.Abs(r.Coefficients[0]-w.centre) > 0.5 {
			t.Errorf("%v start reached %g, want the cluster at %g", r.Start, r.Coefficients[0], w.centre)
		}
	}
	ls, lad := got.Roots[0], got.Roots[1]
	if !got.Multiple || got.Distinct != 2 || ls.Group == lad.Group {
		t.Errorf("distinct roots %d (multiple %v), groups ls %d lad %d", got.Distinct, got.Multiple, ls.Group, lad.Group)
	}
	// The cluster of 30 leaves 24 rows rejected, the cluster of 20 leaves
	// 34, each costing rho's maximum c²/6: the objectives differ by about
	// 10 c²/6 ≈ 36.6.
	if d := ls.Objective - lad.Objective; !(d > 30) {
		t.Errorf("objectives ls %g lad %g, want ls larger by about 36", ls.Objective, lad.Objective)
	}
	if got.Best == 0 || got.Roots[got.Best].Group != lad.Group {
		t.Errorf("best start %d", got.Best)
	}
}

// TestFindRootsUnique checks that a monotone psi at a fixed scale gives one
// root from every start: its objective is convex (common practice).
func TestFindRootsUnique(t *testing.T) {
	x, y := auditData(100, 8)
	e := estimators.Estimator{Method: estimators.MethodIRLS, Psi: psi.Huber{K: 1.345}}
	var ws estimators.Workspace
	got, err := estimators.FindRoots(e, x, y, estimators.RootOptions{Truth: []float64{20, 2, -1}}, &ws)
	if err != nil {
		t.Fatal(err)
	}
	if got.ScaleSource != estimators.RootScaleS || !(got.Scale > 0) {
		t.Errorf("scale %g from %v, want the S-scale", got.Scale, got.ScaleSource)
	}
	if got.Multiple || got.Distinct != 1 || len(got.Roots) != 4 {
		t.Errorf("%d distinct roots among %d refits", got.Distinct, len(got.Roots))
	}
	for _, r := range got.Roots {
		if r.Group != 0 {
			t.Errorf("%v start: group %d, status %v", r.Start, r.Group, r.Status)
		}
	}
}

// TestFindRootsMisuse checks the errors for bad arguments.
func TestFindRootsMisuse(t *testing.T) {
	x, y := twoClusters()
	bisquare := estimators.Estimator{Method: estimators.MethodIRLS, Psi: psi.Bisquare{C: 4.685}}
	tests := []struct {
		name string
		e    estimators.Estimator
		opts estimators.RootOptions
	}{
		{"no psi", estimators.Estimator{Method: estimators.MethodIRLS}, estimators.RootOptions{Scale: 1}},
		{"truth length", bisquare, estimators.RootOptions{Truth: []float64{0, 1}, Scale: 1}},
		{"negative scale", bisquare, estimators.RootOptions{Scale: -1}},
		{"NaN scale", bisquare, estimators.RootOptions{Scale: math.NaN()}},
	}
	var ws estimators.Workspace
	for _, tt := range tests {
		if _, err := estimators.FindRoots(tt.e, x, y, tt.opts, &ws); err == nil {
			t.Errorf("%s: no error", tt.name)
		}
	}
}

// sameRoots reports whether a and b are the same outcome bit for bit.
func sameRoots(a, b *estimators.Roots) bool {
	same := func(u, v float64) bool { return math.Float64bits(u) == math.Float64bits(v) }
	if !same(a.Scale, b.Scale) || a.ScaleSource != b.ScaleSource || a.Distinct != b.Distinct ||
		a.Multiple != b.Multiple || a.Best != b.Best || len(a.Roots) != len(b.Roots) {
		return false
	}
	for i, r := range a.Roots {
		s := b.Roots[i]
		if r.Start != s.Start || r.Status != s.Status || r.Iterations != s.Iterations || r.Group != s.Group ||
			!same(r.Objective, s.Objective) || len(r.Coefficients) != len(s.Coefficients) {
			return false
		}
		for k := range r.Coefficients {
			if !same(r.Coefficients[k], s.Coefficients[k]) {
				return false
			}
		}
	}
	return true
}

// TestFindRootsIntoReuse checks that FindRootsInto, reusing one outcome
// across datasets and options, gives FindRoots' outcome bit for bit, and
// that a failed search leaves no roots behind.
func TestFindRootsIntoReuse(t *testing.T) {
	bisquare := estimators.Estimator{Method: estimators.MethodIRLS, Psi: psi.Bisquare{C: 4.685}}
	clusterX, clusterY := twoClusters()
	type search struct {
		name string
		x    *mat.Dense
		y    []float64
		opts estimators.RootOptions
	}
	var searches []search
	for s := range uint64(4) {
		x, y := auditData(100, s+1)
		searches = append(searches, search{"audit data", x, y, estimators.RootOptions{Truth: []float64{20, 2, -1}}})
	}
	searches = append(searches,
		search{"two clusters", clusterX, clusterY, estimators.RootOptions{Truth: []float64{0}, Scale: 1}},
		search{"no truth", clusterX, clusterY, estimators.RootOptions{}},
		search{"bad truth", clusterX, clusterY, estimators.RootOptions{Truth: []float64{0, 1}}},
	)
	searches = append(searches, searches[0])
	var ws, fresh estimators.Workspace
	var into estimators.Roots
	for i, s := range searches {
		fresh.SeedRandom(uint64(i), 3)
		want, wantErr := estimators.FindRoots(bisquare, s.x, s.y, s.opts, &fresh)
		ws.SeedRandom(uint64(i), 3)
		err := estimators.FindRootsInto(bisquare, s.x, s.y, s.opts, &ws, &into)
		if (err == nil) != (wantErr == nil) {
			t.Fatalf("%d %s: error %v, FindRoots %v", i, s.name, err, wantErr)
		}
		if err != nil {
			if len(into.Roots) != 0 || into.Best != -1 {
				t.Errorf("%d %s: a failed search left %d roots, best %d", i, s.name, len(into.Roots), into.Best)
			}
			continue
		}
		if !sameRoots(&into, &want) {
			t.Errorf("%d %s: FindRootsInto %+v, FindRoots %+v", i, s.name, into, want)
		}
	}
}

// TestFindRootsIntoAllocs checks that a root search into a reused outcome
// and workspace allocates nothing once they have grown to the shape.
func TestFindRootsIntoAllocs(t *testing.T) {
	x, y := auditData(100, 8)
	e := estimators.Estimator{Method: estimators.MethodIRLS, Psi: psi.Bisquare{C: 4.685}}
	opts := estimators.RootOptions{Truth: []float64{20, 2, -1}}
	var ws estimators.Workspace
	var out estimators.Roots
	search := func() {
		ws.SeedRandom(1, 2)
		if err := estimators.FindRootsInto(e, x, y, opts, &ws, &out); err != nil {
			t.Fatal(err)
		}
	}
	search() // warm-up: the workspace and the outcome grow to the shape
	if got := testing.AllocsPerRun(20, search); got != 0 {
		t.Errorf("%v allocations per search, want 0", got)
	}
}
