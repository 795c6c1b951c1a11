package main

import (
	"errors"
	"flag"
	"fmt"
	"math"
	"os"
	"slices"
	"strings"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/internal/atomicfile"
	"github.com/rhomark/rhomark/internal/csvdata"
	"github.com/rhomark/rhomark/scenarios"
)

// dataError is a problem with a user's data file (exit status 2).
type dataError struct{ err error }

func (d dataError) Error() string { return d.err.Error() }
func (d dataError) Unwrap() error { return d.err }

type fitEstimator struct {
	Method string    `json:"method"`
	Psi    string    `json:"psi,omitempty"`
	Tuning []float64 `json:"tuning,omitempty"`
	Scale  string    `json:"scale,omitempty"`
	// Start and ScaleRule say in words where the fit starts and how its
	// scale is found; Weights says what the per-observation weight is.
	Start     string `json:"start"`
	ScaleRule string `json:"scale_rule"`
	Weights   string `json:"weights"`
	// OutlierCut is the cut on |r/σ| beyond which a row is flagged.
	OutlierCut float64 `json:"outlier_cut"`
	// psiDesc names the psi with its constants, for the table.
	psiDesc string
}

type fitJSON struct {
	Group        string               `json:"group"`
	Rows         int                  `json:"rows"`
	Coefficients map[string]jsonFloat `json:"coefficients,omitempty"`
	Order        []string             `json:"coefficient_order"`
	// StandardErrors and Intervals (95%) are keyed like Coefficients;
	// both are absent, and NoStandardErrors says why, when the method or
	// the fit has no covariance estimate. IntervalRule names the quantile.
	StandardErrors   map[string]jsonFloat    `json:"standard_errors,omitempty"`
	Intervals        map[string][2]jsonFloat `json:"intervals,omitempty"`
	IntervalRule     string                  `json:"interval_rule,omitempty"`
	NoStandardErrors string                  `json:"no_standard_errors,omitempty"`
	Scale            jsonFloat               `json:"scale"`
	Iterations       int                     `json:"iterations"`
	Status           string                  `json:"status"`
	Converged        bool                    `json:"converged"`
	EquationNorm     jsonFloat               `json:"equation_norm"`
	Objective        jsonFloat               `json:"objective"`
	// SRefinement and SSteps say how the refinement of the S-estimate
	// ended and its steps, for fits that compute one.
	SRefinement string `json:"s_refinement,omitempty"`
	SSteps      int    `json:"s_steps,omitempty"`
	// Observations holds each row's residual, scaled residual, final
	// weight and outlier flag, in file order.
	Observations []fitObservation `json:"observations,omitempty"`
	Outliers     int              `json:"outliers"`
	Error        string           `json:"error,omitempty"`
}

// fitObservation is one row of the data after a fit.
type fitObservation struct {
	Row    int       `json:"row"`  // data row, from 1 (the header is not counted)
	Line   int       `json:"line"` // the file line the row starts on
	Resid  jsonFloat `json:"residual"`
	Scaled jsonFloat `json:"scaled_residual"` // residual / scale
	Weight jsonFloat `json:"weight"`          // null where the method has none
	Flag   bool      `json:"outlier"`
}

// defaultOutlierCut is fit's default cut on |r/σ|. Flagging standardised
// residuals beyond 2.5 is common practice (Rousseeuw & Leroy (1987), Robust
// Regression and Outlier Detection, Wiley, use it for reweighting; from
// memory): under normal errors about 1.2% of clean rows pass it. One cut
// for every method, rather than a redescender's rejection point, makes the
// flags of two fits comparable; the weight column shows what a
// redescending psi rejected outright (weight 0).
const defaultOutlierCut = 2.5

func fitCmd(e env, args []string) error {
	fs := newFlags(e, "fit", "DATA.csv --y COLUMN [options]",
		"Fits a regression to a CSV file (a header row, then one row per observation),\nonce per group if --group is given.")
	yCol := fs.String("y", "", "response `column` (required)")
	xCols := fs.String("x", "", "predictor `columns`, comma-separated (default: every other column holding numbers)")
	group := fs.String("group", "", "fit once per value of this `column`")
	noIntercept := fs.Bool("no-intercept", false, "fit without an intercept")
	ef := addEstimatorFlags(fs.FlagSet)
	asJSON := fs.Bool("json", false, "print JSON instead of a table")
	weightsOut := fs.String("weights", "", "write each row's residual, scaled residual, weight and outlier flag to this CSV `file`")
	cut := fs.Float64("outlier-cut", defaultOutlierCut, "flag rows whose |residual/scale| exceeds `C`")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usagef("want one CSV file, got %d arguments", len(pos))
	}
	if *yCol == "" {
		return usagef("--y is required: the name of the response column")
	}
	est, desc, err := ef.build(givenFlags(fs.FlagSet))
	if err != nil {
		return err
	}
	seed := ef.seed
	if !(*cut > 0) || math.IsInf(*cut, 0) {
		return usagef("--outlier-cut must be a positive number, got %v", *cut)
	}
	rules := est.Rules(desc.psiDesc, seed.or(1))
	desc.Start, desc.ScaleRule, desc.Weights = rules.Start, rules.Scale, rules.Weights
	desc.OutlierCut = *cut
	f, err := os.Open(pos[0])
	if err != nil {
		return err
	}
	defer f.Close()
	t, err := csvdata.ReadFile(pos[0], f)
	if err != nil {
		return dataError{err}
	}
	defer t.Close()
	design, err := chooseColumns(t, *yCol, *xCols, *group)
	if err != nil {
		return dataError{err}
	}
	intercept := !*noIntercept
	// Every cell is checked before anything is written, so that bad data
	// gives its error and no output.
	if err := design.check(t, intercept); err != nil {
		return err
	}
	names := design.names
	if intercept {
		names = append([]string{"intercept"}, names...)
	}
	out := newFitWriter(e.stdout, desc, names, *asJSON, *weightsOut != "", *group != "")
	fr := fitter{t: t, design: design, est: est, seed: seed.or(1), intercept: intercept, names: names, cut: *cut}
	failed, nonFinite, err := fr.run(out)
	if err != nil {
		return err
	}
	if err := out.end(); err != nil {
		return err
	}
	// Names and error texts were read from the file as the fits were
	// written: a file changed meanwhile is reported, not trusted.
	if err := t.Close(); err != nil {
		return dataError{err}
	}
	if *weightsOut != "" {
		if err := atomicfile.WriteFile(*weightsOut, out.weightsCSV()); err != nil {
			return err
		}
	}
	var problems []string
	if failed > 0 {
		problems = append(problems, fmt.Sprintf("%d of %d group(s) could not be fitted (see the error of each)", failed, len(design.groups)))
	}
	if nonFinite > 0 {
		problems = append(problems, fmt.Sprintf("%d of %d group(s) ended with coefficients or a scale that are not finite (status non-finite): the values are likely too large for float64 arithmetic; rescale the columns (other units) and fit again", nonFinite, len(design.groups)))
	}
	if len(problems) > 0 {
		return errors.New(strings.Join(problems, "; "))
	}
	return nil
}

// estimatorFlags are fit's options that choose the estimator.
type estimatorFlags struct {
	method, start *methodFlag
	pf            *psiFlags
	scale         *scaleFlag
	seed          *seedFlag
	sDivisor      *divisorFlag
	tol           *float64
	maxIter       *int
}

// addEstimatorFlags defines the options that choose fit's estimator.
func addEstimatorFlags(fs *flag.FlagSet) *estimatorFlags {
	f := &estimatorFlags{method: &methodFlag{m: estimators.MethodIRLS}, start: &methodFlag{m: estimators.MethodLS, starts: true}}
	fs.Var(f.method, "method", "`method`: "+f.method.choices())
	fs.Var(f.start, "start", "`method` whose estimate starts "+
		estimators.ListMethods(estimators.MethodsWhere(userStart), "or")+": "+f.start.choices())
	f.pf = addPsiFlags(fs, "huber")
	f.scale = new(scaleFlag)
	fs.Var(f.scale, "scale", "scale `rule`: mad, start (held at the start's scale), or fixed:S for a known scale S")
	f.seed = addSeedFlag(fs, "seed", "`seed` of the random subsets of "+
		estimators.ListMethods(estimators.MethodsWhere(estimators.MethodInfo.Resamples), "and")+" (decimal digits; default 1)")
	f.sDivisor = new(divisorFlag)
	fs.Var(f.sDivisor, "s-divisor", "`divisor` d of the S-scale equation (1/d) Σ rho(r/s) = b: n or n-p ("+
		strings.Join(methodNames(estimators.MethodsWhere(usesSScale)), ", ")+" and starts from them)")
	f.tol = fs.Float64("tol", estimators.DefaultChangeTol, "stop when the relative change in coefficients is below `T`")
	f.maxIter = fs.Int("max-iter", estimators.DefaultMaxIterations, "iteration cap `N`")
	return f
}

// build returns the estimator the options choose, given the names of those
// set on the command line, and its description for the output.
func (f *estimatorFlags) build(given map[string]bool) (estimators.Estimator, fitEstimator, error) {
	est, desc, err := buildFitEstimator(f.method.m, f.start.m, f.pf, f.scale.ScaleSpec, *f.tol, *f.maxIter, f.sDivisor.d, given)
	if err != nil {
		return est, desc, err
	}
	if given["s-divisor"] && !usesSScale(est.Method.Info()) && !(!est.Method.Direct() && usesSScale(est.StartFrom.Info())) {
		return est, desc, usagef("--s-divisor is used only by %s (or a start from them)",
			estimators.ListMethods(estimators.MethodsWhere(usesSScale), "and"))
	}
	return est, desc, nil
}

// buildFitEstimator turns fit's options into an estimator: method m,
// started (if it takes a start) from the estimate of from. It writes them
// as the scenario entry they stand for and builds that
// (scenarios.EstimatorSpec.Build), so fit and run make the same estimator
// of the same settings.
func buildFitEstimator(m, from estimators.Method, pf *psiFlags, sc scenarios.ScaleSpec, tol float64, maxIter int, div estimators.ScaleDivisor, given map[string]bool) (estimators.Estimator, fitEstimator, error) {
	info := m.Info()
	desc := fitEstimator{Method: m.String()}
	spec := scenarios.EstimatorSpec{Label: "fit", Method: m.String(), Resampling: &scenarios.Resampling{SDivisor: div.String()}}
	if !info.TakesPsi {
		for _, name := range append(psiFlagNames(), "scale", "tol", "max-iter", "start") {
			if given[name] {
				return estimators.Estimator{}, desc, usagef("--%s is not used with --method %s", name, m)
			}
		}
		est, err := spec.Build()
		return est, desc, err
	}
	if info.OwnStart != "" && (given["start"] || given["scale"]) {
		return estimators.Estimator{}, desc, usagef("--start and --scale are not used with --method %s (its start and scale are %s)", m, info.OwnStart)
	}
	if info.DefaultFamily != "" && !given["psi"] && !given["psi-expr"] {
		pf.family = familyName(info.DefaultFamily)
	}
	ch, err := pf.build(given)
	if err != nil {
		return estimators.Estimator{}, desc, err
	}
	if !(tol > 0) || math.IsInf(tol, 0) {
		return estimators.Estimator{}, desc, usagef("--tol must be a positive finite number, got %v", tol)
	}
	if maxIter < 1 {
		return estimators.Estimator{}, desc, usagef("--max-iter must be at least 1, got %d", maxIter)
	}
	spec.Psi, spec.Tuning, spec.Scale = ch.spec, ch.given, sc
	spec.Start = scenarios.StartSpec{From: from.String()}
	spec.Stop = scenarios.Stop{Change: &tol, MaxIter: &maxIter}
	est, err := spec.Build()
	if err != nil {
		return estimators.Estimator{}, desc, err
	}
	desc.Psi, desc.Tuning, desc.Scale, desc.psiDesc = ch.name, ch.tuning, sc.String(), ch.desc
	if info.OwnScale != "" {
		desc.Scale = info.OwnScale
	}
	if ch.name == "custom" {
		desc.Psi = "custom: " + pf.expr
	}
	return est, desc, nil
}

// methodFlag is an option naming a method; with starts set it takes only
// the methods that can start an M-estimator.
type methodFlag struct {
	m      estimators.Method
	starts bool
}

// String returns the method's name.
func (f *methodFlag) String() string { return f.m.String() }

// Set parses a method's name.
func (f *methodFlag) Set(s string) error {
	m, ok := estimators.ParseMethod(s)
	if !ok || (f.starts && !m.Direct()) {
		return fmt.Errorf("want %s", f.choices())
	}
	f.m = m
	return nil
}

// choices lists the names the option takes.
func (f *methodFlag) choices() string {
	if f.starts {
		return estimators.ListMethods(estimators.MethodsWhere(func(i estimators.MethodInfo) bool { return i.Direct }), "or")
	}
	return estimators.ListMethods(estimators.Methods(), "or")
}

// scaleFlag is the --scale option: a scale rule in the form of scenario
// files (scenarios.ParseScale).
type scaleFlag struct{ scenarios.ScaleSpec }

// Set parses a scale rule.
func (f *scaleFlag) Set(s string) error {
	v, err := scenarios.ParseScale(s)
	if err != nil {
		return err
	}
	f.ScaleSpec = v
	return nil
}

// divisorFlag is the --s-divisor option.
type divisorFlag struct{ d estimators.ScaleDivisor }

// String returns the divisor's name.
func (f *divisorFlag) String() string { return f.d.String() }

// Set parses "n" or "n-p".
func (f *divisorFlag) Set(s string) error {
	d, ok := estimators.ParseScaleDivisor(s)
	if !ok {
		return errors.New("want n or n-p")
	}
	f.d = d
	return nil
}

// userStart reports whether a method takes a start of the user's.
func userStart(i estimators.MethodInfo) bool { return i.TakesPsi && i.OwnStart == "" }

// usesSScale reports whether a method computes an S-scale.
func usesSScale(i estimators.MethodInfo) bool { return i.SScale }

// methodNames returns the names of ms.
func methodNames(ms []estimators.Method) []string {
	out := make([]string, len(ms))
	for i, m := range ms {
		out[i] = m.String()
	}
	return out
}

// matrices builds the design matrix (an intercept column first when asked)
// and the response of the given data rows; a cell that is not a number is
// an error naming its line and column.
func (d design) matrices(t *csvdata.Table, rows []int, intercept bool) (*mat.Dense, []float64, error) {
	return d.matricesInto(t, rows, intercept, new(fitBuffers))
}

// matricesInto is matrices with the design and response in buf's slices,
// which the next call overwrites.
func (d design) matricesInto(t *csvdata.Table, rows []int, intercept bool, buf *fitBuffers) (*mat.Dense, []float64, error) {
	off := 0
	if intercept {
		off = 1
	}
	p := off + len(d.x)
	data := grow(&buf.x, len(rows)*p)
	y := grow(&buf.y, len(rows))
	x := mat.NewDense(len(rows), p, data)
	for r, i := range rows {
		xr := data[r*p : (r+1)*p]
		if intercept {
			xr[0] = 1
		}
		for k, j := range d.x {
			v, err := t.Float(i, j)
			if err != nil {
				return nil, nil, dataError{err}
			}
			xr[off+k] = v
		}
		var err error
		if y[r], err = t.Float(i, d.y); err != nil {
			return nil, nil, dataError{err}
		}
	}
	return x, y, nil
}

// design is the columns and groups chosen for a fit.
type design struct {
	y      int
	x      []int
	names  []string
	groups []fitGroup
}

type fitGroup struct {
	name string
	rows []int
}

// chooseColumns resolves the response, predictor and group columns.
func chooseColumns(t *csvdata.Table, yName, xList, groupName string) (design, error) {
	var d design
	var err error
	if d.y, err = t.Column(yName); err != nil {
		return d, err
	}
	gcol := -1
	if groupName != "" {
		if gcol, err = t.Column(groupName); err != nil {
			return d, err
		}
		if gcol == d.y {
			return d, fmt.Errorf("%s: column %q cannot be both the response (--y) and the group (--group); group by another column", t.File, groupName)
		}
	}
	if xList != "" {
		for _, name := range strings.Split(xList, ",") {
			name = strings.TrimSpace(name)
			j, err := t.Column(name)
			if err != nil {
				return d, err
			}
			if j == d.y || j == gcol {
				return d, fmt.Errorf("%s: column %q cannot be both a predictor and the response or group", t.File, name)
			}
			if slices.Contains(d.x, j) {
				return d, fmt.Errorf("%s: column %q is listed twice in the predictors; list each column once", t.File, name)
			}
			d.x = append(d.x, j)
			d.names = append(d.names, name)
		}
	} else {
		for j, name := range t.Names {
			// A column with any number in it is a predictor, so a stray
			// bad cell is reported rather than the column silently dropped.
			if j != d.y && j != gcol && t.HasNumber(j) {
				d.x = append(d.x, j)
				d.names = append(d.names, name)
			}
		}
	}
	for _, n := range d.names {
		if n == "intercept" {
			return d, fmt.Errorf("%s: a column is named \"intercept\"; rename it or use --no-intercept", t.File)
		}
	}
	if gcol < 0 {
		rows := make([]int, t.Rows())
		for i := range rows {
			rows[i] = i
		}
		d.groups = []fitGroup{{name: "all", rows: rows}}
		return d, nil
	}
	groups, err := t.Groups(gcol)
	if err != nil {
		return d, err
	}
	d.groups = make([]fitGroup, len(groups))
	for k, g := range groups {
		d.groups[k] = fitGroup{name: g.Name, rows: g.Rows}
	}
	return d, nil
}

// check returns the error matrices would meet first, going through the
// groups in order, or nil when every cell of the response and the
// predictors is a number. The common case, all numbers, is a look at
// each cell's number as the file was read.
func (d design) check(t *csvdata.Table, intercept bool) error {
	clean := t.Numeric(d.y)
	for _, j := range d.x {
		clean = clean && t.Numeric(j)
	}
	if clean {
		return nil
	}
	var buf fitBuffers
	for _, g := range d.groups {
		if _, _, err := d.matricesInto(t, g.rows, intercept, &buf); err != nil {
			return err
		}
	}
	return nil
}

// fitBuffers holds the scratch of fit's groups, reused from one to the
// next.
type fitBuffers struct {
	x, y, r, w, se []float64
}

// grow returns (*s)[:n], reallocating *s when it is too short.
func grow[T any](s *[]T, n int) []T {
	if cap(*s) < n {
		*s = make([]T, n)
	}
	*s = (*s)[:n]
	return *s
}
