package scenarios

import (
	"fmt"
	"math"
	"math/bits"
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// Generator draws datasets from the model of one cell. It is immutable once
// built and safe for concurrent use; each goroutine needs its own Scratch.
//
// The draws of one dataset come from the source in a fixed order, which is
// part of the reproducibility contract (changing it changes every result):
//
//  1. for each row, the random design columns in column order (with a
//     correlation: one standard normal per column, then the copula map);
//  2. for each row, its error from the noise model;
//  3. the rows to contaminate: a partial Fisher-Yates shuffle of the row
//     indices, taking round(fraction·n) rows for each contamination in turn;
//  4. for each contaminated row, in order, the draws of its contamination.
type Generator struct {
	n, p      int
	intercept bool
	beta      []float64 // true coefficients, intercept first
	cols      []columnSampler
	// chol is the lower Cholesky factor (from gonum's mat.Cholesky) of the
	// correlation, k×k row-major; nil if the columns are independent.
	// Correlated draws multiply by it directly: gonum's distmv.Normal
	// allocates three to five times per draw (measured), and a dataset
	// draws once per row.
	chol     []float64
	noise    noiseModel
	growCol  int // column (index into cols) the noise spread grows with, or -1
	growRate float64
	contam   []contamSampler
	nContam  int // total contaminated rows
	// normal is set when every design column is an independent normal
	// and the noise is homoscedastic normal: Draw then takes drawNormal,
	// which makes the same draws in the same order without an interface
	// call per value.
	normal *normalDesign
}

// normalDesign holds the parameters of drawNormal: the mean and sd of each
// design column and the sd of the noise.
type normalDesign struct {
	mean, sd []float64
	noiseSD  float64
}

// columnSampler is one predictor column: its model, which is either
// random or fixed.
type columnSampler struct {
	model  columnModel
	random randomColumn // nil for a fixed design
	fixed  fixedColumn  // nil for a random column
}

// contamSampler is one contamination with its row count.
type contamSampler struct {
	model contamModel
	rows  int
}

// NewGenerator builds the generator of a validated scenario.
func NewGenerator(s *Scenario) (*Generator, error) {
	g := &Generator{
		n:         s.Model.N,
		p:         s.Coefficients(),
		intercept: !s.Model.Intercept.None,
		beta:      s.Truth(),
		noise:     newNoiseModel(&s.Noise),
		growCol:   -1,
	}
	k := len(s.Model.Columns)
	for i := range s.Model.Columns {
		d := &s.Model.Columns[i].Distribution
		if _, ok := d.Dist.kind(); !ok {
			return nil, fmt.Errorf("unknown distribution %q", d.Dist)
		}
		m := newColumnModel(d)
		cs := columnSampler{model: m}
		cs.random, _ = m.(randomColumn)
		cs.fixed, _ = m.(fixedColumn)
		g.cols = append(g.cols, cs)
	}
	if s.Model.Correlation.Given {
		corr, err := s.Model.Correlation.matrix(k)
		if err != nil {
			return nil, err
		}
		var chol mat.Cholesky
		if !chol.Factorize(corr) {
			return nil, fmt.Errorf("correlation matrix is not positive definite")
		}
		var l mat.TriDense
		chol.LTo(&l)
		g.chol = make([]float64, k*k)
		for i := 0; i < k; i++ {
			for j := 0; j <= i; j++ {
				g.chol[i*k+j] = l.At(i, j)
			}
		}
	}
	if gw := s.Noise.GrowsWith; gw != nil {
		g.growCol = s.columnIndex(gw.Column)
		g.growRate = gw.Rate
	}
	for i := range s.Contamination {
		c := &s.Contamination[i]
		cs := contamSampler{model: newContamModel(c, k), rows: c.rows(g.n)}
		g.contam = append(g.contam, cs)
		g.nContam += cs.rows
	}
	if g.nContam >= g.n {
		return nil, fmt.Errorf("contamination takes %d of %d rows", g.nContam, g.n)
	}
	g.normal = normalDesignOf(g)
	return g, nil
}

// normalDesignOf returns the parameters of drawNormal, or nil when g's
// design or noise is of another kind.
func normalDesignOf(g *Generator) *normalDesign {
	noise, ok := g.noise.(normalNoise)
	if !ok || g.chol != nil || g.growCol >= 0 {
		return nil
	}
	d := &normalDesign{mean: make([]float64, len(g.cols)), sd: make([]float64, len(g.cols)), noiseSD: noise.scale}
	for i := range g.cols {
		c, ok := g.cols[i].model.(normalColumn)
		if !ok {
			return nil
		}
		d.mean[i], d.sd[i] = c.mean, c.sd
	}
	return d
}

// Dims returns the number of rows and coefficients of a dataset.
func (g *Generator) Dims() (n, p int) { return g.n, g.p }

// Truth returns a copy of the true coefficients, intercept first.
func (g *Generator) Truth() []float64 { return append([]float64(nil), g.beta...) }

// Contaminated returns how many rows of each dataset are contaminated.
func (g *Generator) Contaminated() int { return g.nContam }

// NormalNoise reports whether the errors of clean rows are homoscedastic
// normal, N(0, sd²), and if so their sd; the normal-theory results apply
// only then.
func (g *Generator) NormalNoise() (sd float64, ok bool) {
	m, ok := g.noise.(normalNoise)
	if !ok || g.growCol >= 0 {
		return 0, false
	}
	return m.scale, true
}

// Scratch holds the per-goroutine buffers of Draw.
type Scratch struct {
	z, e []float64
	perm []int
}

// NewScratch returns buffers for Draw.
func (g *Generator) NewScratch() *Scratch {
	k := len(g.cols)
	return &Scratch{z: make([]float64, k), e: make([]float64, k), perm: make([]int, g.n)}
}

// Draw fills x (n×p: the intercept column, if any, then the predictors) and
// y (length n) with one dataset drawn from src. It allocates nothing.
func (g *Generator) Draw(src rand.Source, x *mat.Dense, y []float64, sc *Scratch) {
	raw := x.RawMatrix()
	if g.normal != nil {
		g.drawNormal(src, raw.Data, raw.Stride, y)
	} else {
		// 1. Design.
		g.drawDesign(src, raw.Data, raw.Stride, sc)
		// 2. Clean responses.
		for i := 0; i < g.n; i++ {
			row := raw.Data[i*raw.Stride : i*raw.Stride+g.p]
			e := g.cleanError(src, row)
			y[i] = g.fit(row) + e
		}
	}
	if g.nContam == 0 {
		return
	}
	// 3. Rows to contaminate.
	perm := sc.perm
	for i := range perm {
		perm[i] = i
	}
	for t := 0; t < g.nContam; t++ {
		j := t + uniformInt(src, g.n-t)
		perm[t], perm[j] = perm[j], perm[t]
	}
	// 4. Contamination.
	next := 0
	for ci := range g.contam {
		c := &g.contam[ci]
		for r := 0; r < c.rows; r++ {
			i := perm[next]
			next++
			row := raw.Data[i*raw.Stride : i*raw.Stride+g.p]
			y[i] = c.model.apply(g, src, row)
		}
	}
}

// drawNormal is steps 1 and 2 of Draw for independent normal columns and
// normal noise: the same draws as normalColumn.draw and normalNoise.draw
// (distuv.Normal's z·sd + mean, z from rand.Rand's NormFloat64), in the
// same order, made through one Rand rather than an interface call and a
// Rand per value.
func (g *Generator) drawNormal(src rand.Source, data []float64, stride int, y []float64) {
	rng := rand.New(src)
	d := g.normal
	mean, sd := d.mean, d.sd[:len(d.mean)]
	off := 0
	if g.intercept {
		off = 1
	}
	for i := 0; i < g.n; i++ {
		row := data[i*stride : i*stride+g.p]
		if g.intercept {
			row[0] = 1
		}
		cols := row[off:]
		cols = cols[:len(mean)]
		for j, m := range mean {
			cols[j] = rng.NormFloat64()*sd[j] + m
		}
	}
	for i := 0; i < g.n; i++ {
		row := data[i*stride : i*stride+g.p]
		// As distuv.Normal: z·sd + mean, the mean 0 (which turns a −0 to +0).
		e := rng.NormFloat64()*d.noiseSD + 0
		y[i] = g.fit(row) + e
	}
}

// drawDesign is step 1 of Draw: for each row, the random design columns
// in column order.
func (g *Generator) drawDesign(src rand.Source, data []float64, stride int, sc *Scratch) {
	off := 0
	if g.intercept {
		off = 1
	}
	k := len(g.cols)
	for i := 0; i < g.n; i++ {
		row := data[i*stride : i*stride+g.p]
		if g.intercept {
			row[0] = 1
		}
		if g.chol != nil {
			for j := 0; j < k; j++ {
				sc.e[j] = distuv.Normal{Mu: 0, Sigma: 1, Src: src}.Rand()
			}
			for j := 0; j < k; j++ {
				var s float64
				for l := 0; l <= j; l++ {
					s += g.chol[j*k+l] * sc.e[l]
				}
				row[off+j] = g.cols[j].random.fromNormal(s)
			}
			continue
		}
		for j := range g.cols {
			c := &g.cols[j]
			if c.fixed != nil {
				row[off+j] = c.fixed.value(i, g.n)
			} else {
				row[off+j] = c.random.draw(src)
			}
		}
	}
}

// fit returns the true regression function at a design row (intercept
// column included).
func (g *Generator) fit(row []float64) float64 {
	var s float64
	for j, b := range g.beta {
		s += b * row[j]
	}
	return s
}

// cleanError draws the error of a clean observation at a design row: one
// draw of the noise model, grown with the heteroscedasticity column.
func (g *Generator) cleanError(src rand.Source, row []float64) float64 {
	e := g.noise.draw(src)
	if g.growCol >= 0 {
		e *= 1 + g.growRate*math.Abs(g.predictors(row)[g.growCol])
	}
	return e
}

// predictors returns the predictor columns of a design row (the row
// without its intercept column).
func (g *Generator) predictors(row []float64) []float64 {
	if g.intercept {
		return row[1:]
	}
	return row
}

// stdNormal draws one standard normal value from src.
func stdNormal(src rand.Source) float64 {
	return distuv.Normal{Mu: 0, Sigma: 1, Src: src}.Rand()
}

// uniformInt returns a uniform integer in [0, n) from src (Lemire's
// multiply-shift method with rejection, so it is exactly uniform).
func uniformInt(src rand.Source, n int) int {
	un := uint64(n)
	for {
		hi, lo := bits.Mul64(src.Uint64(), un)
		if lo >= un || lo >= (-un)%un {
			return int(hi)
		}
	}
}

// rows returns the number of the n rows the contamination replaces:
// round(fraction·n), halves rounded up. Generation and validation both use
// it, so what validation allows is what is generated.
func (c *Contamination) rows(n int) int {
	return int(math.Floor(c.Fraction*float64(n) + 0.5))
}

// AppendSettings appends to dst a canonical encoding of everything Draw
// uses: the dimensions, the true coefficients, each design column's
// distribution and parameters, the correlation's Cholesky factor, the
// noise model, the heteroscedasticity, and each contamination that
// replaces at least one row (a contamination of zero rows draws nothing),
// in order. Two generators with equal encodings draw identical datasets
// from identical sources; a generator's fields that cannot change a draw
// (labels, fractions that round to the same row count) are left out. The
// encoding is part of the reproducibility contract: the harness derives the
// data streams from it.
func (g *Generator) AppendSettings(dst []byte) []byte {
	e := settingsEncoder{b: dst}
	e.str("rhomark data 1")
	e.int(g.n)
	e.int(g.p)
	e.bool(g.intercept)
	e.floats(g.beta)
	e.int(len(g.cols))
	for i := range g.cols {
		g.cols[i].model.appendSettings(&e)
	}
	e.bool(g.chol != nil)
	e.floats(g.chol)
	g.noise.appendSettings(&e)
	e.int(g.growCol)
	e.float(g.growRate)
	for i := range g.contam {
		c := &g.contam[i]
		if c.rows == 0 {
			continue
		}
		c.model.appendSettings(&e, c.rows)
	}
	return e.b
}

// settingsEncoder writes a self-delimiting byte encoding: integers and
// float64 bits as 8 little-endian bytes, strings and lists prefixed by
// their length.
type settingsEncoder struct{ b []byte }

func (e *settingsEncoder) u64(v uint64) {
	for i := 0; i < 8; i++ {
		e.b = append(e.b, byte(v>>(8*i)))
	}
}
func (e *settingsEncoder) int(v int)       { e.u64(uint64(int64(v))) }
func (e *settingsEncoder) float(v float64) { e.u64(math.Float64bits(v)) }
func (e *settingsEncoder) str(s string)    { e.int(len(s)); e.b = append(e.b, s...) }
func (e *settingsEncoder) floats(v []float64) {
	e.int(len(v))
	for _, x := range v {
		e.float(x)
	}
}
func (e *settingsEncoder) bool(v bool) {
	if v {
		e.b = append(e.b, 1)
	} else {
		e.b = append(e.b, 0)
	}
}
