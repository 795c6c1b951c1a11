package scenarios

import "math/rand/v2"

// verticalContam is kind: vertical. The row's error becomes shift +
// spread·Z, or ±shift + spread·Z with a random sign when two-sided; its
// predictors are kept.
type verticalContam struct {
	shift, spread float64
	twoSided      bool
}

func verticalContamKind() contamKind {
	return contamKind{
		name: "vertical",
		keys: []string{"shift", "spread", "sides"},
		defaults: func(c *Contamination) {
			setZeroIfNil(&c.Spread)
			if c.Sides == "" {
				c.Sides = "one"
			}
		},
		check: func(c checker, path string, ct *Contamination, _ int) {
			if ct.Shift == nil {
				c.fail(path+".shift", "missing: where the outlying errors sit (in units of y)")
			}
			if ct.Sides != "one" && ct.Sides != "two" {
				c.fail(path+".sides", "want one or two, got %q", ct.Sides)
			}
		},
		build: func(c *Contamination, _ int) contamModel {
			return verticalContam{*c.Shift, *c.Spread, c.Sides == "two"}
		},
	}
}

// apply draws the sign (two-sided only), then Z.
func (m verticalContam) apply(g *Generator, src rand.Source, row []float64) float64 {
	shift := m.shift
	if m.twoSided && uniformInt(src, 2) == 1 {
		shift = -shift
	}
	return g.fit(row) + shift + m.spread*stdNormal(src)
}

func (m verticalContam) appendSettings(e *settingsEncoder, rows int) {
	contamSettings(e, "vertical", rows, m.shift, m.spread, 0, 0, m.twoSided, nil)
}
