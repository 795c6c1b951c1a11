package psi

import (
	"math"
	"slices"
	"strings"
	"testing"
)

// newFamilyDefaults lists the families added after huber and bisquare, with the
// psi their defaults must build (the conventions of their doc comments).
var newFamilyDefaults = []struct {
	name string
	want Psi
}{
	{"hampel", Hampel{A: 2, B: 4, C: 8}},
	{"andrews", Andrews{A: 1.339}},
	{"welsch", Welsch{C: 2.985}},
	{"cauchy", Cauchy{C: 2.385}},
	{"logistic", Logistic{C: 1.205}},
	{"fair", Fair{C: 1.400}},
	{"talwar", Talwar{C: 2.795}},
	{"lad", LAD{Eps: 1e-6}},
}

// familyDefault returns the psi of the named family at its defaults.
func familyDefault(t *testing.T, name string) Psi {
	t.Helper()
	f, ok := LookupFamily(name)
	if !ok {
		t.Fatalf("family %q not registered", name)
	}
	psi, err := f.New(nil)
	if err != nil {
		t.Fatalf("%s defaults: %v", name, err)
	}
	return psi
}

// TestFamilyDefaults checks that each family is registered under its name
// and that its defaults build the psi its doc comment describes, with the
// optional interfaces it should have.
func TestFamilyDefaults(t *testing.T) {
	kinked := map[string]bool{"hampel": true, "andrews": true, "talwar": true, "lad": true}
	bounded := map[string]bool{"hampel": true, "andrews": true, "welsch": true, "talwar": true}
	for _, c := range newFamilyDefaults {
		psi := familyDefault(t, c.name)
		if psi != c.want {
			t.Errorf("%s defaults build %#v, want %#v", c.name, psi, c.want)
		}
		f, _ := LookupFamily(c.name)
		if f.About == "" || len(f.Params) != len(f.Defaults) {
			t.Errorf("%s: About %q, params %v, defaults %v", c.name, f.About, f.Params, f.Defaults)
		}
		if _, ok := psi.(Kinked); ok != kinked[c.name] {
			t.Errorf("%s: implements Kinked = %v, want %v", c.name, ok, kinked[c.name])
		}
		if _, ok := psi.(Bounded); ok != bounded[c.name] {
			t.Errorf("%s: implements Bounded = %v, want %v", c.name, ok, bounded[c.name])
		}
	}
}

// TestFamilyValues checks values of psi, rho and the weight at points where
// the formulas of the doc comments give simple closed forms (worked by
// hand; these are definitions, not external figures).
func TestFamilyValues(t *testing.T) {
	const (
		andA  = 1.339
		welC  = 2.985
		cauC  = 2.385
		logC  = 1.205
		fairC = 1.400
		talC  = 2.795
	)
	ln2, ln3 := math.Ln2, math.Log(3)
	cases := []struct {
		family           string
		u                float64
		psi, rho, weight float64
	}{
		// Hampel (2, 4, 8): rho(4) = 6, rho(8) = 10.
		{"hampel", 0, 0, 0, 1},
		{"hampel", 1, 1, 0.5, 1},
		{"hampel", -1.5, -1.5, 1.125, 1},
		{"hampel", 3, 2, 4, 2.0 / 3},
		{"hampel", -3, -2, 4, 2.0 / 3},
		{"hampel", 6, 1, 9, 1.0 / 6}, // 2(8-6)/4; 10 - 2·2²/(2·4)
		{"hampel", -7, -0.5, 9.75, 0.5 / 7},
		{"hampel", 10, 0, 10, 0},
		{"hampel", -100, 0, 10, 0},
		// Andrews: at u = πA/2, sin = 1; at u = πA/6, sin = 1/2.
		{"andrews", 0, 0, 0, 1},
		{"andrews", math.Pi * andA / 2, andA, andA * andA, 2 / math.Pi},
		{"andrews", -math.Pi * andA / 6, -andA / 2, andA * andA * (1 - math.Sqrt(3)/2), 3 / math.Pi},
		{"andrews", 5, 0, 2 * andA * andA, 0},
		{"andrews", -50, 0, 2 * andA * andA, 0},
		// Welsch: at u = C the weight is 1/e.
		{"welsch", 0, 0, 0, 1},
		{"welsch", welC, welC / math.E, welC * welC / 2 * (1 - 1/math.E), 1 / math.E},
		{"welsch", -2 * welC, -2 * welC * math.Exp(-4), welC * welC / 2 * (1 - math.Exp(-4)), math.Exp(-4)},
		// Cauchy: at u = C the weight is 1/2, at u = 3C it is 1/10.
		{"cauchy", 0, 0, 0, 1},
		{"cauchy", cauC, cauC / 2, cauC * cauC / 2 * ln2, 0.5},
		{"cauchy", -3 * cauC, -0.3 * cauC, cauC * cauC / 2 * math.Log(10), 0.1},
		{"cauchy", 1000 * cauC, cauC / (1000 + 1e-3), cauC * cauC / 2 * math.Log(1+1e6), 1 / (1 + 1e6)},
		// Logistic: tanh(ln(3)/2) = 1/2 and cosh(ln(3)/2) = 2/√3; at
		// u = 50C, tanh rounds to 1 and log cosh(50) = 50 - ln 2 + 1e-44.
		{"logistic", 0, 0, 0, 1},
		{"logistic", logC * ln3 / 2, logC / 2, logC * logC * math.Log(2/math.Sqrt(3)), 1 / ln3},
		{"logistic", -logC * ln3 / 2, -logC / 2, logC * logC * math.Log(2/math.Sqrt(3)), 1 / ln3},
		{"logistic", 50 * logC, logC, logC * logC * (50 - ln2), 1.0 / 50},
		// Fair: at u = C the weight is 1/2, at u = 3C it is 1/4.
		{"fair", 0, 0, 0, 1},
		{"fair", fairC, fairC / 2, fairC * fairC * (1 - ln2), 0.5},
		{"fair", -3 * fairC, -0.75 * fairC, fairC * fairC * (3 - 2*ln2), 0.25},
		// Talwar: least squares inside ±C, nothing outside.
		{"talwar", 0, 0, 0, 1},
		{"talwar", 1, 1, 0.5, 1},
		{"talwar", -2.5, -2.5, 3.125, 1},
		{"talwar", 3, 0, talC * talC / 2, 0},
		{"talwar", -30, 0, talC * talC / 2, 0},
		// LAD, Eps = 1e-6.
		{"lad", 0, 0, 0, 1e6},
		{"lad", 5e-7, 0.5, 1.25e-7, 1e6},
		{"lad", -5e-7, -0.5, 1.25e-7, 1e6},
		{"lad", 0.5, 1, 0.5 - 5e-7, 2},
		{"lad", -3, -1, 3 - 5e-7, 1.0 / 3},
	}
	const tol = 1e-13
	near := func(got, want float64) bool {
		return math.Abs(got-want) <= tol*math.Max(1, math.Abs(want))
	}
	for _, c := range cases {
		psi := familyDefault(t, c.family)
		if got := psi.Psi(c.u); !near(got, c.psi) {
			t.Errorf("%s: psi(%v) = %.17g, want %.17g", c.family, c.u, got, c.psi)
		}
		if got := psi.Rho(c.u); !near(got, c.rho) {
			t.Errorf("%s: rho(%v) = %.17g, want %.17g", c.family, c.u, got, c.rho)
		}
		if got := psi.Weight(c.u); !near(got, c.weight) {
			t.Errorf("%s: weight(%v) = %.17g, want %.17g", c.family, c.u, got, c.weight)
		}
	}
}

// TestFamilyExtremes checks that no method returns NaN at huge, infinite or
// tiny arguments, for tuning constants at the defaults and scaled by 1e-3
// and 1e3 (so that u/C overflows or underflows), that psi has its limits at
// ±Inf, and that rho stays finite up to |u| = 1e300 (beyond, the rho of an
// unbounded family, about C|u|, may rightly overflow).
func TestFamilyExtremes(t *testing.T) {
	// limit is psi(+Inf) in units of the first tuning constant (LAD: 1).
	limit := map[string]float64{
		"hampel": 0, "andrews": 0, "welsch": 0, "cauchy": 0,
		"logistic": 1, "fair": 1, "talwar": 0,
	}
	us := []float64{0, math.SmallestNonzeroFloat64, 1e-300, 1e-9, 1e300,
		math.MaxFloat64, math.Inf(1)}
	for _, c := range newFamilyDefaults {
		f, _ := LookupFamily(c.name)
		for _, scale := range []float64{1e-3, 1, 1e3} {
			tuning := make([]float64, len(f.Defaults))
			for i, d := range f.Defaults {
				tuning[i] = d * scale
			}
			psi, err := f.New(tuning)
			if err != nil {
				t.Fatalf("%s%v: %v", c.name, tuning, err)
			}
			for _, u := range us {
				for _, v := range []float64{u, -u} {
					vals := []float64{psi.Rho(v), psi.Psi(v), psi.Deriv(v), psi.Weight(v)}
					for i, x := range vals {
						if math.IsNaN(x) {
							t.Errorf("%s%v: method %d at %v is NaN", c.name, tuning, i, v)
						}
					}
					// C|u| ≤ 1.4e3 · 1e300 is far from overflow.
					if math.Abs(v) <= 1e300 && math.IsInf(vals[0], 0) {
						t.Errorf("%s%v: rho(%v) = %v", c.name, tuning, v, vals[0])
					}
					if math.IsInf(vals[3], 0) || vals[3] < 0 {
						t.Errorf("%s%v: weight(%v) = %v", c.name, tuning, v, vals[3])
					}
				}
			}
			want := 1.0
			if c.name != "lad" {
				want = limit[c.name] * tuning[0]
			}
			for _, s := range []float64{1, -1} {
				if got := psi.Psi(s * math.Inf(1)); got != s*want {
					t.Errorf("%s%v: psi(%v·Inf) = %v, want %v", c.name, tuning, s, got, s*want)
				}
			}
			if got := psi.Weight(math.Inf(1)); got != 0 {
				t.Errorf("%s%v: weight(Inf) = %v, want 0", c.name, tuning, got)
			}
		}
	}
}

// TestNewFamiliesRejectBadTuning checks that Family.New rejects tuning
// constants of the wrong number or out of order, and accepts good ones in
// the order of Params.
func TestNewFamiliesRejectBadTuning(t *testing.T) {
	cases := []struct {
		family string
		tuning []float64
		msg    string // part of the error message, if any
	}{
		{"hampel", []float64{4, 2, 8}, "need a < b < c"},
		{"hampel", []float64{2, 4, 4}, "need a < b < c"},
		{"hampel", []float64{2, 2, 8}, "need a < b < c"},
		{"hampel", []float64{2, 9, 8}, "need a < b < c"},
		{"hampel", []float64{2, 4}, "3 tuning constant(s) (a, b, c)"},
		{"hampel", []float64{2, 4, 8, 16}, "got 4"},
		{"hampel", []float64{0, 4, 8}, "a = 0"},
		{"hampel", []float64{1, 2, math.Inf(1)}, "c = +Inf"},
		{"andrews", []float64{1, 2}, "(a)"},
		{"welsch", []float64{-1}, "positive"},
		{"cauchy", []float64{math.NaN()}, "positive"},
		{"logistic", []float64{0}, "positive"},
		{"fair", []float64{1, 1}, "(c)"},
		{"talwar", []float64{-2.795}, "positive"},
		{"lad", []float64{0}, "eps = 0"},
		{"lad", []float64{1e-6, 1}, "(eps)"},
	}
	for _, c := range cases {
		f, _ := LookupFamily(c.family)
		_, err := f.New(c.tuning)
		if err == nil {
			t.Errorf("%s.New(%v) accepted bad tuning", c.family, c.tuning)
			continue
		}
		if !strings.Contains(err.Error(), c.msg) {
			t.Errorf("%s.New(%v): error %q does not say %q", c.family, c.tuning, err, c.msg)
		}
	}
	good := []struct {
		family string
		tuning []float64
		want   Psi
	}{
		{"hampel", []float64{1, 3, 4}, Hampel{A: 1, B: 3, C: 4}},
		{"andrews", []float64{2}, Andrews{A: 2}},
		{"lad", []float64{1e-3}, LAD{Eps: 1e-3}},
	}
	for _, c := range good {
		f, _ := LookupFamily(c.family)
		psi, err := f.New(c.tuning)
		if err != nil || psi != c.want {
			t.Errorf("%s.New(%v) = %#v, %v; want %#v", c.family, c.tuning, psi, err, c.want)
		}
	}
}

// TestKinksAndBounds checks, for every family, that the kinks are
// non-negative and increasing and that rho reaches RhoMax at the last kink
// (or far out) and never exceeds it.
func TestKinksAndBounds(t *testing.T) {
	for name, psi := range builtinPsis(t) {
		var kinks []float64
		if k, ok := psi.(Kinked); ok {
			kinks = k.Kinks()
			for i, v := range kinks {
				if !(v > 0) || (i > 0 && !(v > kinks[i-1])) {
					t.Errorf("%s: kinks %v not positive and increasing", name, kinks)
				}
			}
		}
		b, ok := psi.(Bounded)
		if !ok {
			continue
		}
		m := b.RhoMax()
		far := 1e6
		if len(kinks) > 0 {
			far = kinks[len(kinks)-1]
		}
		if got := psi.Rho(far); math.Abs(got-m) > 1e-12*m {
			t.Errorf("%s: rho(%v) = %v, RhoMax = %v", name, far, got, m)
		}
		for u := 0.0; u <= 50; u += 0.125 {
			if r := psi.Rho(u); r > m*(1+1e-15) {
				t.Errorf("%s: rho(%v) = %v > RhoMax %v", name, u, r, m)
			}
		}
	}
}

// TestHampelContinuity checks that Hampel's psi and rho are continuous at
// each kink (psi has slope at most max(1, A/(C-B)), so a step of δ moves it
// by no more than that times δ).
func TestHampelContinuity(t *testing.T) {
	for _, h := range []Hampel{{A: 2, B: 4, C: 8}, {A: 1, B: 3, C: 3.5}} {
		slope := math.Max(1, h.A/(h.C-h.B))
		for _, k := range h.Kinks() {
			const d = 1e-9
			for _, s := range []float64{1, -1} {
				lo, hi := s*(k-d), s*(k+d)
				if diff := math.Abs(h.Psi(hi) - h.Psi(lo)); diff > 2*slope*d*1.01 {
					t.Errorf("%+v: psi jumps by %v at %v", h, diff, s*k)
				}
				if diff := math.Abs(h.Rho(hi) - h.Rho(lo)); diff > 2*h.A*d*1.01+1e-14 {
					t.Errorf("%+v: rho jumps by %v at %v", h, diff, s*k)
				}
			}
		}
		if got := h.Psi(h.B); got != h.A {
			t.Errorf("%+v: psi(B) = %v, want A", h, got)
		}
		if got := h.Psi(h.C); got != 0 {
			t.Errorf("%+v: psi(C) = %v, want 0", h, got)
		}
	}
}

// TestTalwarPsiJump checks that Talwar's psi keeps the value C at ±C and drops
// to zero just beyond, as hard rejection should.
func TestTalwarPsiJump(t *testing.T) {
	tw := Talwar{C: 2.795}
	for _, s := range []float64{1, -1} {
		c := s * tw.C
		beyond := math.Nextafter(c, s*math.Inf(1))
		if got := tw.Psi(c); got != c {
			t.Errorf("psi(%v) = %v, want %v", c, got, c)
		}
		if got := tw.Psi(beyond); got != 0 {
			t.Errorf("psi(%v) = %v, want 0", beyond, got)
		}
		if got := tw.Weight(c); got != 1 {
			t.Errorf("weight(%v) = %v, want 1", c, got)
		}
		if got := tw.Weight(beyond); got != 0 {
			t.Errorf("weight(%v) = %v, want 0", beyond, got)
		}
		if got, want := tw.Rho(beyond), tw.C*tw.C/2; got != want {
			t.Errorf("rho(%v) = %v, want %v", beyond, got, want)
		}
	}
}

// TestLADWeightAndLimits checks LAD's capped weight at zero and its psi at
// huge residuals.
func TestLADWeightAndLimits(t *testing.T) {
	l := LAD{Eps: 1e-6}
	if w := l.Weight(0); w != 1e6 {
		t.Errorf("weight(0) = %v, want 1/Eps = 1e6", w)
	}
	for _, u := range []float64{1e300, math.MaxFloat64, math.Inf(1), 1e-6 * (1 + 1e-15)} {
		if got := l.Psi(u); got != 1 {
			t.Errorf("psi(%v) = %v, want 1", u, got)
		}
		if got := l.Psi(-u); got != -1 {
			t.Errorf("psi(%v) = %v, want -1", -u, got)
		}
	}
	// At the kink the two pieces of psi and rho meet.
	if got := l.Psi(l.Eps); got != 1 {
		t.Errorf("psi(Eps) = %v, want 1", got)
	}
	if got, want := l.Rho(l.Eps), l.Eps/2; math.Abs(got-want) > 1e-15*want {
		t.Errorf("rho(Eps) = %v, want Eps/2 = %v", got, want)
	}
}

// TestDescribe: every built-in family's psi, built with its defaults and
// with other constants, is described back by its name and constants;
// a custom psi is not.
func TestDescribe(t *testing.T) {
	for _, f := range Families() {
		for _, scale := range []float64{1, 1.5} {
			want := make([]float64, len(f.Defaults))
			for i, d := range f.Defaults {
				want[i] = d * scale
			}
			p, err := f.New(want)
			if err != nil {
				if len(want) == 0 {
					p, err = f.New(nil)
				}
				if err != nil {
					t.Fatalf("%s: %v", f.Name, err)
				}
			}
			name, got, ok := Describe(p)
			if !ok || name != f.Name || !slices.Equal(got, want) {
				t.Errorf("Describe(%s %v) = %q %v %v", f.Name, want, name, got, ok)
			}
		}
	}
	c, err := NewCustom(CustomSpec{Psi: "r"})
	if err != nil {
		t.Fatal(err)
	}
	if _, _, ok := Describe(c); ok {
		t.Error("a custom psi was described as a family")
	}
}
