package scenarios

import (
	"math/rand/v2"
	"slices"
	"strings"
)

// noiseModel is a resolved noise distribution: what Generator.Draw calls
// for each clean error, and what the data key encodes. Each kind lives in
// its own file noise_KIND.go and is listed once in noiseKinds.
type noiseModel interface {
	// draw returns one error, drawing only from src. It must allocate
	// nothing.
	draw(src rand.Source) float64
	// appendSettings encodes everything draw uses (see noiseSettings).
	appendSettings(e *settingsEncoder)
}

// noiseKind is one noise distribution of the scenario format: its name
// (noise.dist), the keys it takes besides scale and grows-with, and how to
// build its model from a validated Noise.
type noiseKind struct {
	name   string
	params []noiseParam
	build  func(n *Noise) noiseModel
}

// noiseParam is one key a noise kind takes besides scale: its default (if
// it has none, it is required) and the check of its value, which returns
// what would be valid or "" if v is valid.
type noiseParam struct {
	key        string
	def        float64
	hasDefault bool
	check      func(v float64) string
}

// noiseKinds lists the noise distributions, in the order error messages
// list them. Adding one is one line here and one file noise_KIND.go.
func noiseKinds() []noiseKind {
	return []noiseKind{
		normalNoiseKind(),
		studentTNoiseKind(),
		laplaceNoiseKind(),
		cauchyNoiseKind(),
		mixtureNoiseKind(),
		skewedNoiseKind(),
	}
}

func noiseNames() []string {
	var out []string
	for _, k := range noiseKinds() {
		out = append(out, k.name)
	}
	return out
}

// noiseKeys returns the keys of Noise that belong to some kinds only, in
// file order.
func noiseKeys() []string { return []string{"df", "mix-fraction", "mix-factor", "shape"} }

// param returns the field holding the noise parameter key.
func (n *Noise) param(key string) **float64 {
	switch key {
	case "df":
		return &n.DF
	case "mix-fraction":
		return &n.MixFraction
	case "mix-factor":
		return &n.MixFactor
	case "shape":
		return &n.Shape
	}
	panic("scenarios: unknown noise parameter " + key) // a bug: keys are fixed
}

// fillDefaults sets the noise's defaulted fields.
func (n *Noise) fillDefaults() {
	if !n.Dist.given() {
		n.Dist, _ = ParseNoiseDist("normal")
	}
	if n.Scale == nil {
		one := 1.0
		n.Scale = &one
	}
	if k, ok := n.Dist.kind(); ok {
		for _, p := range k.params {
			if ptr := n.param(p.key); *ptr == nil && p.hasDefault {
				v := p.def
				*ptr = &v
			}
		}
	}
}

// The range of noise.scale. The Monte Carlo standard errors of variances
// use fourth powers of the estimation errors, which scale with the noise:
// within [1e-50, 1e50] they stay normal float64 values (about 1e±200) with
// room for heavy tails, while a denormal scale gave underflowed sums and
// nonsense such as a gap of -1e30 MCSE.
const (
	minNoiseScale = 1e-50
	maxNoiseScale = 1e50
)

func (s *Scenario) validateNoise(c checker) {
	n := &s.Noise
	kind, ok := n.Dist.kind()
	if !ok {
		c.fail("noise.dist", "unknown noise %q; valid: %s", n.Dist, strings.Join(noiseNames(), ", "))
		return
	}
	if v := *n.Scale; !(v >= minNoiseScale && v <= maxNoiseScale) {
		c.fail("noise.scale", "must be a number from %g to %g, got %v (rescale the model's units if the noise really is that small or large)", minNoiseScale, maxNoiseScale, v)
	}
	var takes []string
	for _, p := range kind.params {
		takes = append(takes, p.key)
	}
	for _, key := range noiseKeys() {
		i := slices.IndexFunc(kind.params, func(p noiseParam) bool { return p.key == key })
		v := *n.param(key)
		switch {
		case v != nil && i < 0:
			c.fail("noise."+key, "is not used by noise %s; %s takes %s", n.Dist, n.Dist, paramList(takes))
		case v == nil && i >= 0 && !kind.params[i].hasDefault:
			c.fail("noise."+key, "missing: noise %s needs %s", n.Dist, key)
		}
	}
	for _, p := range kind.params {
		if v := *n.param(p.key); v != nil {
			if msg := p.check(*v); msg != "" {
				c.fail("noise."+p.key, "%s, got %v", msg, *v)
			}
		}
	}
	if g := n.GrowsWith; g != nil {
		if s.columnIndex(g.Column) < 0 {
			c.fail("noise.grows-with.column", "no column named %q; columns: %s", g.Column, strings.Join(s.columnNames(), ", "))
		}
		if !(g.Rate >= 0) {
			c.fail("noise.grows-with.rate", "must be ≥ 0, got %v", g.Rate)
		}
	}
}

func paramList(p []string) string {
	if len(p) == 0 {
		return "only scale"
	}
	return "scale, " + strings.Join(p, ", ")
}

// newNoiseModel builds the model of a validated noise.
func newNoiseModel(n *Noise) noiseModel {
	k, _ := n.Dist.kind()
	return k.build(n)
}

// Checks of noise parameter values, shared by the kinds that take them.
func positive(v float64) string {
	if !(v > 0) {
		return "must be positive"
	}
	return ""
}

// noiseSettings is the resolved-settings encoding every noise kind writes
// for the data key: its name, then scale, df, mix-fraction, mix-factor and
// shape, 0 where the kind takes no such parameter. The layout is part of
// the reproducibility contract (it fixes every data stream), so a new kind
// writes the same layout, putting a new parameter in extra.
func noiseSettings(e *settingsEncoder, name string, scale, df, mixFrac, mixFac, shape float64, extra ...float64) {
	e.str(name)
	e.floats(append([]float64{scale, df, mixFrac, mixFac, shape}, extra...))
}
