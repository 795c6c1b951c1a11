package scenarios

import "math/rand/v2"

// badLeverageContam is kind: bad-leverage. The row's predictors become
// at + at-spread·Z and its response response + spread·Z: far out in x,
// off the model.
type badLeverageContam struct {
	leverage
	response, spread float64
}

func badLeverageContamKind() contamKind {
	return contamKind{
		name: "bad-leverage",
		keys: []string{"at", "at-spread", "response", "spread"},
		defaults: func(c *Contamination) {
			setZeroIfNil(&c.Spread)
			setZeroIfNil(&c.AtSpread)
		},
		check: func(c checker, path string, ct *Contamination, k int) {
			if ct.Response == nil {
				c.fail(path+".response", "missing: the y value the bad leverage points take")
			}
			checkLeverage(c, path, ct, k)
		},
		build: func(c *Contamination, k int) contamModel {
			return &badLeverageContam{newLeverage(c, k), *c.Response, *c.Spread}
		},
	}
}

// apply draws the predictors in column order, then the response's Z.
func (m *badLeverageContam) apply(g *Generator, src rand.Source, row []float64) float64 {
	m.place(g, src, row)
	return m.response + m.spread*stdNormal(src)
}

func (m *badLeverageContam) appendSettings(e *settingsEncoder, rows int) {
	contamSettings(e, "bad-leverage", rows, 0, m.spread, m.atSpread, m.response, false, m.at)
}
