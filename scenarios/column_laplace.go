package scenarios

import (
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"
)

// laplaceColumn is dist: laplace, located at mean with scale b (SD b√2).
type laplaceColumn struct{ mean, scale float64 }

func laplaceColumnKind() columnKind {
	return columnKind{
		name:   "laplace",
		params: []columnParam{optional("mean", 0), optionalPositive("scale", 1)},
		build:  func(d *Distribution) columnModel { return laplaceColumn{*d.Mean, *d.Scale} },
	}
}

func (m laplaceColumn) draw(src rand.Source) float64 {
	return distuv.Laplace{Mu: m.mean, Scale: m.scale, Src: src}.Rand()
}

func (m laplaceColumn) fromNormal(z float64) float64 {
	return distuv.Laplace{Mu: m.mean, Scale: m.scale}.Quantile(copulaU(z))
}

func (m laplaceColumn) appendSettings(e *settingsEncoder) {
	columnSettings(e, "laplace", m.mean, m.scale, 0, nil)
}
