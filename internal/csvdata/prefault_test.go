package csvdata

import (
	"slices"
	"testing"
)

// TestPrefaultKeepsBytes: prefaulting memory, fresh or written, of any
// length and alignment, changes none of it.
func TestPrefaultKeepsBytes(t *testing.T) {
	for _, n := range []int{0, 1, 511, 512, 513, 100_000, 1 << 20} {
		fresh := make([]float64, n)
		prefault(fresh)
		if slices.ContainsFunc(fresh, func(v float64) bool { return v != 0 }) {
			t.Errorf("%d fresh values: not all zero after prefault", n)
		}
		s := make([]float64, n)
		for i := range s {
			s[i] = float64(i) + 0.5
		}
		want := slices.Clone(s)
		for _, cut := range [][2]int{{0, n}, {n / 3, n / 2}, {min(1, n), n}} {
			prefault(s[cut[0]:cut[1]])
		}
		if !slices.Equal(s, want) {
			t.Errorf("%d values changed by prefault", n)
		}
		rows := make([]int, n)
		prefault(rows[min(7, n):])
		if slices.ContainsFunc(rows, func(v int) bool { return v != 0 }) {
			t.Errorf("%d fresh ints: not all zero after prefault", n)
		}
	}
}
