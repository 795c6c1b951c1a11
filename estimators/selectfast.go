package estimators

import (
	"math/bits"
	"slices"
)

// selectFast reorders a so that a[k] holds its k-th smallest value
// (0-based), every a[i] ≤ a[k] for i < k and every a[i] ≥ a[k] for i > k,
// and returns a[k]. It partitions by Lomuto's scheme written without a
// data-dependent branch (every element is swapped, and the boundary moves
// by the outcome of the comparison), around a median-of-three pivot, and
// finishes short ranges by insertion sort. On fresh random data the
// branches of a partition by comparisons would be mispredicted about half
// the time; this one has none to mispredict (BenchmarkSelectFresh times it
// on such data). When partitions go badly too often (many equal values) it
// sorts the rest, so the worst case stays O(n log n). a must not contain
// NaN.
func selectFast(a []float64, k int) float64 {
	lo, hi := 0, len(a)-1
	budget := 2 * bits.Len(uint(len(a)))
	for hi-lo >= 16 {
		if budget == 0 {
			slices.Sort(a[lo : hi+1]) // pdqsort: O(n log n) worst case, no allocation
			return a[k]
		}
		budget--
		mid := lo + (hi-lo)/2
		// The median of a[lo], a[mid], a[hi] goes to a[hi], the pivot's
		// place.
		if a[mid] < a[lo] {
			a[mid], a[lo] = a[lo], a[mid]
		}
		if a[hi] < a[lo] {
			a[hi], a[lo] = a[lo], a[hi]
		}
		if a[mid] < a[hi] {
			a[hi], a[mid] = a[mid], a[hi]
		}
		pivot := a[hi]
		s := lo
		part := a[lo:hi]
		for i, v := range part {
			part[i] = a[s]
			a[s] = v
			s += b2i(v < pivot)
		}
		a[hi], a[s] = a[s], a[hi]
		switch {
		case k < s:
			hi = s - 1
		case k > s:
			lo = s + 1
		default:
			return a[k]
		}
	}
	insertionSort(a[lo : hi+1])
	return a[k]
}
