package scenarios

import (
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"
)

// skewedNoise is noise: skewed, scale·(G − shape)/√shape with G a gamma of
// the given shape and rate 1: mean 0, standard deviation scale, skewness
// 2/√shape.
type skewedNoise struct{ scale, shape float64 }

func skewedNoiseKind() noiseKind {
	return noiseKind{
		name:   "skewed",
		params: []noiseParam{{key: "shape", def: 4, hasDefault: true, check: positive}},
		build:  func(n *Noise) noiseModel { return skewedNoise{*n.Scale, *n.Shape} },
	}
}

func (m skewedNoise) draw(src rand.Source) float64 {
	g := distuv.Gamma{Alpha: m.shape, Beta: 1, Src: src}.Rand()
	return m.scale * (g - m.shape) / math.Sqrt(m.shape)
}

func (m skewedNoise) appendSettings(e *settingsEncoder) {
	noiseSettings(e, "skewed", m.scale, 0, 0, 0, m.shape)
}
