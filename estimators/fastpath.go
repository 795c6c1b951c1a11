package estimators

import (
	"math"

	"gonum.org/v1/gonum/blas/blas64"

	"github.com/rhomark/rhomark/psi"
)

// Loops of evaluate specialised to the built-in families used most, so that
// psi and the weight are computed inline instead of by two interface calls
// per residual. Each must give bit-for-bit the values of evaluateAny
// (TestFastPathsMatch checks it).

// evaluateHuber is evaluateAny for Huber's psi and IRLS weights.
func (ws *Workspace) evaluateHuber(h psi.Huber, sigma float64) (csum float64) {
	r := ws.r
	c, ps := ws.c[:len(r)], ws.psi[:len(r)]
	k := h.K
	offs := ws.off[:len(r)]
	off := 0
	for i, ri := range r {
		u := ri / sigma
		switch {
		case u > k:
			ps[i], c[i] = k, k/u
			offs[off] = i
			off++
		case u < -k:
			ps[i], c[i] = -k, k/-u
			offs[off] = i
			off++
		default:
			ps[i], c[i] = u, 1
		}
		csum += c[i]
	}
	ws.nOff = off
	return csum
}

// evaluateBisquare is evaluateAny for the bisquare psi and IRLS weights.
func (ws *Workspace) evaluateBisquare(b psi.Bisquare, sigma float64) (csum float64) {
	return ws.evaluateBisquareAs(b, sigma, false)
}

// evaluateBisquareAs is evaluateAny for the bisquare, without the
// interface calls (and the boxing of psi) of the general loop: it sets
// ws.psi to psi(u_i) and ws.c to the IRLS weight (1 − v²)² or, when deriv
// is set, to Newton's psi'(u_i) = (1 − v²)(1 − 5v²), v = u/c, and returns
// the sum of |c_i|.
func (ws *Workspace) evaluateBisquareAs(b psi.Bisquare, sigma float64, deriv bool) (csum float64) {
	r := ws.r
	c, ps := ws.c[:len(r)], ws.psi[:len(r)]
	cc := b.C
	offs := ws.off[:len(r)]
	off := 0
	for i, ri := range r {
		u := ri / sigma
		if u >= cc || u <= -cc {
			ps[i], c[i] = 0, 0
			offs[off] = i
			off++
			continue
		}
		v := u / cc
		v2 := v * v
		t := 1 - v2
		w := t * t
		if deriv {
			w = t * (1 - 5*v2)
		}
		ps[i], c[i] = u*t*t, w
		if w != 1 {
			offs[off] = i
			off++
		}
		csum += math.Abs(w)
	}
	ws.nOff = off
	return csum
}

// evaluateCustom is evaluateAny for a custom psi's IRLS weights: the weight
// psi(u)/u reuses the psi value just computed instead of running the
// expression a second time (Custom.Weight computes the same quotient).
func (ws *Workspace) evaluateCustom(cu *psi.Custom, sigma float64) (csum float64) {
	r := ws.r
	c, ps := ws.c[:len(r)], ws.psi[:len(r)]
	off := 0
	for i, ri := range r {
		u := ri / sigma
		ps[i] = cu.Psi(u)
		if u == 0 {
			c[i] = cu.Weight(0)
		} else {
			c[i] = ps[i] / u
		}
		if c[i] != 1 {
			ws.off[off] = i
			off++
		}
		csum += math.Abs(c[i])
	}
	ws.nOff = off
	return csum
}

// evaluateHuberSums is evaluateHuber followed by psiSums, in one pass: ws.h
// = Σ psi_i x_i is accumulated row by row in the order of gonum's
// transposed matrix-vector kernel (each column's sum runs over the rows in
// order from zero), so its bits are psiSums'.
func (ws *Workspace) evaluateHuberSums(hp psi.Huber, sigma float64, x blas64.General) (csum float64) {
	if ws.p == 5 {
		return ws.evaluateHuberSums5(hp, sigma, x)
	}
	r := ws.r
	c, ps := ws.c[:len(r)], ws.psi[:len(r)]
	k := hp.K
	offs := ws.off[:len(r)]
	off := 0
	p := ws.p
	h := ws.h[:p]
	clear(h)
	for i, ri := range r {
		u := ri / sigma
		var pi float64
		switch {
		case u > k:
			pi, c[i] = k, k/u
			offs[off] = i
			off++
		case u < -k:
			pi, c[i] = -k, k/-u
			offs[off] = i
			off++
		default:
			pi, c[i] = u, 1
		}
		ps[i] = pi
		csum += c[i]
		for j, v := range x.Data[i*x.Stride : i*x.Stride+p] {
			h[j] += pi * v
		}
	}
	ws.nOff = off
	return csum
}

// evaluateHuberSums5 is evaluateHuberSums for five columns, the sums kept
// in registers.
func (ws *Workspace) evaluateHuberSums5(hp psi.Huber, sigma float64, x blas64.General) float64 {
	n := len(ws.r)
	csum, off := huberSums5(ws.r, ws.c[:n], ws.psi[:n], ws.off[:n], x.Data, x.Stride, hp.K, sigma, (*[5]float64)(ws.h[:5]))
	ws.nOff = off
	return csum
}

// huberSums5Go is the loop of evaluateHuberSums5 in Go, a function of its
// own with few values live so that they stay in registers.
func huberSums5Go(r, c, ps []float64, offs []int, data []float64, stride int, k, sigma float64, h *[5]float64) (csum float64, off int) {
	c, ps, offs = c[:len(r)], ps[:len(r)], offs[:len(r)]
	var h0, h1, h2, h3, h4 float64
	row := 0
	for i, ri := range r {
		u := ri / sigma
		var pi, ci float64
		switch {
		case u > k:
			pi, ci = k, k/u
			offs[off] = i
			off++
		case u < -k:
			pi, ci = -k, k/-u
			offs[off] = i
			off++
		default:
			pi, ci = u, 1
		}
		ps[i], c[i] = pi, ci
		csum += ci
		xi := data[row : row+5 : row+5]
		row += stride
		h0 += pi * xi[0]
		h1 += pi * xi[1]
		h2 += pi * xi[2]
		h3 += pi * xi[3]
		h4 += pi * xi[4]
	}
	h[0], h[1], h[2], h[3], h[4] = h0, h1, h2, h3, h4
	return csum, off
}

// objectiveAt is objective at the residuals ws.r and scale sigma whose psi
// values evaluate (or evaluateSums) has just left in ws.psi. For Huber's
// psi, a value strictly inside (−k, k) is u = r/sigma itself, so its rho
// u²/2 needs no division; the other rows take Huber.Rho's formula.
// The terms and their order are objective's, so the sum is bit for bit
// the same (TestObjectiveAtMatches).
func (ws *Workspace) objectiveAt(fn psi.Psi, sigma float64) float64 {
	h, ok := fn.(psi.Huber)
	if !ok {
		return ws.objective(fn, sigma)
	}
	r := ws.r
	ps := ws.psi[:len(r)]
	k := h.K
	var f float64
	for i, u := range ps {
		if u > -k && u < k {
			f += u * u / 2
			continue
		}
		f += h.Rho(r[i] / sigma)
	}
	return f
}
