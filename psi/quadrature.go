package psi

import (
	"math"
	"slices"

	"gonum.org/v1/gonum/integrate/quad"
)

// Adaptive piecewise Gauss-Legendre quadrature over gonum's fixed rules. A
// panel is accepted when its 12-point value agrees with the sum of 12-point
// values on its two halves; otherwise it is split. Break points (the kinks
// and jumps of psi) are panel ends, so no panel straddles a discontinuity.

const (
	quadPoints = 12
	quadRelTol = 1e-13
)

// gauss returns the quadPoints-point Gauss-Legendre value on [a, b].
func gauss(f func(float64) float64, a, b float64) float64 {
	return quad.Fixed(f, a, b, quadPoints, quad.Legendre{}, 0)
}

// maxPanels bounds the panels one adaptive integral may split into, so a
// pathological integrand costs bounded time.
const maxPanels = 4000

// panel is an interval with its Gauss value.
type panel struct{ a, b, value float64 }

// adaptive integrates f over [a, b] (finite) to a relative tolerance: it
// keeps a stack of panels, and splits any panel whose value disagrees with
// the sum over its halves, until every panel agrees or the panel budget is
// spent.
func adaptive(f func(float64) float64, a, b float64) float64 {
	stack := []panel{{a, b, gauss(f, a, b)}}
	var sum float64
	panels := 1
	for len(stack) > 0 {
		p := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		m := (p.a + p.b) / 2
		left, right := gauss(f, p.a, m), gauss(f, m, p.b)
		panels += 2
		good := math.Abs(left+right-p.value) <= quadRelTol*math.Max(math.Abs(left+right), 1e-300)
		if good || panels >= maxPanels || m <= p.a || m >= p.b {
			sum += left + right
			continue
		}
		stack = append(stack, panel{p.a, m, left}, panel{m, p.b, right})
	}
	return sum
}

// integrate integrates f over [a, b], which may be infinite at b.
func integrate(f func(float64) float64, a, b float64) float64 {
	if a == b {
		return 0
	}
	if math.IsInf(b, 1) {
		// x = a + t/(1−t), dx = dt/(1−t)², t ∈ [0, 1).
		g := func(t float64) float64 {
			s := 1 - t
			if s <= 0 {
				return 0
			}
			v := f(a+t/s) / (s * s)
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return 0
			}
			return v
		}
		return adaptive(g, 0, 1)
	}
	return adaptive(f, a, b)
}

// integrateHalfLine integrates f over [0, ∞), splitting at the given break
// points (non-negative, any order) and at a few fixed points so that the
// bulk of a distribution falls inside finite panels.
func integrateHalfLine(f func(float64) float64, breaks []float64) float64 {
	pts := []float64{0, 1, 2, 4, 8, 16}
	for _, b := range breaks {
		if b > 0 && !math.IsInf(b, 0) && !math.IsNaN(b) {
			pts = append(pts, b)
		}
	}
	sortFloats(pts)
	var sum float64
	for i := 0; i+1 < len(pts); i++ {
		if pts[i+1] > pts[i] {
			sum += integrate(f, pts[i], pts[i+1])
		}
	}
	return sum + integrate(f, pts[len(pts)-1], math.Inf(1))
}

// sortFloats sorts a slice in place.
func sortFloats(a []float64) { slices.Sort(a) }
