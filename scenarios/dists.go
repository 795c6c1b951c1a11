package scenarios

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"
)

// paramInfo is one parameter of a distribution.
type paramInfo struct {
	key        string
	def        float64
	hasDefault bool
}

// distInfo describes a design-column distribution.
type distInfo struct {
	name   string
	params []paramInfo
	random bool // false for fixed designs (levels, grid)
}

// columnDists lists the distributions a design column may take.
func columnDists() []distInfo {
	req := func(k string) paramInfo { return paramInfo{key: k} }
	def := func(k string, v float64) paramInfo { return paramInfo{key: k, def: v, hasDefault: true} }
	return []distInfo{
		{"normal", []paramInfo{def("mean", 0), def("sd", 1)}, true},
		{"uniform", []paramInfo{def("min", 0), def("max", 1)}, true},
		{"student-t", []paramInfo{req("df"), def("mean", 0), def("scale", 1)}, true},
		{"laplace", []paramInfo{def("mean", 0), def("scale", 1)}, true},
		{"lognormal", []paramInfo{def("meanlog", 0), def("sdlog", 1)}, true},
		{"exponential", []paramInfo{def("rate", 1)}, true},
		{"levels", nil, false},
		{"grid", []paramInfo{def("min", 0), def("max", 1)}, false},
	}
}

func lookupDist(name string) (distInfo, bool) {
	for _, d := range columnDists() {
		if d.name == name {
			return d, true
		}
	}
	return distInfo{}, false
}

func distNames() []string {
	var out []string
	for _, d := range columnDists() {
		out = append(out, d.name)
	}
	return out
}

// distKeys returns the parameter keys of Distribution, in file order.
func distKeys() []string {
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

// check validates the distribution of the column at path and reports whether
// it is random (not a fixed design).
func (d *Distribution) check(c checker, path string) bool {
	info, ok := lookupDist(d.Dist)
	if !ok {
		c.fail(path+".dist", "unknown distribution %q; valid: %s", d.Dist, strings.Join(distNames(), ", "))
		return false
	}
	var takes []string
	for _, p := range info.params {
		takes = append(takes, p.key)
	}
	if d.Dist == "levels" {
		takes = append(takes, "levels")
	}
	takesText := "nothing else"
	if len(takes) > 0 {
		takesText = strings.Join(takes, ", ")
	}
	for _, key := range distKeys() {
		if *d.param(key) != nil && !slices.Contains(takes, key) {
			c.fail(path+"."+key, "is not used by dist %s; %s takes %s", d.Dist, d.Dist, takesText)
		}
	}
	if d.Levels != nil && d.Dist != "levels" {
		c.fail(path+".levels", "is only used by dist levels")
	}
	for _, p := range info.params {
		if *d.param(p.key) == nil {
			c.fail(path+"."+p.key, "missing: dist %s needs %s", d.Dist, p.key)
		}
	}
	positive := func(key string) {
		if v := *d.param(key); v != nil && !(*v > 0) {
			c.fail(path+"."+key, "must be positive, got %v", *v)
		}
	}
	for _, k := range []string{"sd", "df", "scale", "sdlog", "rate"} {
		positive(k)
	}
	if d.Min != nil && d.Max != nil {
		switch {
		case !(*d.Max > *d.Min):
			c.fail(path+".max", "max (%v) must exceed min (%v)", *d.Max, *d.Min)
		case math.IsInf(*d.Max-*d.Min, 0):
			c.fail(path+".max", "the range max − min (%v − %v) is beyond float64; every value drawn would make the data non-finite", *d.Max, *d.Min)
		}
	}
	if d.Dist == "levels" && len(d.Levels) == 0 {
		c.fail(path+".levels", "missing: list the values the column cycles through")
	}
	return info.random
}

// Column distribution kinds, for the sampler.
const (
	colNormal = iota
	colUniform
	colStudentT
	colLaplace
	colLognormal
	colExponential
	colLevels
	colGrid
)

// columnSampler draws the values of one design column.
type columnSampler struct {
	kind    int
	a, b, c float64 // parameters, by kind
	levels  []float64
}

func newColumnSampler(d Distribution) (columnSampler, error) {
	get := func(key string) float64 {
		if p := *d.param(key); p != nil {
			return *p
		}
		return 0
	}
	switch d.Dist {
	case "normal":
		return columnSampler{kind: colNormal, a: get("mean"), b: get("sd")}, nil
	case "uniform":
		return columnSampler{kind: colUniform, a: get("min"), b: get("max")}, nil
	case "student-t":
		return columnSampler{kind: colStudentT, a: get("mean"), b: get("scale"), c: get("df")}, nil
	case "laplace":
		return columnSampler{kind: colLaplace, a: get("mean"), b: get("scale")}, nil
	case "lognormal":
		return columnSampler{kind: colLognormal, a: get("meanlog"), b: get("sdlog")}, nil
	case "exponential":
		return columnSampler{kind: colExponential, a: get("rate")}, nil
	case "levels":
		return columnSampler{kind: colLevels, levels: d.Levels}, nil
	case "grid":
		return columnSampler{kind: colGrid, a: get("min"), b: get("max")}, nil
	}
	return columnSampler{}, fmt.Errorf("unknown distribution %q", d.Dist)
}

// fixed returns the value of row i of n for a fixed design.
func (s *columnSampler) fixed(i, n int) float64 {
	if s.kind == colLevels {
		return s.levels[i%len(s.levels)]
	}
	if n == 1 {
		return s.a
	}
	return s.a + (s.b-s.a)*float64(i)/float64(n-1)
}

// random draws one value.
func (s *columnSampler) random(src rand.Source) float64 {
	switch s.kind {
	case colNormal:
		return distuv.Normal{Mu: s.a, Sigma: s.b, Src: src}.Rand()
	case colUniform:
		return distuv.Uniform{Min: s.a, Max: s.b, Src: src}.Rand()
	case colStudentT:
		return distuv.StudentsT{Mu: s.a, Sigma: s.b, Nu: s.c, Src: src}.Rand()
	case colLaplace:
		return distuv.Laplace{Mu: s.a, Scale: s.b, Src: src}.Rand()
	case colLognormal:
		return distuv.LogNormal{Mu: s.a, Sigma: s.b, Src: src}.Rand()
	case colExponential:
		return distuv.Exponential{Rate: s.a, Src: src}.Rand()
	}
	return 0
}

// fromNormal maps a standard normal value z to this distribution through
// its quantile function (the Gaussian copula).
func (s *columnSampler) fromNormal(z float64) float64 {
	if s.kind == colNormal {
		return s.a + s.b*z
	}
	u := distuv.UnitNormal.CDF(z)
	switch s.kind {
	case colUniform:
		return distuv.Uniform{Min: s.a, Max: s.b}.Quantile(u)
	case colStudentT:
		return distuv.StudentsT{Mu: s.a, Sigma: s.b, Nu: s.c}.Quantile(u)
	case colLaplace:
		return distuv.Laplace{Mu: s.a, Scale: s.b}.Quantile(u)
	case colLognormal:
		return distuv.LogNormal{Mu: s.a, Sigma: s.b}.Quantile(u)
	case colExponential:
		return distuv.Exponential{Rate: s.a}.Quantile(u)
	}
	return z
}
