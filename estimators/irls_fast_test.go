package estimators

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/rhomark/rhomark/psi"
)

// TestObjectiveAtMatches: the objective taken from the psi values that
// evaluate leaves must be bit for bit objective's, for Huber's psi (the
// fast path) with residuals at exactly ±k·sigma, signed zeros and NaN.
func TestObjectiveAtMatches(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	for trial := 0; trial < 300; trial++ {
		n, p := 1+rng.IntN(120), 1+rng.IntN(7)
		x, y, beta := kernelData(rng, n, p)
		var ws Workspace
		ws.reserve(n, p)
		ws.residuals(x, y, beta)
		sigma := 0.3 + 2*rng.Float64()
		h := psi.Huber{K: []float64{1.345, 0.5, 2}[trial%3]}
		for i := range ws.r {
			switch rng.IntN(12) {
			case 0:
				ws.r[i] = h.K * sigma
			case 1:
				ws.r[i] = -h.K * sigma
			case 2:
				ws.r[i] = math.Copysign(0, -1)
			}
		}
		if trial%50 == 7 {
			ws.r[rng.IntN(n)] = math.NaN()
		}
		for _, newton := range []bool{false, true} {
			ws.evaluate(h, sigma, newton)
			got, want := ws.objectiveAt(h, sigma), ws.objective(h, sigma)
			if math.Float64bits(got) != math.Float64bits(want) {
				t.Fatalf("trial %d newton=%v: objectiveAt %v, objective %v", trial, newton, got, want)
			}
		}
		b := psi.Bisquare{C: 4.685}
		ws.evaluate(b, sigma, false)
		if got, want := ws.objectiveAt(b, sigma), ws.objective(b, sigma); math.Float64bits(got) != math.Float64bits(want) && !(got != got && want != want) {
			t.Fatalf("trial %d bisquare: objectiveAt %v, objective %v", trial, got, want)
		}
	}
}

// TestNorm2Pair: norm2Pair is norm2 of each vector, in and out of the
// range where the plain sum of squares is safe.
func TestNorm2Pair(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	for trial := 0; trial < 500; trial++ {
		p := 1 + rng.IntN(9)
		a, b := make([]float64, p), make([]float64, p)
		scale := []float64{1, 1e-300, 1e300, 0, math.Inf(1)}[trial%5]
		for j := range a {
			a[j] = rng.NormFloat64()
			b[j] = rng.NormFloat64() * scale
		}
		if trial%31 == 0 {
			b[0] = math.NaN()
		}
		na, nb := norm2Pair(a, b)
		if wa, wb := norm2(a), norm2(b); math.Float64bits(na) != math.Float64bits(wa) || math.Float64bits(nb) != math.Float64bits(wb) {
			t.Fatalf("trial %d: norm2Pair (%v, %v), norm2 (%v, %v)", trial, na, nb, wa, wb)
		}
	}
}

// TestLSStartMatchesDirect: lsStart leaves the coefficients, residuals,
// scale and status that the least-squares solver leaves as a start.
func TestLSStartMatchesDirect(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	e := Estimator{Method: MethodIRLS, Psi: psi.Huber{K: 1.345}}
	for trial := 0; trial < 200; trial++ {
		n, p := 1+rng.IntN(60), 1+rng.IntN(6)
		if n < p {
			n = p
		}
		x, y, _ := kernelData(rng, n, p)
		switch trial % 7 {
		case 1: // rank deficient: two equal columns
			if p > 1 {
				for i := 0; i < n; i++ {
					x.Data[i*x.Stride+1] = x.Data[i*x.Stride]
				}
			}
		case 2:
			y[rng.IntN(n)] = 1e308
		}
		var a, b Workspace
		a.reserve(n, p)
		b.reserve(n, p)
		ra := Result{Coefficients: make([]float64, p)}
		rb := Result{Coefficients: make([]float64, p)}
		a.lsStart(x, y, &ra)
		b.direct(e, MethodLS, x, y, &rb)
		if ra.Status != rb.Status || math.Float64bits(ra.Scale) != math.Float64bits(rb.Scale) {
			t.Fatalf("trial %d: lsStart status %v scale %v, direct %v %v", trial, ra.Status, ra.Scale, rb.Status, rb.Scale)
		}
		for j := range ra.Coefficients {
			if math.Float64bits(ra.Coefficients[j]) != math.Float64bits(rb.Coefficients[j]) {
				t.Fatalf("trial %d: coefficient %d %v, direct %v", trial, j, ra.Coefficients[j], rb.Coefficients[j])
			}
		}
		if ra.Status == SingularDesign {
			continue
		}
		for i := range a.r {
			if math.Float64bits(a.r[i]) != math.Float64bits(b.r[i]) {
				t.Fatalf("trial %d: residual %d %v, direct %v", trial, i, a.r[i], b.r[i])
			}
		}
	}
}

// TestMADStatsMatch: every way of finding the MAD with its middle order
// statistics gives MAD's value and the order statistics of a sorted copy.
func TestMADStatsMatch(t *testing.T) {
	rng := rand.New(rand.NewPCG(6, 1))
	for trial := 0; trial < 400; trial++ {
		n := 1 + rng.IntN(150)
		r, buf := make([]float64, n), make([]float64, n)
		for i := range r {
			r[i] = rng.NormFloat64()
			if rng.IntN(8) == 0 {
				r[i] = math.Round(r[i]) // ties
			}
		}
		want := MAD(r, buf)
		sorted := make([]float64, n)
		for i, v := range r {
			sorted[i] = math.Abs(v)
		}
		insertionSort(sorted)
		wantHi := sorted[n/2]
		wantLo := wantHi
		if n%2 == 0 {
			wantLo = sorted[n/2-1]
		}
		check := func(name string, mad, lo, hi float64) {
			t.Helper()
			if math.Float64bits(mad) != math.Float64bits(want) || lo != wantLo || hi != wantHi {
				t.Fatalf("trial %d n=%d %s: (%v, %v, %v), want (%v, %v, %v)", trial, n, name, mad, lo, hi, want, wantLo, wantHi)
			}
		}
		mad, lo, hi := madFirst(r, buf)
		check("madFirst", mad, lo, hi)
		mad, lo, hi = madStats(r, buf)
		check("madStats", mad, lo, hi)
		g := want * MADConsistency
		for _, d := range []float64{0.001, 0.05, 0.4} {
			blo, bhi, ok := madBracket(n, g*(1+d/2), d)
			if !ok {
				continue
			}
			mad, lo, hi = madBetweenStats(r, buf, blo, bhi)
			check("madBetweenStats", mad, lo, hi)
			// A bracket tightened by the true order statistics, and one
			// tightened wrongly, which must fall back to the full MAD.
			tlo, thi := madTighten(blo, bhi, wantLo, wantHi, 0)
			mad, lo, hi = madBetweenStats(r, buf, tlo, thi)
			check("tightened", mad, lo, hi)
			tlo, thi = madTighten(blo, bhi, wantHi*1.5, wantHi*1.5, 0)
			mad, lo, hi = madBetweenStats(r, buf, tlo, thi)
			check("mistightened", mad, lo, hi)
		}
	}
}

// TestHuberCovarianceSums: the inline Huber loop of huberCovariance gives
// the sums of the general loop through Psi and Deriv, bit for bit,
// including residuals at exactly ±k·sigma and NaN.
func TestHuberCovarianceSums(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 2))
	for trial := 0; trial < 300; trial++ {
		n := 1 + rng.IntN(150)
		h := psi.Huber{K: []float64{1.345, 0.7, 2.5}[trial%3]}
		sigma := 0.2 + 3*rng.Float64()
		r := make([]float64, n)
		for i := range r {
			r[i] = 3 * rng.NormFloat64()
			switch rng.IntN(10) {
			case 0:
				r[i] = h.K * sigma
			case 1:
				r[i] = -h.K * sigma
			case 2:
				r[i] = math.Copysign(0, -1)
			}
		}
		if trial%40 == 3 {
			r[rng.IntN(n)] = math.NaN()
		}
		var w2, w1, w11 float64
		for _, ri := range r {
			u := ri / sigma
			p, d := h.Psi(u), h.Deriv(u)
			w2 += p * p
			w1 += d
			w11 += d * d
		}
		g2, g1, g11 := huberCovarianceSums(r, sigma, h.K)
		for _, c := range [][2]float64{{g2, w2}, {g1, w1}, {g11, w11}} {
			if math.Float64bits(c[0]) != math.Float64bits(c[1]) {
				t.Fatalf("trial %d: sums (%v, %v, %v), general (%v, %v, %v)", trial, g2, g1, g11, w2, w1, w11)
			}
		}
	}
}
