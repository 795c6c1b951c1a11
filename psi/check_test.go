package psi

import (
	"math"
	"testing"
)

func TestCheckPsiBuiltins(t *testing.T) {
	for _, f := range Families() {
		psi, _ := f.New(nil)
		r := CheckPsi(psi)
		if !r.OK {
			for _, c := range r.Checks {
				if c.Required && !c.OK {
					t.Errorf("%s: %s fails: %s", f.Name, c.Property, c.Detail)
				}
			}
		}
	}
	r := CheckPsi(Talwar{C: 2.795})
	if len(r.Jumps) != 1 || math.Abs(r.Jumps[0]-2.795) > 1e-9 {
		t.Errorf("Talwar jumps %v, want [2.795]", r.Jumps)
	}
	if r := CheckPsi(Huber{K: 1.345}); len(r.Jumps) != 0 {
		t.Errorf("Huber has no jumps, found %v", r.Jumps)
	}
}

// TestCheckPsiCatchesBroken: deliberately broken custom psi functions are
// caught, at the right property and point.
func TestCheckPsiCatchesBroken(t *testing.T) {
	cases := []struct {
		name     string
		spec     CustomSpec
		property string
	}{
		{"not odd", CustomSpec{Psi: "r > 0 ? r : 0.5 * r", Rho: "r > 0 ? r^2/2 : r^2/4"}, "odd symmetry"},
		{"psi not rho'", CustomSpec{Psi: "r / (1 + abs(r))", Rho: "r^2 / 2"}, "psi = rho'"},
		{"wrong psi'", CustomSpec{Psi: "tanh(r)", Deriv: "1"}, "psi' consistent with psi"},
		{"psi(0) not 0", CustomSpec{Psi: "r + 0.1", Rho: "r^2/2 + 0.1*r"}, "psi(0) = 0"},
		{"negative weight", CustomSpec{Psi: "-r", Rho: "-r^2/2"}, "IRLS weight"},
	}
	for _, c := range cases {
		psi, err := NewCustom(c.spec)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		r := CheckPsi(psi)
		if r.OK {
			t.Errorf("%s: passed the check", c.name)
		}
		found := false
		for _, ch := range r.Checks {
			if ch.Property == c.property && !ch.OK {
				found = true
			}
		}
		if !found {
			t.Errorf("%s: property %q not flagged: %+v", c.name, c.property, r.Checks)
		}
	}
	good, _ := NewCustom(CustomSpec{Psi: "r / (1 + abs(r)/c)", Constants: []Constant{{"c", 1.4}}})
	if r := CheckPsi(good); !r.OK {
		t.Errorf("a well-formed custom psi failed: %+v", r.Checks)
	}
}
