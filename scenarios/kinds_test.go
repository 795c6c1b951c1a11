package scenarios

import (
	"bytes"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// noiseExamples gives a valid value of every noise parameter; a kind added
// to noiseKinds with a new parameter and no value here fails
// TestKindsDrawWithoutAllocating.
func noiseExamples() map[string]string {
	return map[string]string{"df": "3", "mix-fraction": "0.1", "mix-factor": "5", "shape": "2"}
}

// contamExamples gives a valid entry of every contamination kind; a kind
// added to contamKinds without one here fails
// TestKindsDrawWithoutAllocating.
func contamExamples() map[string]string {
	return map[string]string{
		"vertical":      "{kind: vertical, fraction: 0.1, shift: 8, spread: 1, sides: two}",
		"bad-leverage":  "{kind: bad-leverage, fraction: 0.1, at: [6, 7], at-spread: 0.5, response: -4, spread: 1}",
		"good-leverage": "{kind: good-leverage, fraction: 0.1, at: 5, at-spread: 0.5}",
	}
}

// TestKindTables checks that the noise and contamination tables agree with
// the scenario format: unique names, parameters that are keys of Noise
// with a value check, contamination keys that Contamination has, and a
// data-key encoding that starts with the kind's name.
func TestKindTables(t *testing.T) {
	seen := map[string]bool{}
	for _, k := range noiseKinds() {
		if seen[k.name] {
			t.Errorf("noise %s listed twice", k.name)
		}
		seen[k.name] = true
		n := Noise{Dist: k.name, Scale: new(float64)}
		for _, p := range k.params {
			if !slices.Contains(noiseKeys(), p.key) {
				t.Errorf("noise %s: parameter %s is not a key of noise", k.name, p.key)
				continue
			}
			if p.check == nil {
				t.Errorf("noise %s: parameter %s has no check", k.name, p.key)
			}
			v := 1.0
			*n.param(p.key) = &v
		}
		var e settingsEncoder
		k.build(&n).appendSettings(&e)
		var want settingsEncoder
		want.str(k.name)
		if !bytes.HasPrefix(e.b, want.b) {
			t.Errorf("noise %s: data-key encoding does not start with its name", k.name)
		}
	}
	var keys []string
	for _, g := range (&Contamination{}).given() {
		keys = append(keys, g.key)
	}
	seen = map[string]bool{}
	for _, k := range contamKinds() {
		if seen[k.name] {
			t.Errorf("contamination %s listed twice", k.name)
		}
		seen[k.name] = true
		for _, key := range k.keys {
			if !slices.Contains(keys, key) {
				t.Errorf("contamination %s: key %s is not a key of contamination", k.name, key)
			}
		}
	}
}

// TestKindsDrawWithoutAllocating draws datasets with every noise kind and
// every contamination kind: each must allocate nothing and repeat its
// draws from the same seed.
func TestKindsDrawWithoutAllocating(t *testing.T) {
	var cases []string
	for _, k := range noiseKinds() {
		nz := "{dist: " + k.name
		for _, p := range k.params {
			v, ok := noiseExamples()[p.key]
			if !ok {
				t.Fatalf("noise %s: add an example value of %s to noiseExamples", k.name, p.key)
			}
			nz += ", " + p.key + ": " + v
		}
		cases = append(cases, "noise: "+nz+", grows-with: {column: b, rate: 0.2}}\n")
	}
	for _, k := range contamKinds() {
		ct, ok := contamExamples()[k.name]
		if !ok {
			t.Fatalf("contamination %s: add an example to contamExamples", k.name)
		}
		cases = append(cases, "noise: {dist: normal}\ncontamination: ["+ct+"]\n")
	}
	for _, c := range cases {
		src := "model: {n: 60, intercept: 1, columns: [{name: a, slope: 1}, {name: b, slope: -1, dist: uniform}]}\n" + c + "estimators: [{method: ls}]\n"
		st, err := Parse("kinds.yaml", []byte(src), Limits{})
		if err != nil {
			t.Fatalf("%s: %v", c, err)
		}
		g, err := NewGenerator(st.Cells[0].Scenario)
		if err != nil {
			t.Fatalf("%s: %v", c, err)
		}
		n, p := g.Dims()
		sc := g.NewScratch()
		x1, x2 := mat.NewDense(n, p, nil), mat.NewDense(n, p, nil)
		y1, y2 := make([]float64, n), make([]float64, n)
		pcg := rand.NewPCG(3, 4)
		g.Draw(pcg, x1, y1, sc)
		pcg.Seed(3, 4)
		g.Draw(pcg, x2, y2, sc)
		if !mat.Equal(x1, x2) || !slices.Equal(y1, y2) {
			t.Errorf("%s: the same seed gave a different dataset", c)
		}
		if allocs := testing.AllocsPerRun(50, func() { g.Draw(pcg, x1, y1, sc) }); allocs != 0 {
			t.Errorf("%s: Draw allocates %v times per dataset", c, allocs)
		}
	}
}

// TestNormalNoise checks which generators report homoscedastic normal
// noise, the condition of the normal-theory efficiencies.
func TestNormalNoise(t *testing.T) {
	for _, c := range []struct {
		noise string
		sd    float64
		ok    bool
	}{
		{"{dist: normal, scale: 0.3}", 0.3, true},
		{"{scale: 2}", 2, true},
		{"{dist: normal, grows-with: {column: a, rate: 0.1}}", 0, false},
		{"{dist: laplace}", 0, false},
		{"{dist: normal-mixture, mix-fraction: 0.1, mix-factor: 3}", 0, false},
	} {
		src := "model: {n: 20, columns: [{name: a}]}\nnoise: " + c.noise + "\nestimators: [{method: ls}]\n"
		st, err := Parse("normal.yaml", []byte(src), Limits{})
		if err != nil {
			t.Fatal(err)
		}
		g, err := NewGenerator(st.Cells[0].Scenario)
		if err != nil {
			t.Fatal(err)
		}
		if sd, ok := g.NormalNoise(); sd != c.sd || ok != c.ok {
			t.Errorf("%s: NormalNoise() = %v, %v; want %v, %v", c.noise, sd, ok, c.sd, c.ok)
		}
	}
}
