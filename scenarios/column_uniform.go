package scenarios

import (
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"
)

// uniformColumn is dist: uniform, on [min, max].
type uniformColumn struct{ min, max float64 }

func uniformColumnKind() columnKind {
	return columnKind{
		name:   "uniform",
		params: []columnParam{optional("min", 0), optional("max", 1)},
		check:  checkRange,
		build:  func(d *Distribution) columnModel { return uniformColumn{*d.Min, *d.Max} },
	}
}

func (m uniformColumn) draw(src rand.Source) float64 {
	return distuv.Uniform{Min: m.min, Max: m.max, Src: src}.Rand()
}

func (m uniformColumn) fromNormal(z float64) float64 {
	return distuv.Uniform{Min: m.min, Max: m.max}.Quantile(copulaU(z))
}

func (m uniformColumn) appendSettings(e *settingsEncoder) {
	columnSettings(e, "uniform", m.min, m.max, 0, nil)
}
