package scenarios

import "slices"

// levelsColumn is dist: levels, a fixed design: row i (counting from 0)
// takes levels[i mod len].
type levelsColumn struct{ levels []float64 }

func levelsColumnKind() columnKind {
	return columnKind{
		name:   "levels",
		levels: true,
		fixed:  true,
		check: func(c checker, path string, d *Distribution, intercept bool) {
			switch {
			case len(d.Levels) == 0:
				c.fail(path+".levels", "missing: list the values the column cycles through")
			case intercept && slices.Min(d.Levels) == slices.Max(d.Levels):
				c.fail(path+".levels", "all levels are %v: a constant column duplicates the intercept, so no design could be fitted; give at least two distinct levels, or use intercept: none", d.Levels[0])
			}
		},
		build: func(d *Distribution) columnModel { return levelsColumn{d.Levels} },
	}
}

func (m levelsColumn) value(i, _ int) float64 { return m.levels[i%len(m.levels)] }

func (m levelsColumn) appendSettings(e *settingsEncoder) {
	columnSettings(e, "levels", 0, 0, 0, m.levels)
}
