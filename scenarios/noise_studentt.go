package scenarios

import (
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"
)

// studentTNoise is noise: student-t, Student's t with df degrees of freedom
// scaled by scale (not its standard deviation).
type studentTNoise struct{ scale, df float64 }

func studentTNoiseKind() noiseKind {
	return noiseKind{
		name: "student-t",
		params: []noiseParam{{key: "df", check: func(v float64) string {
			if !(v > 0) {
				return "degrees of freedom must be positive"
			}
			return ""
		}}},
		build: func(n *Noise) noiseModel { return studentTNoise{*n.Scale, *n.DF} },
	}
}

func (m studentTNoise) draw(src rand.Source) float64 {
	return distuv.StudentsT{Mu: 0, Sigma: m.scale, Nu: m.df, Src: src}.Rand()
}

func (m studentTNoise) appendSettings(e *settingsEncoder) {
	noiseSettings(e, "student-t", m.scale, m.df, 0, 0, 0)
}
