package scenarios

import (
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"
)

// cauchyNoise is noise: cauchy, centred at 0 with scale scale.
type cauchyNoise struct{ scale float64 }

func cauchyNoiseKind() noiseKind {
	return noiseKind{name: "cauchy", build: func(n *Noise) noiseModel { return cauchyNoise{*n.Scale} }}
}

func (m cauchyNoise) draw(src rand.Source) float64 {
	// The Cauchy distribution is Student's t with one degree of freedom.
	return distuv.StudentsT{Mu: 0, Sigma: m.scale, Nu: 1, Src: src}.Rand()
}

func (m cauchyNoise) appendSettings(e *settingsEncoder) {
	noiseSettings(e, "cauchy", m.scale, 0, 0, 0, 0)
}
