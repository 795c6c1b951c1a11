package scenarios

import (
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"
)

// lognormalColumn is dist: lognormal, exp of N(meanlog, sdlog²).
type lognormalColumn struct{ meanlog, sdlog float64 }

func lognormalColumnKind() columnKind {
	return columnKind{
		name:   "lognormal",
		params: []columnParam{optional("meanlog", 0), optionalPositive("sdlog", 1)},
		build:  func(d *Distribution) columnModel { return lognormalColumn{*d.Meanlog, *d.Sdlog} },
	}
}

func (m lognormalColumn) draw(src rand.Source) float64 {
	return distuv.LogNormal{Mu: m.meanlog, Sigma: m.sdlog, Src: src}.Rand()
}

func (m lognormalColumn) fromNormal(z float64) float64 {
	return distuv.LogNormal{Mu: m.meanlog, Sigma: m.sdlog}.Quantile(copulaU(z))
}

func (m lognormalColumn) appendSettings(e *settingsEncoder) {
	columnSettings(e, "lognormal", m.meanlog, m.sdlog, 0, nil)
}
