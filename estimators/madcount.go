package estimators

import (
	"math"
)

// countBelowGo is countBelow in Go.
func countBelowGo(a []float64, x float64) int {
	c := 0
	for _, v := range a {
		c += lessInt(v, x)
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

// madCountRounds bounds the rounds of madCount's bracketing; the values
// left in the bracket then are gathered and selected among.
const madCountRounds = 12

// madCountGather is the most gathered values madCount orders by
// insertion sort; more are selected among by selectFast.
const madCountGather = 12

// madCount is MAD(r, buf), the same value, found mostly by counting rather
// than by moving values: the middle order statistics of |r| are
// bracketed by counting the values below trial points (countBelow, a
// vector pass), each trial interpolated between the bracket's ends by
// their counts (every third round halving the bracket instead, so that
// progress is certain), until the bracket holds just the one or two
// values wanted, which the smallest at or above its lower end and the
// largest below its upper end then are (splitAt). A trial with exactly
// n/2 values below it, for even n, settles both middle values at once.
// Where ties keep the bracket from tightening, its values are gathered and
// selected among. On the 100 residuals of an elemental fit it takes about
// five counts and half the time of madFast. buf and tmp must have at least
// len(r) elements; both are overwritten. NaN in r gives MAD's result.
func madCount(r, buf, tmp []float64) float64 {
	n := len(r)
	if n < 2*madCountGather {
		return MAD(r, buf)
	}
	top, sum := absMaxSum(r, buf[:n])
	return madCountAbs(r, buf, tmp, top, sum)
}

// madCountAbs is madCount with buf already holding |r| and top and sum
// their largest and their sum (absMaxSum or residualsAbs).
func madCountAbs(r, buf, tmp []float64, top, sum float64) float64 {
	n := len(r)
	if n < 2*madCountGather || math.IsNaN(sum) || math.IsInf(sum, 0) {
		return MAD(r, buf) // short, NaN, or values too large to sum
	}
	a := buf[:n]
	// The order statistics wanted are a_(first) ≤ a_(k) (0-based); first
	// = k for odd n. Invariants: cLo = #{a < lo} ≤ first, and cHi = #{a <
	// hi} > k, so both lie in [lo, hi).
	k := n / 2
	first := k
	if n%2 == 0 {
		first = k - 1
	}
	lo, cLo := 0.0, 0
	hi, cHi := math.Nextafter(top, math.Inf(1)), n
	// The first trial: the median of three spread values.
	x := median3(a[n/4], a[n/2], a[3*n/4])
	// want is the count below a trial that would settle the bracket: k
	// for even n, between a_(k−1) and a_(k); k + ½ for odd n.
	want := float64(k) + 0.5*float64(n%2)
	// The bracket is tight when it holds only the values wanted: then the
	// smallest at or above lo and the largest below hi are they.
	tight := func() bool { return cLo == first && cHi == k+1 }
	for round := 0; round < madCountRounds && !tight(); round++ {
		if !(x > lo && x < hi) {
			x = lo + (hi-lo)/2
		}
		c := countBelow(a, x)
		switch {
		case c <= first:
			// At most first values lie below x: a_(first) ≥ x.
			lo, cLo = x, c
		case c > k:
			// a_(k) < x.
			hi, cHi = x, c
		default:
			// Even n and c = k: a_(k−1) < x ≤ a_(k), the largest value
			// below x and the smallest at or above it.
			below, above := splitAt(a, x)
			return (below/2 + above/2) / MADConsistency
		}
		// The next trial, interpolated on the counts; every third round
		// halves the bracket instead, so that progress is certain.
		x = lo + (hi-lo)*(want-float64(cLo))/float64(cHi-cLo)
		if round%3 == 2 {
			x = lo + (hi-lo)/2
		}
	}
	if tight() {
		_, loV := splitAt(a, lo)
		hiV, _ := splitAt(a, hi)
		if n%2 == 1 {
			return hiV / MADConsistency
		}
		return (loV/2 + hiV/2) / MADConsistency
	}
	// Ties kept the bracket from tightening: gather [lo, hi), the cHi −
	// cLo values there (cLo values lie below), and select among them.
	m := tmp[:n]
	g := 0
	for _, v := range a {
		m[g] = v
		g += boolInt(v >= lo) & lessInt(v, hi)
	}
	m = m[:g]
	var hiV, loV float64
	if g <= madCountGather {
		insertionSort(m)
		hiV, loV = m[k-cLo], m[first-cLo]
	} else {
		// Many equal values kept the bracket wide.
		hiV = selectFast(m, k-cLo)
		loV = hiV
		if first < k {
			// cLo ≤ first, so m[:k−cLo] is not empty; it holds the
			// values at most hiV.
			loV = m[0]
			for _, v := range m[1 : k-cLo] {
				loV = math.Max(loV, v)
			}
		}
	}
	if n%2 == 1 {
		return hiV / MADConsistency
	}
	return (loV/2 + hiV/2) / MADConsistency
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
