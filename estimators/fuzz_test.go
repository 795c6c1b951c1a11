package estimators

import (
	"encoding/binary"
	"errors"
	"math"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"
)

// FuzzCustomPsi: any expression either is refused at compile time or
// evaluates, in bounded time and without panicking, to a number (NaN is a
// number here: the solvers classify it).
func FuzzCustomPsi(f *testing.F) {
	for _, s := range []string{"r", "abs(r) <= k ? r : k*sign(r)", "r/(1+abs(r)/k)", "k*tanh(r/k)", "r^3", "sin(r)*exp(-r*r)", "r > 0 && r < 1 ? r : 0"} {
		f.Add(s, 1.5)
	}
	f.Fuzz(func(t *testing.T, expr string, k float64) {
		if math.IsNaN(k) || math.IsInf(k, 0) {
			k = 1
		}
		c, err := NewCustom(CustomSpec{Psi: expr, Constants: []Constant{{"k", k}}})
		if err != nil {
			return
		}
		start := time.Now()
		for _, u := range []float64{0, -1, 1e-300, 3, -1e300, 7.5} {
			c.Psi(u)
			c.Weight(u)
			c.Deriv(u)
		}
		if time.Since(start) > 2*time.Second {
			t.Fatalf("evaluating %q took %v", expr, time.Since(start))
		}
	})
}

// FuzzFit: random datasets, including duplicated rows, constant columns,
// huge and tiny magnitudes and exact fits, never make a fit panic or hang;
// every outcome is an error for non-finite data or a classified status, and
// a converged fit has finite coefficients.
func FuzzFit(f *testing.F) {
	f.Add([]byte{12, 3, 0, 0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16})
	f.Add([]byte{20, 2, 1, 1, 0xff, 0xff, 0, 0, 0, 0, 0, 0, 0, 0, 0x7f, 0xf0})
	f.Add([]byte{8, 4, 2, 2, 9, 9, 9, 9, 9, 9, 9, 9, 9, 9, 9, 9, 9, 9, 9, 9})
	methods := []Method{MethodLS, MethodIRLS, MethodNewton, MethodS, MethodMM, MethodLTS, MethodLAD}
	psis := []Psi{Huber{K: 1.345}, Bisquare{C: 4.685}, Talwar{C: 2.795}, LAD{Eps: 1e-6}, Cauchy{C: 2.385}}
	f.Fuzz(func(t *testing.T, data []byte) {
		if len(data) < 4 {
			return
		}
		n := 3 + int(data[0])%60
		p := 1 + int(data[1])%6
		m := methods[int(data[2])%len(methods)]
		psi := psis[int(data[3])%len(psis)]
		rest := data[4:]
		next := func(i int) float64 {
			if len(rest) == 0 {
				return 0
			}
			b := make([]byte, 8)
			for k := range b {
				b[k] = rest[(i*8+k)%len(rest)]
			}
			v := math.Float64frombits(binary.LittleEndian.Uint64(b))
			switch {
			case math.IsNaN(v) || math.IsInf(v, 0):
				return float64(b[0]) - 128
			case i%7 == 3:
				return math.Trunc(v) // ties and duplicates
			}
			return v
		}
		x := mat.NewDense(n, p, nil)
		y := make([]float64, n)
		for i := 0; i < n; i++ {
			x.Set(i, 0, 1)
			for j := 1; j < p; j++ {
				x.Set(i, j, next(i*p+j))
			}
			y[i] = next(n*p + i)
		}
		e := Estimator{Method: m, Psi: psi, Resampling: Resampling{Subsets: 20, Keep: 2}, Settings: Settings{MaxIterations: 200}}
		var ws Workspace
		var res Result
		err := e.Fit(x, y, &ws, &res)
		if err != nil {
			if errors.Is(err, ErrNonFinite) || strings.Contains(err.Error(), "fewer than") {
				return
			}
			t.Fatalf("unexpected error for valid input: %v", err)
		}
		if res.Status == NotRun || res.Status.String() == "unknown-status" {
			t.Fatalf("unclassified outcome %v", res.Status)
		}
		if res.Status.Converged() {
			for _, b := range res.Coefficients {
				if math.IsNaN(b) || math.IsInf(b, 0) {
					t.Fatalf("%v: converged (%v) with coefficient %v", m, res.Status, b)
				}
			}
		}
	})
}
