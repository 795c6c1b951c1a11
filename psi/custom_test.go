package psi

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
	// Tolerances: rho by quadrature to a relative 1e-13 per panel, summed
	// over a table (1e-10 relative); psi' by a Richardson-extrapolated
	// central difference with step 1e-4, error O(h⁴) plus rounding ≈ 1e-8
	// (1e-6), away from the kink where no difference quotient converges;
	// the weight at 0 is psi(δ)/δ with δ = 1e-8 (1e-9); the efficiency is
	// a ratio of quadratures (1e-9). The estimators package's
	// TestCustomFitMatchesBuiltin compares the fits.
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

// TestCustomRhoTable: rho integrated through the cached table matches the
// closed forms of smooth and piecewise families everywhere, at the knots,
// between them, at the kinks and beyond the table's reach.
func TestCustomRhoTable(t *testing.T) {
	cases := []struct {
		spec    CustomSpec
		builtin Psi
	}{
		{CustomSpec{Psi: "r * exp(-(r/c)^2)", Constants: []Constant{{"c", 2.9846}}}, Welsch{C: 2.9846}},
		{CustomSpec{Psi: "r / (1 + (r/c)^2)", Constants: []Constant{{"c", 2.3849}}}, Cauchy{C: 2.3849}},
		{CustomSpec{Psi: "abs(r) <= c ? r * (1 - (r/c)^2)^2 : 0", Constants: []Constant{{"c", 4.685}}, Kinks: []float64{4.685}}, Bisquare{C: 4.685}},
	}
	for _, c := range cases {
		cu, err := NewCustom(c.spec)
		if err != nil {
			t.Fatal(err)
		}
		// 1e-11 relative: panels of relative error 1e-13 summed over up to
		// 513 table segments.
		for u := -45.0; u <= 45; u += 0.0371 {
			for _, v := range []float64{u, math.Round(u*16) / 16} {
				want := c.builtin.Rho(v)
				if got := cu.Rho(v); math.Abs(got-want) > 1e-11*(1+want) {
					t.Fatalf("%s: rho(%v) = %.15g, closed form %.15g", c.spec.Psi, v, got, want)
				}
			}
		}
		if got, want := cu.Rho(4.685), c.builtin.Rho(4.685); math.Abs(got-want) > 1e-11*(1+want) {
			t.Errorf("%s: rho at the kink %v, closed form %v", c.spec.Psi, got, want)
		}
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
	// 6:813-827: c = 1.400 gives 95% efficiency; the band is the one of
	// TestHollandWelschConstants (printing error of the constant, doubled).
	if e := EfficiencyAtNormal(c); math.Abs(e-0.95) > 0.00025 {
		t.Errorf("efficiency %v, published 0.95", e)
	}
	for _, u := range []float64{0.2, 1, 3} {
		// A central difference with step 1e-6: truncation O(1e-12), rounding
		// about 1e-16/1e-6 = 1e-10 times rho; 1e-6 is far above both.
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

// TestCustomSpecErrorField: each refusal is a *SpecError naming the field
// of the spec at fault, with the message of the error it wraps.
func TestCustomSpecErrorField(t *testing.T) {
	cases := []struct {
		spec  CustomSpec
		field string
	}{
		{CustomSpec{Psi: " "}, "Psi"},
		{CustomSpec{Psi: "r * q"}, "Psi"},
		{CustomSpec{Psi: "r / abs(r)"}, "Psi"},
		{CustomSpec{Psi: "r", Rho: "r +"}, "Rho"},
		{CustomSpec{Psi: "r", Rho: "log(abs(r))"}, "Rho"},
		{CustomSpec{Psi: "r", Deriv: "now()"}, "Deriv"},
		{CustomSpec{Psi: "r", Deriv: "1/r"}, "Deriv"},
		{CustomSpec{Psi: "r", Constants: []Constant{{"r", 1}}}, "Constants"},
		{CustomSpec{Psi: "r * k", Constants: []Constant{{"k", 1}, {"k", 2}}}, "Constants"},
		{CustomSpec{Psi: "r", Kinks: []float64{-1}}, "Kinks"},
	}
	for _, c := range cases {
		_, err := NewCustom(c.spec)
		se, ok := err.(*SpecError)
		if !ok {
			t.Errorf("%+v: error %v (%T), want a *SpecError", c.spec, err, err)
			continue
		}
		if se.Field != c.field || se.Error() != se.Err.Error() || se.Unwrap() != se.Err {
			t.Errorf("%+v: field %q message %q, want field %q", c.spec, se.Field, se.Error(), c.field)
		}
	}
}

// A psi, rho or derivative that is not finite somewhere is refused when
// it is compiled, naming the expression and the residual.
func TestCustomRejectsNonFinite(t *testing.T) {
	cases := []struct {
		spec CustomSpec
		want string
	}{
		{CustomSpec{Psi: "r / abs(r)"}, "at r = 0"},
		{CustomSpec{Psi: "1 / (r - 1)"}, "at r = 1"},
		{CustomSpec{Psi: "r", Rho: "log(abs(r))"}, `rho expression "log(abs(r))" gives -Inf at r = 0`},
		{CustomSpec{Psi: "r", Deriv: "1/r"}, "psi'"},
		{CustomSpec{Psi: "r * sqrt(k - abs(r))", Constants: []Constant{{"k", 3}}}, "gives NaN"},
		{CustomSpec{Psi: "r < 7 ? r : 1/(r - 7.5)", Kinks: []float64{7.5}}, "at r = 7.5"},
	}
	for _, c := range cases {
		_, err := NewCustom(c.spec)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%q: error %v, want one containing %q", c.spec.Psi, err, c.want)
		}
	}
	// Finite everywhere, including a jump: accepted.
	if _, err := NewCustom(CustomSpec{Psi: "abs(r) < 2 ? r : 0", Kinks: []float64{2}}); err != nil {
		t.Errorf("finite psi refused: %v", err)
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

// TestCustomIntegerArithmeticIsFloat: integer literals are computed in
// float64, so products that would overflow int64 round instead of
// wrapping around to a wrong sign or size.
func TestCustomIntegerArithmeticIsFloat(t *testing.T) {
	cases := []struct {
		psi  string
		at   float64
		want float64
	}{
		// 1e10 × 1e10 overflows int64 (wrapping to 7766279631452241920).
		{"r * (10000000000 * 10000000000) / 1e20", 1.5, 1.5 * (1e10 * 1e10) / 1e20},
		// The largest int64 doubled wraps to -2 in integer arithmetic.
		{"r * (9223372036854775807 + 9223372036854775807) / 1.8e19", 2, 2 * (9223372036854775807.0 + 9223372036854775807.0) / 1.8e19},
		// Integer division stays true division.
		{"r * (7 / 2)", 2, 7},
		// -(-9223372036854775808) cannot be an int64.
		{"r * -(-9223372036854775807 - 1) / 9.2e18", 3, 3 * -(-9223372036854775807.0 - 1) / 9.2e18},
	}
	for _, c := range cases {
		p, err := NewCustom(CustomSpec{Psi: c.psi})
		if err != nil {
			t.Errorf("%s: %v", c.psi, err)
			continue
		}
		if got := p.Psi(c.at); got != c.want {
			t.Errorf("%s at r = %v: %v, want %v", c.psi, c.at, got, c.want)
		}
	}
}
