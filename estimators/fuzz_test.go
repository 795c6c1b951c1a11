package estimators

import (
	"encoding/binary"
	"errors"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/psi"
)

// FuzzFit: random datasets, including duplicated rows, constant columns,
// huge and tiny magnitudes and exact fits, never make a fit panic or hang;
// every outcome is an error for non-finite data or a classified status, and
// a converged fit has finite coefficients.
func FuzzFit(f *testing.F) {
	f.Add([]byte{12, 3, 0, 0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16})
	f.Add([]byte{20, 2, 1, 1, 0xff, 0xff, 0, 0, 0, 0, 0, 0, 0, 0, 0x7f, 0xf0})
	f.Add([]byte{8, 4, 2, 2, 9, 9, 9, 9, 9, 9, 9, 9, 9, 9, 9, 9, 9, 9, 9, 9})
	methods := []Method{MethodLS, MethodIRLS, MethodNewton, MethodS, MethodMM, MethodLTS, MethodLAD}
	psis := []psi.Psi{psi.Huber{K: 1.345}, psi.Bisquare{C: 4.685}, psi.Talwar{C: 2.795}, psi.LAD{Eps: 1e-6}, psi.Cauchy{C: 2.385}}
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
