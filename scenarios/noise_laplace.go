package scenarios

import (
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"
)

// laplaceNoise is noise: laplace, the double exponential with scale b =
// scale (standard deviation b√2).
type laplaceNoise struct{ scale float64 }

func laplaceNoiseKind() noiseKind {
	return noiseKind{name: "laplace", build: func(n *Noise) noiseModel { return laplaceNoise{*n.Scale} }}
}

func (m laplaceNoise) draw(src rand.Source) float64 {
	return distuv.Laplace{Mu: 0, Scale: m.scale, Src: src}.Rand()
}

func (m laplaceNoise) appendSettings(e *settingsEncoder) {
	noiseSettings(e, "laplace", m.scale, 0, 0, 0, 0)
}
