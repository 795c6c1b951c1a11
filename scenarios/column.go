package scenarios

import (
	"math"
	"math/rand/v2"
	"slices"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"
)

// columnModel is a resolved predictor distribution: what the data key
// encodes. A kind that draws its values is also a randomColumn; a fixed
// design is a fixedColumn. Each kind lives in its own file column_KIND.go
// and is listed once in columnKinds.
type columnModel interface {
	// appendSettings encodes everything the column's values depend on
	// (see columnSettings).
	appendSettings(e *settingsEncoder)
}

// randomColumn is a column whose values are drawn.
type randomColumn interface {
	columnModel
	// draw returns one value, drawing only from src. It must allocate
	// nothing.
	draw(src rand.Source) float64
	// fromNormal maps a standard normal value z to the distribution
	// through its quantile function (the Gaussian copula of correlated
	// columns).
	fromNormal(z float64) float64
}

// fixedColumn is a fixed design: its values depend only on the row.
type fixedColumn interface {
	columnModel
	// value returns the value of row i of n.
	value(i, n int) float64
}

// columnKind is one predictor distribution of the scenario format: its
// name (model.columns[i].dist), the numeric keys it takes, whether it
// takes levels, whether it is a fixed design, its own checks beyond those
// of its keys, and how to build its model from a validated Distribution.
type columnKind struct {
	name   string
	params []columnParam
	levels bool // takes the levels key
	fixed  bool // a fixed design (not drawn; cannot be correlated)
	// check, if set, reports the kind's problems beyond missing keys and
	// the checks of each value; intercept says whether the model has one.
	check func(c checker, path string, d *Distribution, intercept bool)
	// build makes the model of a validated distribution.
	build func(d *Distribution) columnModel
}

// columnParam is one numeric key a column kind takes: its default (if it
// has none, it is required) and, if set, the check of its value, which
// returns what would be valid or "" if v is valid.
type columnParam struct {
	key        string
	def        float64
	hasDefault bool
	check      func(v float64) string
}

// columnKinds lists the column distributions, in the order error messages
// list them. Adding one is one line here and one file column_KIND.go.
func columnKinds() []columnKind {
	return []columnKind{
		normalColumnKind(),
		uniformColumnKind(),
		studentTColumnKind(),
		laplaceColumnKind(),
		lognormalColumnKind(),
		exponentialColumnKind(),
		levelsColumnKind(),
		gridColumnKind(),
	}
}

// columnNames lists the column distributions' names.
func columnNames() []string {
	var out []string
	for _, k := range columnKinds() {
		out = append(out, k.name)
	}
	return out
}

// columnKeys returns the numeric keys of Distribution, in file order.
func columnKeys() []string {
	return []string{"mean", "sd", "min", "max", "df", "scale", "meanlog", "sdlog", "rate"}
}

// param returns the field holding the parameter key.
func (d *Distribution) param(key string) **float64 {
	switch key {
	case "mean":
		return &d.Mean
	case "sd":
		return &d.SD
	case "min":
		return &d.Min
	case "max":
		return &d.Max
	case "df":
		return &d.DF
	case "scale":
		return &d.Scale
	case "meanlog":
		return &d.Meanlog
	case "sdlog":
		return &d.Sdlog
	case "rate":
		return &d.Rate
	}
	panic("scenarios: unknown distribution parameter " + key) // a bug: keys are fixed
}

// get returns the value of the parameter key, 0 if it is not set.
func (d *Distribution) get(key string) float64 {
	if p := *d.param(key); p != nil {
		return *p
	}
	return 0
}

// fillDefaults sets the distribution's defaulted fields.
func (d *Distribution) fillDefaults() {
	if !d.Dist.given() {
		d.Dist, _ = ParseColumnDist("normal")
	}
	if k, ok := d.Dist.kind(); ok {
		for _, p := range k.params {
			if ptr := d.param(p.key); *ptr == nil && p.hasDefault {
				v := p.def
				*ptr = &v
			}
		}
	}
}

// check validates the distribution of the column at path and reports
// whether it is random (not a fixed design); intercept says whether the
// model has an intercept.
func (d *Distribution) check(c checker, path string, intercept bool) bool {
	kind, ok := d.Dist.kind()
	if !ok {
		c.fail(path+".dist", "unknown distribution %q; valid: %s", d.Dist, strings.Join(columnNames(), ", "))
		return false
	}
	var takes []string
	for _, p := range kind.params {
		takes = append(takes, p.key)
	}
	if kind.levels {
		takes = append(takes, "levels")
	}
	takesText := "nothing else"
	if len(takes) > 0 {
		takesText = strings.Join(takes, ", ")
	}
	for _, key := range columnKeys() {
		if *d.param(key) != nil && !slices.Contains(takes, key) {
			c.fail(path+"."+key, "is not used by dist %s; %s takes %s", d.Dist, d.Dist, takesText)
		}
	}
	if d.Levels != nil && !kind.levels {
		var with []string
		for _, k := range columnKinds() {
			if k.levels {
				with = append(with, k.name)
			}
		}
		c.fail(path+".levels", "is only used by dist %s", strings.Join(with, ", "))
	}
	for _, p := range kind.params {
		if *d.param(p.key) == nil {
			c.fail(path+"."+p.key, "missing: dist %s needs %s", d.Dist, p.key)
		}
	}
	for _, p := range kind.params {
		if v := *d.param(p.key); v != nil && p.check != nil {
			if msg := p.check(*v); msg != "" {
				c.fail(path+"."+p.key, "%s, got %v", msg, *v)
			}
		}
	}
	if kind.check != nil {
		kind.check(c, path, d, intercept)
	}
	return !kind.fixed
}

// newColumnModel builds the model of a validated distribution.
func newColumnModel(d *Distribution) columnModel {
	k, _ := d.Dist.kind()
	return k.build(d)
}

// Shared parameters and checks of the column kinds.
func optional(key string, def float64) columnParam {
	return columnParam{key: key, def: def, hasDefault: true}
}

func optionalPositive(key string, def float64) columnParam {
	return columnParam{key: key, def: def, hasDefault: true, check: positive}
}

// checkRange checks the min and max of uniform and grid.
func checkRange(c checker, path string, d *Distribution, _ bool) {
	if d.Min == nil || d.Max == nil {
		return
	}
	switch {
	case !(*d.Max > *d.Min):
		c.fail(path+".max", "max (%v) must exceed min (%v)", *d.Max, *d.Min)
	case math.IsInf(*d.Max-*d.Min, 0):
		c.fail(path+".max", "the range max − min (%v − %v) is beyond float64; every value drawn would make the data non-finite", *d.Max, *d.Min)
	}
}

// copulaU returns the standard normal probability of z, the uniform value
// that a quantile function maps to a correlated column's value.
func copulaU(z float64) float64 { return distuv.UnitNormal.CDF(z) }

// columnSettings is the resolved-settings encoding every column kind
// writes for the data key: its name, three parameters (0 where the kind
// takes fewer; the order is the kind's) and any more in extra, then its
// levels. The layout is part of the reproducibility contract (it fixes
// every data stream), so a new kind writes the same layout, putting a
// fourth parameter in extra.
func columnSettings(e *settingsEncoder, name string, a, b, c float64, levels []float64, extra ...float64) {
	e.str(name)
	e.floats(append([]float64{a, b, c}, extra...))
	e.floats(levels)
}
