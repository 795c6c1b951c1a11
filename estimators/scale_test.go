package estimators

import (
	"math"
	"sort"
	"testing"
)

func TestMedianSelect(t *testing.T) {
	cases := [][]float64{
		{1}, {2, 1}, {3, 1, 2}, {5, 5, 5, 5}, {1, 2, 3, 4, 5, 6},
		{9, -1, 4, 4, 4, 0, 7, 7, 2},
	}
	// Adversarial and sorted inputs of several sizes.
	for _, n := range []int{10, 101, 1000} {
		asc := make([]float64, n)
		desc := make([]float64, n)
		organ := make([]float64, n)
		for i := range asc {
			asc[i] = float64(i)
			desc[i] = float64(n - i)
			organ[i] = float64(min(i, n-i))
		}
		cases = append(cases, asc, desc, organ)
	}
	for i, c := range cases {
		sorted := append([]float64(nil), c...)
		sort.Float64s(sorted)
		n := len(sorted)
		want := sorted[n/2]
		if n%2 == 0 {
			want = sorted[n/2-1]/2 + sorted[n/2]/2
		}
		work := append([]float64(nil), c...)
		if got := median(work); got != want {
			t.Errorf("case %d: median = %v, want %v", i, got, want)
		}
		for k := 0; k < n; k += max(1, n/7) {
			work := append([]float64(nil), c...)
			if got := selectFast(work, k); got != sorted[k] {
				t.Errorf("case %d: select(%d) = %v, want %v", i, k, got, sorted[k])
			}
		}
	}
}

func TestNorm2Range(t *testing.T) {
	cases := []struct {
		x    []float64
		want float64
	}{
		{[]float64{3, 4}, 5},
		{[]float64{3e200, 4e200}, 5e200},
		{[]float64{3e-200, 4e-200}, 5e-200},
		{[]float64{0, 0}, 0},
		{[]float64{math.MaxFloat64, 0}, math.MaxFloat64},
	}
	for _, c := range cases {
		if got := norm2(c.x); math.Abs(got-c.want) > 4*epsilon*c.want {
			t.Errorf("norm2(%v) = %v, want %v", c.x, got, c.want)
		}
	}
	if got := norm2([]float64{1, math.NaN()}); !math.IsNaN(got) {
		t.Errorf("norm2 with NaN = %v", got)
	}
}

// TestMADWithNaN: a NaN anywhere in the residuals makes the MAD NaN, never
// a finite value that depends on where the NaN sat (the selection's
// comparisons with NaN are all false).
func TestMADWithNaN(t *testing.T) {
	for _, r := range [][]float64{
		{1, math.NaN(), 3},
		{math.NaN(), 1, 2, 3},
		{1, 2, 3, 4, 5, math.NaN()},
		{math.NaN(), math.NaN(), 1},
	} {
		if got := MAD(r, make([]float64, len(r))); !math.IsNaN(got) {
			t.Errorf("MAD(%v) = %v, want NaN", r, got)
		}
	}
}
