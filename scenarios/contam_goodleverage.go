package scenarios

import "math/rand/v2"

// goodLeverageContam is kind: good-leverage. The row's predictors become
// at + at-spread·Z and its response follows the model with the ordinary
// noise: far out in x, on the model.
type goodLeverageContam struct{ leverage }

func goodLeverageContamKind() contamKind {
	return contamKind{
		name:     "good-leverage",
		keys:     []string{"at", "at-spread"},
		defaults: func(c *Contamination) { setZeroIfNil(&c.AtSpread) },
		check:    checkLeverage,
		build: func(c *Contamination, k int) contamModel {
			return &goodLeverageContam{newLeverage(c, k)}
		},
	}
}

// apply draws the predictors in column order, then the row's error.
func (m *goodLeverageContam) apply(g *Generator, src rand.Source, row []float64) float64 {
	m.place(g, src, row)
	fit := g.fit(row)
	return fit + g.cleanError(src, row)
}

func (m *goodLeverageContam) appendSettings(e *settingsEncoder, rows int) {
	contamSettings(e, "good-leverage", rows, 0, 0, m.atSpread, 0, false, m.at)
}
