package scenarios

import (
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"
)

// exponentialColumn is dist: exponential, with rate λ (mean 1/λ).
type exponentialColumn struct{ rate float64 }

func exponentialColumnKind() columnKind {
	return columnKind{
		name:   "exponential",
		params: []columnParam{optionalPositive("rate", 1)},
		build:  func(d *Distribution) columnModel { return exponentialColumn{*d.Rate} },
	}
}

func (m exponentialColumn) draw(src rand.Source) float64 {
	return distuv.Exponential{Rate: m.rate, Src: src}.Rand()
}

func (m exponentialColumn) fromNormal(z float64) float64 {
	return distuv.Exponential{Rate: m.rate}.Quantile(copulaU(z))
}

func (m exponentialColumn) appendSettings(e *settingsEncoder) {
	columnSettings(e, "exponential", m.rate, 0, 0, nil)
}
