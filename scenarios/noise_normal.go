package scenarios

import (
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"
)

// normalNoise is noise: normal, N(0, scale²).
type normalNoise struct{ scale float64 }

func normalNoiseKind() noiseKind {
	return noiseKind{name: "normal", build: func(n *Noise) noiseModel { return normalNoise{*n.Scale} }}
}

func (m normalNoise) draw(src rand.Source) float64 {
	return distuv.Normal{Mu: 0, Sigma: m.scale, Src: src}.Rand()
}

func (m normalNoise) appendSettings(e *settingsEncoder) {
	noiseSettings(e, "normal", m.scale, 0, 0, 0, 0)
}
