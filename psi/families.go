package psi

import (
	"fmt"
	"math"
	"reflect"
	"sort"
	"strings"
)

// Family describes a named psi family: its tuning constants, their defaults
// and how to build the psi. Families are looked up by name with
// [LookupFamily]; adding a family means writing its type in a file of its own
// and one entry in familyTable.
type Family struct {
	// Name is the family's name in scenario files and on the command line.
	Name string
	// Params names the tuning constants in order, for example ["k"].
	Params []string
	// Defaults holds the default value of each tuning constant.
	Defaults []float64
	// About says in one line what the default achieves, with its source.
	About string
	// build makes the psi from validated tuning constants.
	build func(t []float64) Psi
	// check validates tuning constants beyond positivity; nil if none.
	check func(t []float64) error
}

// New returns the family's psi with the given tuning constants; nil or empty
// tuning means the defaults. It reports an error naming the valid form when
// the number or values of the constants are wrong.
func (f Family) New(tuning []float64) (Psi, error) {
	if len(tuning) == 0 {
		tuning = f.Defaults
	}
	if len(tuning) != len(f.Params) {
		if len(f.Params) == 0 {
			return nil, fmt.Errorf("psi family %q takes no tuning constant", f.Name)
		}
		return nil, fmt.Errorf("psi family %q takes %d tuning constant(s) (%s), got %d",
			f.Name, len(f.Params), strings.Join(f.Params, ", "), len(tuning))
	}
	for i, t := range tuning {
		if !(t > 0) || math.IsInf(t, 0) {
			return nil, fmt.Errorf("psi family %q: tuning constant %s = %v must be a positive finite number",
				f.Name, f.Params[i], t)
		}
	}
	if f.check != nil {
		if err := f.check(tuning); err != nil {
			return nil, fmt.Errorf("psi family %q: %w", f.Name, err)
		}
	}
	return f.build(tuning), nil
}

// familyTable lists the built-in families. It is returned by value from a
// function so that no package-level state can be changed by callers.
func familyTable() []Family {
	return []Family{
		{
			Name:  "ls",
			About: "least squares: fully efficient at the normal model, breakdown point 0",
			build: func([]float64) Psi { return LeastSquares{} },
		},
		{
			Name: "huber", Params: []string{"k"}, Defaults: []float64{1.345},
			About: "k = 1.345 gives 95% efficiency at the normal (Holland & Welsch 1977)",
			build: func(t []float64) Psi { return Huber{K: t[0]} },
		},
		{
			Name: "bisquare", Params: []string{"c"}, Defaults: []float64{BisquareEfficiency95},
			About: "c = 4.68506 gives 95% efficiency at the normal (the exact root; Holland & Welsch 1977 print 4.685)",
			build: func(t []float64) Psi { return Bisquare{C: t[0]} },
		},
		{
			Name: "hampel", Params: []string{"a", "b", "c"}, Defaults: []float64{2, 4, 8},
			About: "(2, 4, 8), a common-practice default, gives 99.0% efficiency at the normal (rhomark theory)",
			build: func(t []float64) Psi { return Hampel{A: t[0], B: t[1], C: t[2]} },
			check: func(t []float64) error {
				if !(t[0] < t[1] && t[1] < t[2]) {
					return fmt.Errorf("tuning constants a = %v, b = %v, c = %v: need a < b < c", t[0], t[1], t[2])
				}
				return nil
			},
		},
		{
			Name: "andrews", Params: []string{"a"}, Defaults: []float64{1.339},
			About: "a = 1.339 gives 95% efficiency at the normal (Holland & Welsch 1977)",
			build: func(t []float64) Psi { return Andrews{A: t[0]} },
		},
		{
			Name: "welsch", Params: []string{"c"}, Defaults: []float64{2.985},
			About: "c = 2.985 gives 95% efficiency at the normal (Holland & Welsch 1977)",
			build: func(t []float64) Psi { return Welsch{C: t[0]} },
		},
		{
			Name: "cauchy", Params: []string{"c"}, Defaults: []float64{2.385},
			About: "c = 2.385 gives 95% efficiency at the normal (Holland & Welsch 1977)",
			build: func(t []float64) Psi { return Cauchy{C: t[0]} },
		},
		{
			Name: "logistic", Params: []string{"c"}, Defaults: []float64{1.205},
			About: "c = 1.205 gives 95% efficiency at the normal (Holland & Welsch 1977)",
			build: func(t []float64) Psi { return Logistic{C: t[0]} },
		},
		{
			Name: "fair", Params: []string{"c"}, Defaults: []float64{1.400},
			About: "c = 1.400 gives 95% efficiency at the normal (Holland & Welsch 1977)",
			build: func(t []float64) Psi { return Fair{C: t[0]} },
		},
		{
			Name: "talwar", Params: []string{"c"}, Defaults: []float64{2.795},
			About: "c = 2.795 gives 95% efficiency at the normal (Holland & Welsch 1977)",
			build: func(t []float64) Psi { return Talwar{C: t[0]} },
		},
		{
			Name: "lad", Params: []string{"eps"}, Defaults: []float64{1e-6},
			About: "eps = 1e-6 caps the IRLS weight; 2/π efficiency at the normal",
			build: func(t []float64) Psi { return LAD{Eps: t[0]} },
		},
	}
}

// LookupFamily returns the built-in family with the given name.
func LookupFamily(name string) (Family, bool) {
	for _, f := range familyTable() {
		if f.Name == name {
			return f, true
		}
	}
	return Family{}, false
}

// Families returns every built-in family, sorted by name.
func Families() []Family {
	fs := familyTable()
	sort.Slice(fs, func(i, j int) bool { return fs[i].Name < fs[j].Name })
	return fs
}

// FamilyNames returns the names of the built-in families, sorted, for
// messages that list the valid choices.
func FamilyNames() []string {
	fs := Families()
	names := make([]string, len(fs))
	for i, f := range fs {
		names[i] = f.Name
	}
	return names
}

// Describe returns the family name and the tuning constants of p when p is
// a built-in family's psi, in the order of the family's Params, and false
// otherwise (a custom psi, or a type of the caller's own). It reads the
// constants off p's fields, which for every built-in family are its tuning
// constants in that order.
func Describe(p Psi) (family string, tuning []float64, ok bool) {
	if p == nil {
		return "", nil, false
	}
	t := reflect.TypeOf(p)
	for _, f := range familyTable() {
		if reflect.TypeOf(f.build(f.Defaults)) != t || t.Kind() != reflect.Struct {
			continue
		}
		v := reflect.ValueOf(p)
		if v.NumField() != len(f.Params) {
			return "", nil, false
		}
		for i := range v.NumField() {
			if v.Field(i).Kind() != reflect.Float64 {
				return "", nil, false
			}
			tuning = append(tuning, v.Field(i).Float())
		}
		return f.Name, tuning, true
	}
	return "", nil, false
}
