package scenarios

import (
	"errors"
	"fmt"
	"math"
	"regexp"
	"strings"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/psi"
)

// Defaults of the scenario format.
const (
	DefaultSeed       = 1
	DefaultReplicates = 1000
)

// namePattern is what names and labels may look like: they become parts of
// sweep paths, CSV columns and output file names.
var namePattern = regexp.MustCompile(`^[A-Za-z0-9_][A-Za-z0-9_-]*$`)

// scenarioNamePattern also allows dots (but not a leading dot).
var scenarioNamePattern = regexp.MustCompile(`^[A-Za-z0-9_][A-Za-z0-9._-]*$`)

// refuseDottedNames refuses column names and labels that contain a dot:
// in a sweep path such as estimators.huber.v2.tuning the dots separate
// the path's parts, so a name with a dot could not be told apart from a
// name followed by a field.
func (s *Scenario) refuseDottedNames(c checker) {
	refuse := func(path, what, name string) {
		if strings.Contains(name, ".") {
			c.fail(path, "%q contains a dot, but dots separate the parts of sweep paths (such as estimators.LABEL.tuning), so %s cannot contain one; rename it, for example to %q, and write that name in any sweep path",
				name, what, strings.ReplaceAll(name, ".", "-"))
		}
	}
	for i, col := range s.Model.Columns {
		refuse(fmt.Sprintf("model.columns[%d].name", i), "column names", col.Name)
	}
	for i, ct := range s.Contamination {
		refuse(fmt.Sprintf("contamination[%d].label", i), "labels", ct.Label)
	}
	for i, e := range s.Estimators {
		refuse(fmt.Sprintf("estimators[%d].label", i), "labels", e.Label)
	}
}

// Coefficients returns the number of coefficients of the model, counting
// the intercept.
func (s *Scenario) Coefficients() int {
	p := len(s.Model.Columns)
	if !s.Model.Intercept.None {
		p++
	}
	return p
}

// CoefficientNames returns the coefficient names: "intercept" (if any) and
// the column names.
func (s *Scenario) CoefficientNames() []string {
	var out []string
	if !s.Model.Intercept.None {
		out = append(out, "intercept")
	}
	for _, c := range s.Model.Columns {
		out = append(out, c.Name)
	}
	return out
}

// Truth returns the true coefficients, intercept first.
func (s *Scenario) Truth() []float64 {
	var out []float64
	if !s.Model.Intercept.None {
		out = append(out, s.Model.Intercept.Value)
	}
	for _, c := range s.Model.Columns {
		out = append(out, c.Slope)
	}
	return out
}

// fillDefaults sets every defaulted field, using d to know what was given.
func (s *Scenario) fillDefaults(d *decoder, defaultName string) {
	if !d.given("name") {
		s.Name = sanitiseName(defaultName)
	}
	if !d.given("seed") {
		s.Seed = DefaultSeed
	}
	if !d.given("replicates") {
		s.Replicates = DefaultReplicates
	}
	for i := range s.Model.Columns {
		s.Model.Columns[i].Distribution.fillDefaults()
	}
	s.Noise.fillDefaults()
	kinds := map[string]int{}
	for i := range s.Contamination {
		c := &s.Contamination[i]
		c.fillDefaults()
		if c.Label == "" {
			kind := c.Kind.String()
			kinds[kind]++
			c.Label = kind
			if kinds[kind] > 1 {
				c.Label = fmt.Sprintf("%s-%d", kind, kinds[kind])
			}
		}
	}
	labels := map[string]int{}
	for i := range s.Estimators {
		e := &s.Estimators[i]
		if e.Method == "" {
			if e.Psi.IsZero() {
				e.Method = "ls"
			} else {
				e.Method = "irls"
			}
		}
		e.fillOutsideDefaults()
		m, known := estimators.ParseMethod(e.Method)
		if f := m.Info().DefaultFamily; known && f != "" && e.Psi.IsZero() {
			e.Psi = PsiSpec{Family: f}
		}
		if known && m.TakesPsi() {
			if f, ok := psi.LookupFamily(e.Psi.Family); ok && len(e.Tuning) == 0 && e.Psi.Custom == nil {
				e.Tuning = append(Numbers(nil), f.Defaults...)
			}
			if e.Stop.Change == nil && e.Stop.Equations == nil {
				v := estimators.DefaultChangeTol
				e.Stop.Change = &v
			}
			if e.Stop.MaxIter == nil {
				v := estimators.DefaultMaxIterations
				e.Stop.MaxIter = &v
			}
			e.Stop.Require = e.Stop.Require.orAny()
		}
		if e.Label == "" {
			base := e.Method
			if !e.Psi.IsZero() {
				base += "-" + e.Psi.Name()
			}
			labels[base]++
			e.Label = base
			if labels[base] > 1 {
				e.Label = fmt.Sprintf("%s-%d", base, labels[base])
			}
		}
	}
	if b := s.Breakdown; b != nil && b.Fraction == "" {
		var fractions []string
		for _, sw := range s.Vary {
			if resolveSweep(s, sw.Path).Kind == SweepFraction {
				fractions = append(fractions, sw.Path)
			}
		}
		if len(fractions) == 1 {
			b.Fraction = fractions[0]
		}
	}
	if s.Reference == "" && len(s.Estimators) > 0 {
		s.Reference = s.Estimators[0].Label
		for _, e := range s.Estimators {
			if e.Method == "ls" {
				s.Reference = e.Label
				break
			}
		}
	}
}

// sanitiseName makes a file name usable as a scenario name.
func sanitiseName(s string) string {
	var b strings.Builder
	for _, r := range s {
		switch {
		case r >= 'a' && r <= 'z', r >= 'A' && r <= 'Z', r >= '0' && r <= '9', r == '_', r == '-', r == '.':
			b.WriteRune(r)
		default:
			b.WriteByte('_')
		}
	}
	out := strings.TrimLeft(b.String(), ".")
	if out == "" {
		return "scenario"
	}
	return out
}

// checker validates a decoded scenario, locating problems through the
// decoder's positions.
type checker struct {
	d *decoder
}

// fail records a problem with the field at path (or its nearest located
// parent).
func (c checker) fail(path, format string, args ...any) {
	p := path
	for {
		if pos, ok := c.d.pos[p]; ok {
			c.d.errs.add(pos.line, pos.col, path, format, args...)
			return
		}
		i := strings.LastIndexAny(p, ".[")
		if i < 0 {
			c.d.errs.add(0, 0, path, format, args...)
			return
		}
		p = p[:i]
	}
}

// validate checks every field of a complete (cell) scenario.
func (s *Scenario) validate(d *decoder, limits Limits) {
	c := checker{d}
	if !scenarioNamePattern.MatchString(s.Name) || len(s.Name) > 100 {
		c.fail("name", "%q is not a valid name: use up to 100 letters, digits, '.', '_' or '-', not starting with '.'", s.Name)
	}
	if s.Replicates < 1 || (limits.Replicates == 0 && s.Replicates > limits.MaxReplicates) {
		c.fail("replicates", "must be from 1 to %d, got %d (raise the limit with --max-replicates)", limits.MaxReplicates, s.Replicates)
	}
	s.validateModel(c, limits)
	s.validateNoise(c)
	s.validateContamination(c)
	s.validateEstimators(c)
	s.validateBreakdown(c)
}

// validateBreakdown checks the breakdown section against the sweeps.
func (s *Scenario) validateBreakdown(c checker) {
	b := s.Breakdown
	if b == nil {
		return
	}
	swept := map[string]bool{}
	var fractions []string
	for _, sw := range s.Vary {
		swept[sw.Path] = true
		if resolveSweep(s, sw.Path).Kind == SweepFraction {
			fractions = append(fractions, sw.Path)
		}
	}
	switch {
	case b.Fraction == "":
		c.fail("breakdown.fraction", "name the swept contamination fraction (swept fractions: %s)", strings.Join(fractions, ", "))
	case !swept[b.Fraction]:
		c.fail("breakdown.fraction", "%q is not swept under vary", b.Fraction)
	}
	for i, w := range b.WorstOver {
		if !swept[w] || w == b.Fraction {
			c.fail(fmt.Sprintf("breakdown.worst-over[%d]", i), "%q must be a swept path other than the fraction", w)
		}
	}
	if !(b.Threshold >= 0) {
		c.fail("breakdown.threshold", "must be ≥ 0, got %v", b.Threshold)
	}
}

func (s *Scenario) validateModel(c checker, limits Limits) {
	m := &s.Model
	if !c.d.given("model") {
		c.fail("model", "missing: give model.n and model.columns (and model.intercept)")
		return
	}
	p := s.Coefficients()
	if p == 0 {
		c.fail("model", "the model has no coefficients: give columns, or an intercept other than none")
	}
	if !c.d.given("model.n") {
		c.fail("model.n", "missing: the number of observations per dataset, more than the %d coefficients", p)
	} else if m.N <= p {
		c.fail("model.n", "must exceed the number of coefficients (%d), got %d", p, m.N)
	} else if m.N > limits.MaxN {
		c.fail("model.n", "%d observations exceed the limit of %d (raise it with --max-n)", m.N, limits.MaxN)
	}
	names := map[string]bool{}
	random := 0
	for i := range m.Columns {
		col := &m.Columns[i]
		path := fmt.Sprintf("model.columns[%d]", i)
		switch {
		case col.Name == "":
			c.fail(path+".name", "missing: every column needs a name")
		case !namePattern.MatchString(col.Name) || len(col.Name) > 64:
			c.fail(path+".name", "%q is not a valid name: use letters, digits, '_' or '-'", col.Name)
		case col.Name == "intercept":
			c.fail(path+".name", "\"intercept\" is reserved for the intercept; choose another name")
		case names[col.Name]:
			c.fail(path+".name", "%q names two columns; names must be unique", col.Name)
		}
		names[col.Name] = true
		if col.Distribution.check(c, path, !m.Intercept.None) {
			random++
		}
	}
	if m.Correlation.Given {
		k := len(m.Columns)
		if random != k {
			c.fail("model.correlation", "correlation needs every column to be random; levels and grid columns are fixed designs")
			return
		}
		if k < 2 {
			c.fail("model.correlation", "correlation needs at least two columns")
			return
		}
		corr, err := m.Correlation.matrix(k)
		if err != nil {
			c.fail("model.correlation", "%v", err)
			return
		}
		var chol mat.Cholesky
		if !chol.Factorize(corr) {
			c.fail("model.correlation", "is not a valid correlation matrix (not positive definite); with one common value r for %d columns, r must be in (%.4g, 1)", k, -1/float64(k-1))
		}
	}
}

// matrix returns the k×k correlation matrix, or an error describing what is
// wrong with it.
func (v Correlation) matrix(k int) (*mat.SymDense, error) {
	out := mat.NewSymDense(k, nil)
	if v.Matrix == nil {
		if !(v.Common > -1 && v.Common < 1) {
			return nil, fmt.Errorf("a common correlation must be between -1 and 1 (exclusive), got %v", v.Common)
		}
		for i := 0; i < k; i++ {
			for j := i; j < k; j++ {
				if i == j {
					out.SetSym(i, j, 1)
				} else {
					out.SetSym(i, j, v.Common)
				}
			}
		}
		return out, nil
	}
	if len(v.Matrix) != k {
		return nil, fmt.Errorf("want a %d×%d matrix (one row per column), got %d rows", k, k, len(v.Matrix))
	}
	for i, r := range v.Matrix {
		if len(r) != k {
			return nil, fmt.Errorf("row %d has %d entries, want %d", i+1, len(r), k)
		}
		for j, x := range r {
			if i == j && x != 1 {
				return nil, fmt.Errorf("diagonal entry %d is %v; a correlation matrix has ones on its diagonal", i+1, x)
			}
			if x != v.Matrix[j][i] {
				return nil, fmt.Errorf("entries (%d,%d) and (%d,%d) differ; a correlation matrix is symmetric", i+1, j+1, j+1, i+1)
			}
			if !(x >= -1 && x <= 1) {
				return nil, fmt.Errorf("entry (%d,%d) is %v; correlations lie in [-1, 1]", i+1, j+1, x)
			}
			out.SetSym(i, j, x)
		}
	}
	return out, nil
}

func (s *Scenario) validateEstimators(c checker) {
	if len(s.Estimators) == 0 {
		c.fail("estimators", "missing: list at least one estimator, for example {method: ls} and {method: irls, psi: huber}")
		return
	}
	p := s.Coefficients()
	labels := map[string]bool{}
	for i := range s.Estimators {
		e := &s.Estimators[i]
		path := fmt.Sprintf("estimators[%d]", i)
		if !namePattern.MatchString(e.Label) || len(e.Label) > 64 {
			c.fail(path+".label", "%q is not a valid label: use letters, digits, '_' or '-'", e.Label)
		} else if labels[e.Label] {
			c.fail(path+".label", "%q labels two estimators; labels must be unique", e.Label)
		}
		labels[e.Label] = true
		if s.validateOutside(c, path, e) {
			continue
		}
		m, ok := estimators.ParseMethod(e.Method)
		if !ok {
			c.fail(path+".method", "unknown method %q; want %s, %s or %s", e.Method, strings.Join(methodNames(), ", "), MethodExternal, MethodGo)
			continue
		}
		// What this estimator runs: its own method and its start's.
		info := m.Info()
		usesS, usesLTS := info.SScale, info.Trims
		if from, ok := estimators.ParseMethod(e.Start.From); ok && e.Start.From != "" {
			usesS, usesLTS = usesS || from.Info().SScale, usesLTS || from.Info().Trims
		}
		if rs := e.Resampling; rs != nil {
			if !usesS && !usesLTS {
				c.fail(path+".resampling", "is not used by method %s: only %s (or starts from them) draw elemental subsets", e.Method, methodsWhere(estimators.MethodInfo.Resamples))
			}
			if rs.Subsets < 0 || rs.Subsets > 1_000_000 {
				c.fail(path+".resampling.subsets", "must be from 1 to 1000000, got %d", rs.Subsets)
			}
			if rs.Keep < 0 || rs.Keep > 1000 {
				c.fail(path+".resampling.keep", "must be from 1 to 1000, got %d", rs.Keep)
			}
			switch {
			case rs.SC != 0 && !usesS:
				c.fail(path+".resampling.s-tuning", "is used only by %s (the S-scale's bisquare)", methodsWhere(sScale))
			case rs.SC != 0 && !(rs.SC >= 0.1 && rs.SC <= 100):
				// Our bounds: 1.547 gives the S-scale 50% breakdown; far
				// below 0.1 or above 100 the scale is numerically meaningless.
				c.fail(path+".resampling.s-tuning", "must be from 0.1 to 100 (1.5476 gives 50%% breakdown), got %v", rs.SC)
			}
			if rs.SDivisor != "" {
				if _, ok := estimators.ParseScaleDivisor(rs.SDivisor); !ok {
					c.fail(path+".resampling.s-divisor", "must be n or n-p, got %q", rs.SDivisor)
				} else if !usesS {
					c.fail(path+".resampling.s-divisor", "is used only by %s (the S-scale's equation)", methodsWhere(sScale))
				}
			}
			switch {
			case rs.H != 0 && !usesLTS:
				c.fail(path+".resampling.h", "is used only by %s", methodsWhere(func(i estimators.MethodInfo) bool { return i.Trims }))
			case rs.H != 0 && (rs.H < p || rs.H > s.Model.N):
				c.fail(path+".resampling.h", "LTS keeps h observations, between the %d coefficients and n = %d; got %d", p, s.Model.N, rs.H)
			}
		}
		resampled := usesS || usesLTS
		if resampled && s.Model.N < 2*p {
			c.fail(path+".method", "%s (and starts from them) need n ≥ 2 × coefficients = %d observations, got n = %d: with fewer, an elemental subset fits half the data exactly", methodsWhere(estimators.MethodInfo.Resamples), 2*p, s.Model.N)
		}
		if !info.TakesPsi {
			for _, key := range []string{"psi", "tuning", "scale", "start", "stop"} {
				if c.d.given(path + "." + key) {
					c.fail(path+"."+key, "is not used by method %s (it has no psi, scale, start or stopping rule of its own)", e.Method)
				}
			}
			continue
		}
		if info.OwnStart != "" {
			for _, key := range []string{"scale", "start"} {
				if c.d.given(path + "." + key) {
					c.fail(path+"."+key, "is not used by method %s (its start and scale are %s)", e.Method, info.OwnStart)
				}
			}
		}
		if e.Psi.IsZero() {
			c.fail(path+".psi", "missing: method %s needs a psi family (%s) or a mapping with expr", e.Method, strings.Join(psi.FamilyNames(), ", "))
			continue
		}
		if !validatePsi(c, path, e) {
			continue
		}
		if e.Scale.Start && e.Start.Coefficients != nil {
			c.fail(path+".scale", "scale: start needs a start method (s-estimate, lts, ...), not given coefficients")
		}
		if e.Start.Coefficients != nil && len(e.Start.Coefficients) != p {
			c.fail(path+".start", "want %d starting coefficients (%s), got %d", p, strings.Join(s.CoefficientNames(), ", "), len(e.Start.Coefficients))
		}
		st := e.Stop
		if st.Change != nil && !(*st.Change >= 0) {
			c.fail(path+".stop.change", "must be ≥ 0, got %v", *st.Change)
		}
		if st.Equations != nil && !(*st.Equations >= 0) {
			c.fail(path+".stop.equations", "must be ≥ 0, got %v", *st.Equations)
		}
		if st.MaxIter != nil && (*st.MaxIter < 1 || *st.MaxIter > 1_000_000) {
			c.fail(path+".stop.max-iter", "must be from 1 to 1000000, got %d", *st.MaxIter)
		}
		if !st.Require.known() {
			c.fail(path+".stop.require", "want any or all, got %q", st.Require)
		}
	}
	s.validateAudits(c)
	if !labels[s.Reference] {
		c.fail("reference", "no estimator labelled %q; labels: %s", s.Reference, strings.Join(s.estimatorLabels(), ", "))
	}
}

// Build returns the estimator this spec describes. The spec must have been
// validated (as every spec of a loaded Study has).
func (e EstimatorSpec) Build() (estimators.Estimator, error) {
	m, ok := estimators.ParseMethod(e.Method)
	if !ok {
		return estimators.Estimator{}, fmt.Errorf("estimator %s: unknown method %q", e.Label, e.Method)
	}
	out := estimators.Estimator{Method: m}
	if rs := e.Resampling; rs != nil {
		div, _ := estimators.ParseScaleDivisor(rs.SDivisor)
		out.Resampling = estimators.Resampling{Subsets: rs.Subsets, Keep: rs.Keep, SC: rs.SC, SDivisor: div, H: rs.H}
	}
	if !m.TakesPsi() {
		return out, nil
	}
	psi, err := e.BuildPsi()
	if err != nil {
		return out, err
	}
	out.Psi = psi
	switch {
	case e.Scale.Fixed:
		out.Scale = estimators.Scale{Rule: estimators.ScaleFixed, Value: e.Scale.Value}
	case e.Scale.Start:
		out.Scale = estimators.Scale{Rule: estimators.ScaleStart}
	}
	out.Start = e.Start.Coefficients
	if e.Start.From != "" {
		out.StartFrom, _ = estimators.ParseMethod(e.Start.From)
	}
	var s estimators.Settings
	if e.Stop.Change != nil {
		s.Rules |= estimators.RuleChange
		s.ChangeTol = *e.Stop.Change
	}
	if e.Stop.Equations != nil {
		s.Rules |= estimators.RuleEquations
		s.EquationTol = *e.Stop.Equations
	}
	if e.Stop.MaxIter != nil {
		s.MaxIterations = *e.Stop.MaxIter
	}
	s.RequireAll = e.Stop.Require.All()
	// A tolerance of exactly 0 would read as "use the default" in Settings;
	// the smallest positive value keeps the user's intent of "never".
	if s.Rules&estimators.RuleChange != 0 && s.ChangeTol == 0 {
		s.ChangeTol = math.SmallestNonzeroFloat64
	}
	if s.Rules&estimators.RuleEquations != 0 && s.EquationTol == 0 {
		s.EquationTol = math.SmallestNonzeroFloat64
	}
	out.Settings = s
	return out, nil
}

// BuildPsi returns the psi this spec describes.
func (e EstimatorSpec) BuildPsi() (psi.Psi, error) {
	if e.Psi.Custom != nil {
		c, err := psi.NewCustom(e.Psi.Custom.Spec())
		if err != nil {
			return nil, fmt.Errorf("estimator %s: %w", e.Label, err)
		}
		return c, nil
	}
	f, ok := psi.LookupFamily(e.Psi.Family)
	if !ok {
		return nil, fmt.Errorf("estimator %s: unknown psi family %q", e.Label, e.Psi.Family)
	}
	psi, err := f.New(e.Tuning)
	if err != nil {
		return nil, fmt.Errorf("estimator %s: %w", e.Label, err)
	}
	return psi, nil
}

// customKey returns the scenario key of a psi.CustomSpec field, as named
// by psi.SpecError.
func customKey(field string) string {
	if field == "Psi" {
		return "expr"
	}
	return strings.ToLower(field) // rho, deriv, constants, kinks
}

// validatePsi checks the declared psi of estimator e at path, of any
// method: a custom psi (its expressions and constants, and no tuning) or a
// family (known, and its tuning constants). It reports false when the
// family is unknown, so that checks needing the psi are skipped.
func validatePsi(c checker, path string, e *EstimatorSpec) bool {
	if e.Psi.Custom != nil {
		if len(e.Tuning) > 0 {
			c.fail(path+".tuning", "is not used with a custom psi; give its constants under psi.constants")
		}
		if _, err := psi.NewCustom(e.Psi.Custom.Spec()); err != nil {
			field := path + ".psi"
			var se *psi.SpecError
			if errors.As(err, &se) && c.d.given(field+"."+customKey(se.Field)) {
				field += "." + customKey(se.Field)
			}
			c.fail(field, "%v", err)
		}
		return true
	}
	f, ok := psi.LookupFamily(e.Psi.Family)
	if !ok {
		c.fail(path+".psi", "unknown psi family %q; valid: %s, or a mapping with expr for a psi of your own", e.Psi.Family, strings.Join(psi.FamilyNames(), ", "))
		return false
	}
	if _, err := f.New(e.Tuning); err != nil {
		c.fail(path+".tuning", "%v", err)
	}
	return true
}

// methodsWhere names, in words, the methods whose properties satisfy keep.
func methodsWhere(keep func(estimators.MethodInfo) bool) string {
	return estimators.ListMethods(estimators.MethodsWhere(keep), "and")
}

// sScale reports whether a method computes an S-scale.
func sScale(i estimators.MethodInfo) bool { return i.SScale }

// methodNames lists every method name.
func methodNames() []string {
	var out []string
	for _, m := range estimators.Methods() {
		out = append(out, m.String())
	}
	return out
}

func (s *Scenario) columnIndex(name string) int {
	for i, c := range s.Model.Columns {
		if c.Name == name {
			return i
		}
	}
	return -1
}

func (s *Scenario) columnNames() []string {
	out := make([]string, len(s.Model.Columns))
	for i, c := range s.Model.Columns {
		out[i] = c.Name
	}
	return out
}

func (s *Scenario) estimatorLabels() []string {
	out := make([]string, len(s.Estimators))
	for i, e := range s.Estimators {
		out[i] = e.Label
	}
	return out
}
