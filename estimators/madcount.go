package estimators

import (
	"math"
)

// countBelowGo is countBelow in Go.
func countBelowGo(a []float64, x float64) int {
	c := 0
	for _, v := range a {
		c += b2i(v < x)
	}
	return c
}

// absMaxSumGo is absMaxSum in Go.
func absMaxSumGo(r, a []float64) (top, sum float64) {
	a = a[:len(r)]
	for i, v := range r {
		v = math.Abs(v)
		a[i] = v
		top = max(top, v)
		sum += v
	}
	return top, sum
}

// splitAtGo is splitAt in Go.
func splitAtGo(a []float64, x float64) (below, above float64) {
	above = math.Inf(1)
	for _, v := range a {
		if v < x {
			below = max(below, v)
		} else {
			above = min(above, v)
		}
	}
	return below, above
}

// madCountRounds bounds the rounds of orderPair's bracketing; the values
// left in the bracket then are gathered and selected among.
const madCountRounds = 12

// madCountGather is the most gathered values orderPair orders by
// insertion sort; more are selected among by selectFast.
const madCountGather = 12

// madCountAbs is MAD(r, buf), the same value, found mostly by counting
// rather than by moving values, with buf already holding |r| and top and
// sum their largest and their sum (absMaxSum or residualsAbs): the middle
// order statistics of |r| come from orderPair. On the 100 residuals of an
// elemental fit it takes about five counts (BenchmarkMADResiduals compares
// it with madFirst). buf and tmp must have at least len(r) elements; both
// are overwritten. NaN in r, or values too large to sum, give MAD's result.
func madCountAbs(r, buf, tmp []float64, top, sum float64) float64 {
	n := len(r)
	if n < 2*madCountGather || math.IsNaN(sum) || math.IsInf(sum, 0) {
		return MAD(r, buf) // short, NaN, or values too large to sum
	}
	k := n / 2
	if n%2 == 1 {
		v, _ := orderPair(buf[:n], tmp, k, k, top)
		return v / MADConsistency
	}
	lo, hi := orderPair(buf[:n], tmp, k-1, k, top)
	return (lo/2 + hi/2) / MADConsistency
}

// orderPair returns the first-th and last-th smallest (0-based; last is
// first or first + 1) of the values a, none negative, infinite or NaN,
// the largest of which is top; tmp, at least len(a) long, is scratch, and
// a is left as it was. It brackets them by counting the values below
// trial points (countBelow, a vector pass), each trial interpolated
// between the bracket's ends by their counts (every third round halving
// the bracket instead, so that progress is certain), until the bracket
// holds just the values wanted, which the smallest at or above its lower
// end and the largest below its upper end then are (splitAt). For last =
// first + 1 a trial with last values below it settles both at once. Where
// ties keep the bracket from tightening, its values are gathered and
// selected among.
func orderPair(a, tmp []float64, first, last int, top float64) (vFirst, vLast float64) {
	n := len(a)
	// Invariants: cLo = #{a < lo} ≤ first and cHi = #{a < hi} > last, so
	// both lie in [lo, hi).
	lo, cLo := 0.0, 0
	hi, cHi := math.Nextafter(top, math.Inf(1)), n
	// The first trial: the median of three spread values, taken where
	// the wanted values would sit in sorted order.
	x := median3(a[first/2], a[first], a[min(first+(n-first)/2, n-1)])
	// want is the count below a trial that would settle the bracket:
	// last for a pair, between them; first + ½ for one value.
	want := float64(first) + 0.5
	if last > first {
		want = float64(last)
	}
	tight := func() bool { return cLo == first && cHi == last+1 }
	for round := 0; round < madCountRounds && !tight(); round++ {
		if !(x > lo && x < hi) {
			x = lo + (hi-lo)/2
		}
		c := countBelow(a, x)
		switch {
		case c <= first:
			// At most first values lie below x: a_(first) ≥ x.
			lo, cLo = x, c
		case c > last:
			// a_(last) < x.
			hi, cHi = x, c
		default:
			// last = first + 1 and c = last: a_(first) < x ≤ a_(last),
			// the largest value below x and the smallest at or above it.
			return splitAt(a, x)
		}
		x = lo + (hi-lo)*(want-float64(cLo))/float64(cHi-cLo)
		if round%3 == 2 {
			x = lo + (hi-lo)/2
		}
	}
	if tight() {
		_, vFirst = splitAt(a, lo)
		vLast, _ = splitAt(a, hi)
		return vFirst, vLast
	}
	// Gather [lo, hi): the cHi − cLo values there (cLo values lie below).
	m := tmp[:n]
	g := 0
	for _, v := range a {
		m[g] = v
		g += b2i(v >= lo) & b2i(v < hi)
	}
	m = m[:g]
	if g <= madCountGather {
		insertionSort(m)
		return m[first-cLo], m[last-cLo]
	}
	// Many equal values kept the bracket wide.
	vLast = selectFast(m, last-cLo)
	vFirst = vLast
	if first < last {
		// m[:last−cLo] holds the values at most vLast, and is not empty
		// since cLo ≤ first.
		vFirst = m[0]
		for _, v := range m[1 : last-cLo] {
			vFirst = math.Max(vFirst, v)
		}
	}
	return vFirst, vLast
}

// median3 returns the median of three values (none NaN).
func median3(a, b, c float64) float64 {
	if b < a {
		a, b = b, a
	}
	if c < b {
		b = max(a, c)
	}
	return b
}
