package scenarios

import (
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"
)

// normalColumn is dist: normal, N(mean, sd²).
type normalColumn struct{ mean, sd float64 }

func normalColumnKind() columnKind {
	return columnKind{
		name:   "normal",
		params: []columnParam{optional("mean", 0), optionalPositive("sd", 1)},
		build:  func(d *Distribution) columnModel { return normalColumn{*d.Mean, *d.SD} },
	}
}

func (m normalColumn) draw(src rand.Source) float64 {
	return distuv.Normal{Mu: m.mean, Sigma: m.sd, Src: src}.Rand()
}

func (m normalColumn) fromNormal(z float64) float64 { return m.mean + m.sd*z }

func (m normalColumn) appendSettings(e *settingsEncoder) {
	columnSettings(e, "normal", m.mean, m.sd, 0, nil)
}
