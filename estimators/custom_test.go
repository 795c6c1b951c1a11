package estimators

import (
	"math"
	"strings"
	"sync"
	"testing"
)

// huberExpr is Huber's psi written as an expression.
var huberExpr = CustomSpec{Psi: "abs(r) <= k ? r : k * sign(r)", Constants: []Constant{{"k", 1.345}}, Kinks: []float64{1.345}}

func TestCustomMatchesBuiltin(t *testing.T) {
	c, err := NewCustom(huberExpr)
	if err != nil {
		t.Fatal(err)
	}
	h := Huber{K: 1.345}
	for _, u := range []float64{-7, -1.345, -0.5, 0, 0.3, 1.3, 2, 40} {
		if c.Psi(u) != h.Psi(u) {
			t.Errorf("psi(%v) = %v, Huber %v", u, c.Psi(u), h.Psi(u))
		}
		if math.Abs(c.Rho(u)-h.Rho(u)) > 1e-10*(1+h.Rho(u)) {
			t.Errorf("rho(%v) by quadrature = %v, Huber %v", u, c.Rho(u), h.Rho(u))
		}
		if math.Abs(math.Abs(u)-1.345) > 1e-3 && math.Abs(c.Deriv(u)-h.Deriv(u)) > 1e-6 {
			t.Errorf("numerical psi'(%v) = %v, Huber %v", u, c.Deriv(u), h.Deriv(u))
		}
		if math.Abs(c.Weight(u)-h.Weight(u)) > 1e-9 {
			t.Errorf("weight(%v) = %v, Huber %v", u, c.Weight(u), h.Weight(u))
		}
	}
	if e := EfficiencyAtNormal(c); math.Abs(e-EfficiencyAtNormal(h)) > 1e-9 {
		t.Errorf("custom efficiency %v, built-in %v", e, EfficiencyAtNormal(h))
	}
	// The same solvers give the same fit.
	x, y := simulated(4, 80, 3, 0.1)
	for _, m := range []Method{MethodIRLS, MethodNewton} {
		s := Settings{ChangeTol: 1e-12}
		a, err := Fit(Estimator{Method: m, Psi: c, Settings: s}, x, y)
		if err != nil {
			t.Fatal(err)
		}
		b, _ := Fit(Estimator{Method: m, Psi: h, Settings: s}, x, y)
		if !a.Status.Converged() {
			t.Fatalf("%v: custom fit %v", m, a.Status)
		}
		for j := range a.Coefficients {
			if math.Abs(a.Coefficients[j]-b.Coefficients[j]) > 1e-8 {
				t.Errorf("%v coefficient %d: custom %v built-in %v", m, j, a.Coefficients[j], b.Coefficients[j])
			}
		}
	}
	// Tuning a custom psi finds Huber's constant (Holland & Welsch (1977),
	// Comm. Statist. Theory Methods 6:813-827: k = 1.345 for 95%).
	f, err := c.Family("")
	if err != nil {
		t.Fatal(err)
	}
	k, err := f.TuneEfficiency(0.95)
	if err != nil || math.Abs(k[0]-1.345) > 0.0005 {
		t.Errorf("tuned custom k = %v (%v), published 1.345", k, err)
	}
}

func TestCustomGivenRhoAndDeriv(t *testing.T) {
	spec := CustomSpec{
		Psi:       "r / (1 + abs(r)/c)",
		Rho:       "c^2 * (abs(r)/c - log(1 + abs(r)/c))",
		Deriv:     "1 / (1 + abs(r)/c)^2",
		Constants: []Constant{{"c", 1.4}},
	}
	c, err := NewCustom(spec)
	if err != nil {
		t.Fatal(err)
	}
	// Fair's psi: Holland & Welsch (1977), Comm. Statist. Theory Methods
	// 6:813-827: c = 1.400 gives 95% efficiency.
	if e := EfficiencyAtNormal(c); math.Abs(e-0.95) > 0.001 {
		t.Errorf("efficiency %v, published 0.95", e)
	}
	for _, u := range []float64{0.2, 1, 3} {
		if d := (c.Rho(u+1e-6) - c.Rho(u-1e-6)) / 2e-6; math.Abs(d-c.Psi(u)) > 1e-6 {
			t.Errorf("given rho' = %v, psi = %v at %v", d, c.Psi(u), u)
		}
	}
}

func TestCustomRejectsUnsafe(t *testing.T) {
	bad := []struct{ spec CustomSpec }{
		{CustomSpec{Psi: ""}},
		{CustomSpec{Psi: "map(1..1000000000, # * r)"}},
		{CustomSpec{Psi: "len('abc') * r"}},
		{CustomSpec{Psi: "r.foo"}},
		{CustomSpec{Psi: "now()"}},
		{CustomSpec{Psi: "r * q"}},
		{CustomSpec{Psi: "'text'"}},
		{CustomSpec{Psi: "[r, r]"}},
		{CustomSpec{Psi: "let x = r; x"}},
		{CustomSpec{Psi: "r ?? 1"}},
		{CustomSpec{Psi: "r +"}},
		{CustomSpec{Psi: "sqrt(r, r)"}},
		{CustomSpec{Psi: "r * k", Constants: []Constant{{"k", math.NaN()}}}},
		{CustomSpec{Psi: "r", Constants: []Constant{{"r", 1}}}},
		{CustomSpec{Psi: "r", Constants: []Constant{{"sin", 1}}}},
		{CustomSpec{Psi: "r", Constants: []Constant{{"a b", 1}}}},
		{CustomSpec{Psi: strings.Repeat("r+", 500) + "r"}},
	}
	for _, b := range bad {
		if _, err := NewCustom(b.spec); err == nil {
			t.Errorf("accepted %q", b.spec.Psi)
		}
	}
}

func TestCustomConcurrent(t *testing.T) {
	c, err := NewCustom(huberExpr)
	if err != nil {
		t.Fatal(err)
	}
	var wg sync.WaitGroup
	for g := 0; g < 8; g++ {
		wg.Add(1)
		go func(g int) {
			defer wg.Done()
			for i := 0; i < 2000; i++ {
				u := float64(g*i%700)/100 - 3.5
				if got, want := c.Psi(u), (Huber{K: 1.345}).Psi(u); got != want {
					t.Errorf("psi(%v) = %v under concurrency, want %v", u, got, want)
					return
				}
			}
		}(g)
	}
	wg.Wait()
}
