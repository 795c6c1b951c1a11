package scenarios

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"strings"
)

// contamModel is a resolved contamination kind: what Generator.Draw calls
// for each row it replaces, and what the data key encodes. Each kind lives
// in its own file contam_KIND.go and is listed once in contamKinds.
type contamModel interface {
	// apply replaces one row: it may overwrite the predictors of row (the
	// full design row, intercept included) and returns the row's new
	// response. It draws only from src, through g's methods or its own
	// distributions, and must allocate nothing.
	apply(g *Generator, src rand.Source, row []float64) float64
	// appendSettings encodes everything apply uses, given the number of
	// rows replaced (see contamSettings).
	appendSettings(e *settingsEncoder, rows int)
}

// contamKind is one contamination kind of the scenario format: its name
// (contamination[i].kind), the keys it takes besides label, kind and
// fraction (in the order error messages list them), and its defaults,
// checks and model.
type contamKind struct {
	name string
	keys []string
	// defaults fills the kind's defaulted keys.
	defaults func(c *Contamination)
	// check reports the kind's missing or invalid keys; k is the number of
	// predictor columns.
	check func(c checker, path string, ct *Contamination, k int)
	// build makes the model of a validated contamination.
	build func(ct *Contamination, k int) contamModel
}

// contamKinds lists the contamination kinds, in the order error messages
// list them. Adding one is one line here and one file contam_KIND.go.
func contamKinds() []contamKind {
	return []contamKind{
		verticalContamKind(),
		badLeverageContamKind(),
		goodLeverageContamKind(),
	}
}

// contamNames lists the contamination kinds' names.
func contamNames() []string {
	var names []string
	for _, k := range contamKinds() {
		names = append(names, k.name)
	}
	return names
}

// contamKindList returns "a, b or c" of the kind names.
func contamKindList() string {
	names := contamNames()
	last := len(names) - 1
	return strings.Join(names[:last], ", ") + " or " + names[last]
}

// keySet says whether a key is given.
type keySet struct {
	key string
	set bool
}

// given reports, for each key of Contamination that belongs to some kinds
// only, whether it is set, in file order.
func (c *Contamination) given() []keySet {
	return []keySet{
		{"shift", c.Shift != nil}, {"spread", c.Spread != nil}, {"sides", c.Sides != ""},
		{"at", len(c.At) > 0}, {"at-spread", c.AtSpread != nil}, {"response", c.Response != nil},
	}
}

func (s *Scenario) validateContamination(c checker) {
	total := 0.0
	rows := 0 // rows replaced, as the generator counts them
	labels := map[string]bool{}
	k := len(s.Model.Columns)
	for i := range s.Contamination {
		ct := &s.Contamination[i]
		path := fmt.Sprintf("contamination[%d]", i)
		if !namePattern.MatchString(ct.Label) {
			c.fail(path+".label", "%q is not a valid label: use letters, digits, '_' or '-'", ct.Label)
		} else if labels[ct.Label] {
			c.fail(path+".label", "%q labels two contaminations; labels must be unique", ct.Label)
		}
		labels[ct.Label] = true
		if !(ct.Fraction >= 0 && ct.Fraction < 0.5) {
			c.fail(path+".fraction", "must be at least 0 and below 0.5, got %v", ct.Fraction)
		}
		total += ct.Fraction
		if ct.Fraction >= 0 && ct.Fraction < 0.5 {
			rows += ct.rows(s.Model.N)
		}
		kind, ok := ct.Kind.kind()
		switch {
		case !ct.Kind.given():
			c.fail(path+".kind", "missing: want %s", contamKindList())
			continue
		case !ok:
			c.fail(path+".kind", "unknown kind %q; want %s", ct.Kind, contamKindList())
			continue
		}
		kind.check(c, path, ct, k)
		for _, g := range ct.given() {
			if g.set && !slices.Contains(kind.keys, g.key) {
				c.fail(path+"."+g.key, "is not used by kind %s; %s takes fraction, %s", ct.Kind, ct.Kind, strings.Join(kind.keys, ", "))
			}
		}
		if ct.Spread != nil && !(*ct.Spread >= 0) {
			c.fail(path+".spread", "must be ≥ 0, got %v", *ct.Spread)
		}
		if ct.AtSpread != nil && !(*ct.AtSpread >= 0) {
			c.fail(path+".at-spread", "must be ≥ 0, got %v", *ct.AtSpread)
		}
	}
	switch {
	case total >= 0.5:
		c.fail("contamination", "fractions add up to %v; the total must stay below 0.5", total)
	case s.Model.N > 0 && 2*rows >= s.Model.N:
		// Each contamination replaces round(fraction·n) rows, so small
		// fractions can round up to half the data between them.
		c.fail("contamination", "with n = %d the contaminations replace %d rows (round(fraction·n) each), not fewer than half; lower a fraction or raise model.n", s.Model.N, rows)
	}
}

// fillDefaults sets the contamination's defaulted keys (its label is set
// by the scenario, which numbers repeated kinds).
func (c *Contamination) fillDefaults() {
	if k, ok := c.Kind.kind(); ok {
		k.defaults(c)
	}
}

// newContamModel builds the model of a validated contamination; k is the
// number of predictor columns.
func newContamModel(c *Contamination, k int) contamModel {
	kind, _ := c.Kind.kind()
	return kind.build(c, k)
}

// contamSettings is the resolved-settings encoding every contamination
// kind writes for the data key: its name, its row count, then shift,
// spread, at-spread and response (0 where the kind takes none), whether
// it is two-sided, and the per-column positions. The layout is part of the
// reproducibility contract (it fixes every data stream), so a new kind
// writes the same layout, putting a new parameter in extra.
func contamSettings(e *settingsEncoder, name string, rows int, shift, spread, atSpread, response float64, twoSided bool, at []float64, extra ...float64) {
	e.str(name)
	e.int(rows)
	e.floats(append([]float64{shift, spread, atSpread, response}, extra...))
	e.bool(twoSided)
	e.floats(at)
}

// setZeroIfNil points a nil *p at a 0.
func setZeroIfNil(p **float64) {
	if *p == nil {
		z := 0.0
		*p = &z
	}
}

// leverage is the x placement shared by the leverage kinds: each predictor
// becomes at_j + atSpread·Z.
type leverage struct {
	at       []float64 // per column
	atSpread float64
}

func newLeverage(c *Contamination, k int) leverage {
	l := leverage{at: make([]float64, k), atSpread: *c.AtSpread}
	for j := range l.at {
		l.at[j] = c.At[0]
		if len(c.At) == k {
			l.at[j] = c.At[j]
		}
	}
	return l
}

// checkLeverage checks the keys of the x placement.
func checkLeverage(c checker, path string, ct *Contamination, k int) {
	if k == 0 {
		c.fail(path+".kind", "leverage points need at least one column")
	}
	switch {
	case len(ct.At) == 0:
		c.fail(path+".at", "missing: the x position of the leverage points (one number, or one per column)")
	case len(ct.At) != 1 && len(ct.At) != k:
		c.fail(path+".at", "give one number or %d (one per column), got %d", k, len(ct.At))
	}
}

// place draws the predictors of row, in column order.
func (l *leverage) place(g *Generator, src rand.Source, row []float64) {
	x := g.predictors(row)
	for j := range l.at {
		x[j] = l.at[j] + l.atSpread*stdNormal(src)
	}
}
