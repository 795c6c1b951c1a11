package estimators

import "math"

// ltsSelectBits returns the k-th smallest (0-based) of the values in a, of
// length at most len(buf); a and buf are overwritten. The values are the
// bits of non-negative floats (squared residuals), which order as the
// floats do, so that every comparison is an integer one and the compiler
// makes it a conditional move. It is quickselect with the partition made
// out of place: each value is written to both ends of the other buffer and
// the end whose side it belongs to moves on, so that no step waits for the
// store of the step before, as the in-place partition of selectFast does.
// Values equal to the pivot are dropped, which makes every pass shrink the
// range. The pivot is the median of three. Short ranges are finished by
// insertion sort.
func ltsSelectBits(a, buf []uint64, k int) uint64 {
	src, dst := a, buf[:len(a)]
	for len(src) > 8 {
		n := len(src)
		x, y, z := src[0], src[n/2], src[n-1]
		piv := max(min(x, y), min(max(x, y), z))
		lo, hi := 0, n-1
		for _, v := range src {
			dst[lo] = v
			dst[hi] = v
			lt, gt := 0, 0
			if v < piv {
				lt = 1
			}
			if v > piv {
				gt = 1
			}
			lo += lt
			hi -= gt
		}
		// dst[:lo] < piv, dst[hi+1:] > piv, hi+1−lo values equal to it.
		switch {
		case k < lo:
			src, dst = dst[:lo], src[:lo]
		case k <= hi:
			return piv
		default:
			k -= hi + 1
			src, dst = dst[hi+1:n], src[:n-hi-1]
		}
	}
	for i := 1; i < len(src); i++ {
		v := src[i]
		j := i
		for j > 0 && src[j-1] > v {
			src[j] = src[j-1]
			j--
		}
		src[j] = v
	}
	return src[k]
}

// kthStart returns the h-th smallest of the squared residuals r2 (all ≥ 0
// and not NaN), the value kth returns: by ltsSelectBits for the n below
// ltsWindowRows and by kth above.
func (lw *ltsWork) kthStart(r2 []float64) float64 {
	n := len(r2)
	a := lw.startBits(n)
	if a == nil {
		return lw.kth(r2, lw.sel[:n])
	}
	for i, v := range r2 {
		a[i] = math.Float64bits(v)
	}
	return lw.kthBits(n)
}

// startBits returns the buffer of kthBits for n values, or nil when n is
// at least ltsWindowRows (kth then finds the value faster).
func (lw *ltsWork) startBits(n int) []uint64 {
	if n >= ltsWindowRows {
		return nil
	}
	sw := &lw.start
	if cap(sw.bits) < 2*n {
		sw.bits = make([]uint64, 2*n)
	}
	return sw.bits[:n]
}

// kthBits returns the h-th smallest of the n values whose bits startBits'
// buffer holds.
func (lw *ltsWork) kthBits(n int) float64 {
	bits := lw.start.bits
	return math.Float64frombits(ltsSelectBits(bits[:n], bits[n:2*n], lw.h-1))
}
