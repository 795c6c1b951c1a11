package estimators

import (
	"math"

	"github.com/rhomark/rhomark/psi"
)

// MADConsistency is Φ⁻¹(3/4), the median of |Z| for a standard normal Z
// ([psi.MADConsistency]). Dividing the median absolute residual by it gives a
// scale estimate that is consistent for sigma at the normal model.
const MADConsistency = psi.MADConsistency

// ScaleRule says how the residual scale sigma of an M-estimator is set.
type ScaleRule int

const (
	// ScaleMAD re-estimates sigma at every iteration as the median of the
	// absolute residuals divided by MADConsistency. The residuals of a model
	// with an intercept centre near zero, so no recentring is done.
	ScaleMAD ScaleRule = iota
	// ScaleFixed holds sigma at a known value throughout the fit.
	ScaleFixed
	// ScaleStart holds sigma at the scale of the start estimate (the
	// S-scale for a start by MethodS, as in an MM-estimator).
	ScaleStart
)

// String returns the rule's name as used in scenario files.
func (s ScaleRule) String() string {
	switch s {
	case ScaleMAD:
		return "mad"
	case ScaleFixed:
		return "fixed"
	case ScaleStart:
		return "start"
	}
	return "unknown-scale-rule"
}

// Scale is the scale rule of an M-estimator; Value is used by ScaleFixed.
type Scale struct {
	Rule  ScaleRule // how sigma is set; the zero value is ScaleMAD
	Value float64   // sigma for ScaleFixed, a positive finite number; ignored otherwise
}

// MAD returns the normalised median absolute value of r, median|r_i| /
// Φ⁻¹(3/4). buf must have at least len(r) elements; it is overwritten.
func MAD(r, buf []float64) float64 {
	buf = buf[:len(r)]
	for i, v := range r {
		buf[i] = math.Abs(v)
	}
	return median(buf) / MADConsistency
}

// madBetweenStats is MAD(r, buf), found faster when the median of |r| is
// known to lie in [lo, hi] (madBracket, madTighten): one pass keeps in buf
// only the values within it, counting those below, and the middle order
// statistics are selected among the few kept (madFinishStats), which it
// also returns. The value is the same order statistic either way, so the
// result is bit for bit MAD's.
func madBetweenStats(r, buf []float64, lo, hi float64) (mad, midLo, midHi float64) {
	buf = buf[:len(r)]
	// Branch-free counting: which side a value falls on is a coin toss
	// that a branch would mispredict half the time. Every value is stored
	// at buf[mid] and kept only when it lies in [lo, hi].
	// A NaN is neither below nor above the bracket, so it is kept.
	below, mid := 0, 0
	for _, v := range r {
		a := math.Abs(v)
		buf[mid] = a
		lt, gt := b2i(a < lo), b2i(a > hi)
		below += lt
		mid += 1 - lt - gt
	}
	return madFinishStats(r, buf, below, mid)
}

// madBracket returns the interval [guess(1 − delta), guess(1 + delta)] in
// which madBetweenStats looks for the median of n absolute values, or
// false when there is no usable guess.
func madBracket(n int, guess, delta float64) (lo, hi float64, ok bool) {
	if n < 2 || !(guess > 0) || math.IsInf(guess, 0) || !(delta > 0 && delta < 1) {
		return 0, 0, false
	}
	return guess * (1 - delta), guess * (1 + delta), true
}

// madFinishStats completes madBetweenStats (or residualsBracket) after a
// pass that found below values of |r| under the bracket and kept the mid
// values within it, and any NaN, in buf[:mid]. When the middle order
// statistics are not among the kept values (the bracket was too far off)
// or r holds NaN, it returns madFirst's result. It also returns the
// middle order statistics of |r| the MAD was made of, lo ≤ hi (equal for
// odd n), from which the next iterate's bracket is cut (madTighten); after
// a NaN or an empty r they are NaN.
func madFinishStats(r, buf []float64, below, mid int) (mad, lo, hi float64) {
	n := len(r)
	k := n / 2
	first := k // the lowest order statistic the median needs
	if n%2 == 0 {
		first = k - 1
	}
	if first < below || k >= below+mid {
		return madFirst(r, buf)
	}
	m := buf[:mid]
	for _, v := range m {
		if v != v {
			return madFirst(r, buf)
		}
	}
	k -= below
	selectFast(m, k)
	return madOf(m, k, n%2 == 1)
}

// madOf returns the MAD and the middle order statistics lo ≤ hi of |r|
// from values m of which the k-th smallest is at m[k] with every smaller
// one before it (as selectFast and median leave them), k being the upper
// middle one's rank among them; for even n the lower middle one is the
// largest of m[:k].
func madOf(m []float64, k int, odd bool) (mad, lo, hi float64) {
	hi = m[k]
	if odd {
		return hi / MADConsistency, hi, hi
	}
	lo = m[0]
	for _, v := range m[1:k] {
		if v > lo {
			lo = v
		}
	}
	return (lo/2 + hi/2) / MADConsistency, lo, hi
}

// madStats is MAD(r, buf) that also returns the middle order statistics
// of |r|, as madFinishStats; they are NaN when r holds NaN or is empty.
func madStats(r, buf []float64) (mad, lo, hi float64) {
	mad = MAD(r, buf)
	n := len(r)
	// MAD is NaN when r holds NaN (median), so buf holds none below.
	if n == 0 || mad != mad {
		return mad, math.NaN(), math.NaN()
	}
	buf = buf[:n]
	// median left the k-th smallest at buf[k] and the smaller ones before.
	_, lo, hi = madOf(buf, n/2, n%2 == 1)
	return mad, lo, hi
}

// madFirst is MAD(r, buf) with the middle order statistics as madStats,
// for the first iterate of a fit, where no bracket is known: the median of
// all |r_i| is selected by selectFast, whose partitions have no
// data-dependent branches. The value is the same order statistic, so the
// result is bit for bit MAD's; r holding NaN goes to madStats.
func madFirst(r, buf []float64) (mad, lo, hi float64) {
	n := len(r)
	if n == 0 {
		return madStats(r, buf)
	}
	buf = buf[:n]
	nan := false
	for i, v := range r {
		a := math.Abs(v)
		buf[i] = a
		nan = nan || a != a
	}
	if nan {
		return madStats(r, buf)
	}
	k := n / 2
	selectFast(buf, k)
	return madOf(buf, k, n%2 == 1)
}

// madTighten narrows the bracket [lo, hi] of the next iterate's MAD with
// the middle order statistics midLo ≤ midHi of |r| at the last one: no
// |r_i| moves by more than move when the coefficients take a step, and an
// order statistic of |r| moves no further than the values do, so the new
// middle order statistics lie in [midLo − move, midHi + move]. A small
// relative margin covers rounding. The bracket only speeds the selection
// up: a wrong one sends madFinishStats to madFirst, with the same result. The
// bracket returned is never inverted.
func madTighten(lo, hi, midLo, midHi, move float64) (float64, float64) {
	if !(midLo <= midHi) || !(move >= 0) || math.IsInf(move, 0) {
		return lo, hi
	}
	const margin = 1e-6
	tlo, thi := max(lo, midLo*(1-margin)-move), min(hi, midHi*(1+margin)+move)
	if !(tlo <= thi) {
		// The counting passes need lo ≤ hi (no value both below and above).
		return lo, hi
	}
	return tlo, thi
}

// median returns the median of a, reordering a. For even length it is the
// mean of the two middle order statistics. It is NaN when a is empty or
// holds NaN, whose place in an order would otherwise decide the result.
func median(a []float64) float64 {
	n := len(a)
	for _, v := range a {
		if v != v {
			return math.NaN()
		}
	}
	if n == 0 {
		return math.NaN()
	}
	k := n / 2
	hi := selectFast(a, k)
	if n%2 == 1 {
		return hi
	}
	lo := a[0]
	for _, v := range a[1:k] {
		if v > lo {
			lo = v
		}
	}
	return lo/2 + hi/2
}

// insertionSort sorts a small slice in place.
func insertionSort(a []float64) {
	for i := 1; i < len(a); i++ {
		v := a[i]
		j := i
		for j > 0 && a[j-1] > v {
			a[j] = a[j-1]
			j--
		}
		a[j] = v
	}
}

// b2i returns 1 for true and 0 for false; the compiler makes it a flag set,
// not a branch.
func b2i(b bool) int {
	var i int
	if b {
		i = 1
	}
	return i
}
