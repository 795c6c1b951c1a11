package scenarios

import (
	"bytes"
	"encoding/json"
	"math/rand/v2"
	"slices"
	"strings"
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

// columnExamples gives a valid value of every column parameter; a kind
// added to columnKinds with a new key and no value here fails
// TestKindsDrawWithoutAllocating.
func columnExamples() map[string]string {
	return map[string]string{
		"mean": "1", "sd": "2", "min": "-1", "max": "2", "df": "4", "scale": "1.5",
		"meanlog": "0.2", "sdlog": "0.5", "rate": "2", "levels": "[1, 2, 4]",
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
		dist, ok := ParseNoiseDist(k.name)
		if !ok {
			t.Errorf("noise %s: ParseNoiseDist does not know it", k.name)
		}
		n := Noise{Dist: dist, Scale: new(float64)}
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
	seen = map[string]bool{}
	for _, k := range columnKinds() {
		if seen[k.name] {
			t.Errorf("column distribution %s listed twice", k.name)
		}
		seen[k.name] = true
		dist, ok := ParseColumnDist(k.name)
		if !ok {
			t.Errorf("column distribution %s: ParseColumnDist does not know it", k.name)
		}
		d := Distribution{Dist: dist, Levels: []float64{1, 2}}
		for _, p := range k.params {
			if !slices.Contains(columnKeys(), p.key) {
				t.Errorf("column distribution %s: parameter %s is not a key of a column", k.name, p.key)
				continue
			}
			v := 1.0
			*d.param(p.key) = &v
		}
		m := k.build(&d)
		_, random := m.(randomColumn)
		_, fixed := m.(fixedColumn)
		if random == fixed || fixed != k.fixed {
			t.Errorf("column distribution %s: model is random %v, fixed %v; the kind says fixed %v", k.name, random, fixed, k.fixed)
		}
		var e settingsEncoder
		m.appendSettings(&e)
		var want settingsEncoder
		want.str(k.name)
		if !bytes.HasPrefix(e.b, want.b) {
			t.Errorf("column distribution %s: data-key encoding does not start with its name", k.name)
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
	for _, k := range columnKinds() {
		col := "{name: b, slope: -1, dist: " + k.name
		for _, p := range k.params {
			v, ok := columnExamples()[p.key]
			if !ok {
				t.Fatalf("column distribution %s: add an example value of %s to columnExamples", k.name, p.key)
			}
			col += ", " + p.key + ": " + v
		}
		if k.levels {
			col += ", levels: " + columnExamples()["levels"]
		}
		col += "}"
		model := "model: {n: 60, intercept: 1, columns: [{name: a, slope: 1}, " + col + "]}\n"
		cases = append(cases, model+"noise: {dist: normal}\n")
		if !k.fixed {
			cases = append(cases, "model: {n: 60, intercept: 1, correlation: 0.4, columns: [{name: a, slope: 1}, "+col+"]}\nnoise: {dist: normal}\n")
		}
	}
	for _, c := range cases {
		if !strings.HasPrefix(c, "model:") {
			c = "model: {n: 60, intercept: 1, columns: [{name: a, slope: 1}, {name: b, slope: -1, dist: uniform}]}\n" + c
		}
		src := c + "estimators: [{method: ls}]\n"
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

// TestNamesDecodeOnce checks the typed names of the format: every kind's
// name parses and prints back, an unknown name keeps its text for the
// error, and the normalised JSON spells each as written (an absent
// stop.require is left out).
func TestNamesDecodeOnce(t *testing.T) {
	for _, name := range noiseNames() {
		if v, ok := ParseNoiseDist(name); !ok || v.String() != name {
			t.Errorf("ParseNoiseDist(%q) = %v, %v", name, v, ok)
		}
	}
	for _, name := range contamNames() {
		if v, ok := ParseContamKind(name); !ok || v.String() != name {
			t.Errorf("ParseContamKind(%q) = %v, %v", name, v, ok)
		}
	}
	for _, name := range columnNames() {
		if v, ok := ParseColumnDist(name); !ok || v.String() != name {
			t.Errorf("ParseColumnDist(%q) = %v, %v", name, v, ok)
		}
	}
	for _, c := range []struct {
		name string
		ok   bool
		all  bool
	}{{"any", true, false}, {"all", true, true}, {"every", false, false}, {"", false, false}} {
		v, ok := ParseStopRequire(c.name)
		if ok != c.ok || v.All() != c.all || v.String() != c.name {
			t.Errorf("ParseStopRequire(%q) = %v (all %v), %v; want all %v, %v", c.name, v, v.All(), ok, c.all, c.ok)
		}
	}
	if v, ok := ParseNoiseDist("gumbel"); ok || v.String() != "gumbel" {
		t.Errorf("ParseNoiseDist(gumbel) = %v, %v; want the text kept and not ok", v, ok)
	}
	src := "model: {n: 20, columns: [{name: a, dist: grid}]}\nnoise: {dist: laplace}\n" +
		"contamination: [{kind: vertical, fraction: 0.1, shift: 5}]\n" +
		"estimators: [{method: ls}, {method: irls, psi: huber, stop: {require: all}}, {method: newton, psi: huber}]\n"
	st, err := Parse("names.yaml", []byte(src), Limits{})
	if err != nil {
		t.Fatal(err)
	}
	var norm struct {
		Model struct {
			Columns []struct {
				Distribution map[string]any `json:"distribution"`
			} `json:"columns"`
		} `json:"model"`
		Noise         map[string]any   `json:"noise"`
		Contamination []map[string]any `json:"contamination"`
		Estimators    []struct {
			Stop map[string]any `json:"stop"`
		} `json:"estimators"`
	}
	if err := json.Unmarshal(st.Normalised, &norm); err != nil {
		t.Fatal(err)
	}
	if got := norm.Model.Columns[0].Distribution["dist"]; got != "grid" {
		t.Errorf("column dist encodes as %v, want grid", got)
	}
	if got := norm.Noise["dist"]; got != "laplace" {
		t.Errorf("noise dist encodes as %v, want laplace", got)
	}
	if got := norm.Contamination[0]["kind"]; got != "vertical" {
		t.Errorf("contamination kind encodes as %v, want vertical", got)
	}
	want := []any{nil, "all", "any"}
	for i, e := range norm.Estimators {
		if got := e.Stop["require"]; got != want[i] {
			t.Errorf("estimator %d: require encodes as %v, want %v", i, got, want[i])
		}
	}
}
