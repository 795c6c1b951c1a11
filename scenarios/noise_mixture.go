package scenarios

import (
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"
)

// mixtureNoise is noise: normal-mixture, (1−frac) N(0, scale²) +
// frac N(0, (factor·scale)²).
type mixtureNoise struct{ scale, frac, factor float64 }

func mixtureNoiseKind() noiseKind {
	return noiseKind{
		name: "normal-mixture",
		params: []noiseParam{
			{key: "mix-fraction", check: func(v float64) string {
				if !(v > 0 && v < 1) {
					return "must be between 0 and 1 (exclusive)"
				}
				return ""
			}},
			{key: "mix-factor", check: positive},
		},
		build: func(n *Noise) noiseModel { return mixtureNoise{*n.Scale, *n.MixFraction, *n.MixFactor} },
	}
}

// draw draws the component (a Bernoulli), then the normal error.
func (m mixtureNoise) draw(src rand.Source) float64 {
	sd := m.scale
	if (distuv.Bernoulli{P: m.frac, Src: src}).Rand() == 1 {
		sd *= m.factor
	}
	return distuv.Normal{Mu: 0, Sigma: sd, Src: src}.Rand()
}

func (m mixtureNoise) appendSettings(e *settingsEncoder) {
	noiseSettings(e, "normal-mixture", m.scale, 0, m.frac, m.factor, 0)
}
