package estimators

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// The estimating equations of a redescending psi can have several roots,
// and which one an iteration reaches depends on its start (Maronna, Martin
// & Yohai (2006), Robust Statistics: Theory and Methods, Wiley). FindRoots
// refits one dataset from several starts to show whether the start
// matters on it.

// RootStart names the start of one refit in a root search.
type RootStart uint8

const (
	// RootFromLS starts from the least-squares estimate.
	RootFromLS RootStart = iota
	// RootFromLAD starts from the exact least absolute deviations estimate.
	RootFromLAD
	// RootFromS starts from the S-estimate.
	RootFromS
	// RootFromTruth starts from the true coefficients given by the caller.
	RootFromTruth
)

// String returns "ls", "lad", "s-estimate" or "truth".
func (s RootStart) String() string {
	switch s {
	case RootFromLS:
		return "ls"
	case RootFromLAD:
		return "lad"
	case RootFromS:
		return "s-estimate"
	case RootFromTruth:
		return "truth"
	}
	return "unknown-root-start"
}

// RootScale says where the common scale of a root search came from.
type RootScale uint8

const (
	// RootScaleS is the S-estimate's scale (the zero value).
	RootScaleS RootScale = iota
	// RootScaleFixed is the scale the caller gave in RootOptions.Scale.
	RootScaleFixed
)

// String returns "s-scale" or "fixed".
func (s RootScale) String() string {
	switch s {
	case RootScaleS:
		return "s-scale"
	case RootScaleFixed:
		return "fixed"
	}
	return "unknown-root-scale"
}

// RootTolerance is the relative distance ‖β_a − β_b‖₂ / max(‖β_a‖₂, ‖β_b‖₂)
// beyond which two refits are taken to have reached different roots.
const RootTolerance = 1e-6

// RootOptions are the settings of a root search. The zero value searches
// from least squares, LAD and the S-estimate at the S-scale.
type RootOptions struct {
	// Truth, if not nil, adds the true coefficients as a start.
	Truth []float64
	// Scale, if positive, is the scale held fixed in every refit;
	// zero means the S-estimate's scale.
	Scale float64
	// Settings are the refits' stopping rules; the zero value means a
	// change tolerance of 1e-12 and at most 1000 iterations, so that
	// distinct roots are told apart well beyond RootTolerance.
	Settings Settings
	// Trace, if not nil, is called after every iteration of every refit
	// with the refit's start (it then allocates a little per refit).
	Trace func(RootStart, Iteration)
}

// Root is where the refit from one start ended.
type Root struct {
	// Start names the start.
	Start RootStart
	// Coefficients are the root reached (the last iterate if the refit
	// did not converge).
	Coefficients []float64
	// Objective is Σ rho(r_i/σ) at Coefficients, with the search's common
	// σ; NaN if the refit failed.
	Objective float64
	// Status and Iterations say how the refit ended.
	Status     Status
	Iterations int
	// Group numbers the distinct roots from 0 in the order of the starts:
	// refits within RootTolerance of each other share a group. It is −1
	// for a refit that did not converge.
	Group int
}

// Roots is the outcome of a root search.
type Roots struct {
	// Scale is the common σ of every refit, and ScaleSource where it came
	// from.
	Scale       float64
	ScaleSource RootScale
	// Roots holds one refit per start, in the order LS, LAD, S, truth.
	Roots []Root
	// Distinct is the number of distinct roots among the converged refits;
	// Multiple reports Distinct > 1.
	Distinct int
	Multiple bool
	// Best is the index in Roots of the converged refit with the smallest
	// objective (the first on a tie), or −1 if none converged.
	Best int

	// FindRootsInto's starts and the result of its fits, kept for reuse.
	begin []float64
	fit   Result
}

// FindRoots refits x and y with the psi of e (its M-step psi for MM) from
// the least-squares, LAD and S estimates and, if given, the true
// coefficients, by IRLS with one scale held fixed in every refit: opts.Scale
// if positive, otherwise the S-estimate's scale, so that the objectives
// Σ rho(r_i/σ) of the roots are comparable. IRLS is used whatever e's
// method, because with a fixed scale and a weight that does not increase
// in |u| each IRLS step lowers the objective, so every refit descends to
// a root near its start (common practice). The S-estimate draws its subsets
// from ws's random stream (see Workspace.SeedRandom) with e.Resampling.
//
// FindRoots allocates its result; a loop over many datasets should reuse
// one with FindRootsInto. It returns an error on misuse: no psi, a truth
// of the wrong length, bad data, or no usable scale.
func FindRoots(e Estimator, x *mat.Dense, y []float64, opts RootOptions, ws *Workspace) (Roots, error) {
	var out Roots
	if err := FindRootsInto(e, x, y, opts, ws, &out); err != nil {
		return Roots{}, err
	}
	return out, nil
}

// FindRootsInto is FindRoots writing its outcome to out, whose slices it
// reuses: after a first search of a shape, with ws reused as well and
// opts.Trace nil, it allocates nothing. Roots held by an earlier search
// into out are overwritten. On an error out holds no roots.
func FindRootsInto(e Estimator, x *mat.Dense, y []float64, opts RootOptions, ws *Workspace, out *Roots) error {
	_, p := x.Dims()
	out.Scale, out.ScaleSource, out.Distinct, out.Multiple, out.Best = 0, RootScaleS, 0, false, -1
	out.Roots = out.Roots[:0]
	fn := e.MStepPsi()
	if fn == nil {
		return errors.New("a root search needs a psi function")
	}
	if opts.Truth != nil && len(opts.Truth) != p {
		return fmt.Errorf("truth has %d coefficients, design has %d columns", len(opts.Truth), p)
	}
	if opts.Scale < 0 || math.IsNaN(opts.Scale) || math.IsInf(opts.Scale, 0) {
		return fmt.Errorf("scale %v must be zero (the S-scale) or a positive finite number", opts.Scale)
	}
	settings := opts.Settings
	if settings == (Settings{}) {
		settings = Settings{Rules: RuleChange, ChangeTol: 1e-12, MaxIterations: 1000}
	}

	// begin holds the starts, one row of p per start, and res's
	// coefficients are the row of the start being fitted.
	if cap(out.begin) < numRootStarts*p {
		out.begin = make([]float64, numRootStarts*p)
	}
	begin := func(i int) []float64 { return out.begin[i*p : (i+1)*p : (i+1)*p] }
	starts := [...]struct {
		from RootStart
		est  Estimator
	}{
		{RootFromLS, Estimator{Method: MethodLS}},
		{RootFromLAD, Estimator{Method: MethodLAD}},
		{RootFromS, Estimator{Method: MethodS, Resampling: e.Resampling}},
	}
	fail := func(err error) error {
		out.Scale, out.ScaleSource, out.Roots = 0, RootScaleS, out.Roots[:0]
		return err
	}
	res := &out.fit
	sFailed := Status(NotRun)
	for i, s := range starts {
		res.Coefficients = begin(i)
		if err := s.est.Fit(x, y, ws, res); err != nil {
			return fail(fmt.Errorf("%v start: %w", s.from, err))
		}
		if s.from == RootFromS {
			capped := res.Status == IterationLimit
			if !res.Status.Converged() && !capped {
				sFailed = res.Status
			} else if opts.Scale == 0 {
				out.Scale = res.Scale
			}
		}
		out.addRoot(s.from, res.Status)
	}
	if opts.Truth != nil {
		copy(begin(len(starts)), opts.Truth)
		out.addRoot(RootFromTruth, Solved)
	}
	if opts.Scale > 0 {
		out.Scale, out.ScaleSource = opts.Scale, RootScaleFixed
	}
	if !(out.Scale > 0) {
		if sFailed != NotRun {
			return fail(fmt.Errorf("the S-estimate ended %v, so there is no S-scale: give a fixed scale", sFailed))
		}
		return fail(fmt.Errorf("the S-scale is %v (an exact fit?): give a positive fixed scale", out.Scale))
	}

	refit := Estimator{
		Method:   MethodIRLS,
		Psi:      fn,
		Scale:    Scale{Rule: ScaleFixed, Value: out.Scale},
		Settings: settings,
	}
	for i := range out.Roots {
		r := &out.Roots[i]
		r.Group, r.Objective = -1, math.NaN()
		if cap(r.Coefficients) < p {
			r.Coefficients = make([]float64, p)
		}
		r.Coefficients = r.Coefficients[:p]
		if !r.Status.Converged() && r.Status != IterationLimit {
			// The start itself failed (an S-estimate without a subset of
			// full rank, say): there is nothing to refit from.
			copy(r.Coefficients, begin(i))
			continue
		}
		refit.Start = begin(i)
		if opts.Trace != nil {
			from := r.Start
			refit.Trace = func(it Iteration) { opts.Trace(from, it) }
		}
		res.Coefficients = r.Coefficients
		if err := refit.Fit(x, y, ws, res); err != nil {
			return fail(fmt.Errorf("refit from the %v start: %w", r.Start, err))
		}
		r.Coefficients, r.Status, r.Iterations = res.Coefficients, res.Status, res.Iterations
		if res.Status.Converged() {
			r.Objective = res.Objective
		}
	}
	out.group()
	return nil
}

// numRootStarts is the most starts of a root search: LS, LAD, S, truth.
const numRootStarts = int(RootFromTruth) + 1

// addRoot appends the root of a start that ended with status, reusing
// the storage of a root an earlier search left in rs.Roots.
func (rs *Roots) addRoot(from RootStart, status Status) {
	if len(rs.Roots) < cap(rs.Roots) {
		rs.Roots = rs.Roots[:len(rs.Roots)+1]
		r := &rs.Roots[len(rs.Roots)-1]
		*r = Root{Start: from, Status: status, Coefficients: r.Coefficients[:0]}
		return
	}
	rs.Roots = append(rs.Roots, Root{Start: from, Status: status})
}

// group numbers the distinct roots and finds the best.
func (rs *Roots) group() {
	var first [numRootStarts]int
	reps := first[:0] // index in rs.Roots of each group's first member
	for i := range rs.Roots {
		r := &rs.Roots[i]
		if !r.Status.Converged() {
			continue
		}
		for g, k := range reps {
			if sameRoot(r.Coefficients, rs.Roots[k].Coefficients) {
				r.Group = g
				break
			}
		}
		if r.Group < 0 {
			r.Group = len(reps)
			reps = append(reps, i)
		}
		if rs.Best < 0 || r.Objective < rs.Roots[rs.Best].Objective {
			rs.Best = i
		}
	}
	rs.Distinct = len(reps)
	rs.Multiple = rs.Distinct > 1
}

// sameRoot reports whether a and b are within RootTolerance of each other.
func sameRoot(a, b []float64) bool {
	var d, na, nb float64
	for j := range a {
		d = math.Hypot(d, a[j]-b[j])
		na = math.Hypot(na, a[j])
		nb = math.Hypot(nb, b[j])
	}
	return d <= RootTolerance*math.Max(na, nb)
}
