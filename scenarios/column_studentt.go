package scenarios

import (
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"
)

// studentTColumn is dist: student-t, Student's t with df degrees of
// freedom, located at mean and scaled by scale (not its standard
// deviation).
type studentTColumn struct{ mean, scale, df float64 }

func studentTColumnKind() columnKind {
	return columnKind{
		name: "student-t",
		params: []columnParam{
			{key: "df", check: positive},
			optional("mean", 0),
			optionalPositive("scale", 1),
		},
		build: func(d *Distribution) columnModel { return studentTColumn{*d.Mean, *d.Scale, *d.DF} },
	}
}

func (m studentTColumn) draw(src rand.Source) float64 {
	return distuv.StudentsT{Mu: m.mean, Sigma: m.scale, Nu: m.df, Src: src}.Rand()
}

func (m studentTColumn) fromNormal(z float64) float64 {
	return distuv.StudentsT{Mu: m.mean, Sigma: m.scale, Nu: m.df}.Quantile(copulaU(z))
}

func (m studentTColumn) appendSettings(e *settingsEncoder) {
	columnSettings(e, "student-t", m.mean, m.scale, m.df, nil)
}
