package psi

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// builtinPsis returns every built-in family at its default tuning.
func builtinPsis(t *testing.T) map[string]Psi {
	t.Helper()
	out := map[string]Psi{}
	for _, f := range Families() {
		psi, err := f.New(nil)
		if err != nil {
			t.Fatalf("%s defaults: %v", f.Name, err)
		}
		out[f.Name] = psi
	}
	return out
}

// TestPsiContract checks the Psi contract numerically for every built-in
// family: psi = rho', psi' = d psi/du away from kinks, weight = psi/u with a
// finite limit at 0, rho(0) = 0, odd psi. These are definitions, not
// external figures.
func TestPsiContract(t *testing.T) {
	for name, psi := range builtinPsis(t) {
		t.Run(name, func(t *testing.T) {
			var kinks []float64
			if k, ok := psi.(Kinked); ok {
				kinks = k.Kinks()
			}
			nearKink := func(u float64) bool {
				for _, k := range kinks {
					if math.Abs(math.Abs(u)-k) < 1e-3 {
						return true
					}
				}
				return false
			}
			if got := psi.Rho(0); got != 0 {
				t.Errorf("rho(0) = %v", got)
			}
			if w := psi.Weight(0); math.IsNaN(w) || math.IsInf(w, 0) {
				t.Errorf("weight(0) = %v", w)
			}
			if w0, w1 := psi.Weight(0), psi.Weight(1e-9); math.Abs(w0-w1) > 1e-6 {
				t.Errorf("weight not continuous at 0: %v vs %v", w0, w1)
			}
			const h = 1e-6
			for u := -8.0; u <= 8; u += 0.0625 {
				if nearKink(u) {
					continue
				}
				if got, want := psi.Psi(u), (psi.Rho(u+h)-psi.Rho(u-h))/(2*h); math.Abs(got-want) > 1e-5*(1+math.Abs(want)) {
					t.Errorf("psi(%v) = %v, rho' = %v", u, got, want)
				}
				if got, want := psi.Deriv(u), (psi.Psi(u+h)-psi.Psi(u-h))/(2*h); math.Abs(got-want) > 1e-5*(1+math.Abs(want)) {
					t.Errorf("psi'(%v) = %v, numerical %v", u, got, want)
				}
				if u != 0 {
					if got, want := psi.Weight(u), psi.Psi(u)/u; math.Abs(got-want) > 1e-12*(1+math.Abs(want)) {
						t.Errorf("weight(%v) = %v, psi/u = %v", u, got, want)
					}
				}
				if a, b := psi.Psi(u), psi.Psi(-u); a != -b {
					t.Errorf("psi not odd at %v: %v, %v", u, a, b)
				}
			}
		})
	}
}

func TestFamilyNewRejectsBadTuning(t *testing.T) {
	huber, _ := LookupFamily("huber")
	ls, _ := LookupFamily("ls")
	cases := []struct {
		f      Family
		tuning []float64
	}{
		{huber, []float64{0}},
		{huber, []float64{-1}},
		{huber, []float64{math.NaN()}},
		{huber, []float64{math.Inf(1)}},
		{huber, []float64{1, 2}},
		{ls, []float64{1}},
	}
	for _, c := range cases {
		if _, err := c.f.New(c.tuning); err == nil {
			t.Errorf("%s.New(%v) accepted bad tuning", c.f.Name, c.tuning)
		}
	}
	if _, ok := LookupFamily("no-such"); ok {
		t.Error("LookupFamily found a family that does not exist")
	}
}

// epsilon is the float64 machine epsilon, 2^-52.
const epsilon = 0x1p-52

func TestMADConsistencyConstant(t *testing.T) {
	// The constant must be the float64 nearest Φ⁻¹(3/4).
	want := distuv.UnitNormal.Quantile(0.75)
	if math.Abs(MADConsistency-want) > 2*epsilon*want {
		t.Fatalf("MADConsistency = %.17g, Φ⁻¹(3/4) = %.17g", MADConsistency, want)
	}
}
