package scenarios

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"testing"
)

// TestBadScenarios loads every file in testdata/scenarios/bad. Each begins
// with a comment "# want: LINE: FIELD: TEXT" naming the error it must
// produce: an *Error at that line (0: any) for that field whose message
// contains TEXT.
func TestBadScenarios(t *testing.T) {
	files, err := filepath.Glob("../testdata/scenarios/bad/*.yaml")
	if err != nil || len(files) == 0 {
		t.Fatalf("no bad scenarios found: %v", err)
	}
	for _, f := range files {
		t.Run(filepath.Base(f), func(t *testing.T) {
			data, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			first, _, _ := strings.Cut(string(data), "\n")
			spec, ok := strings.CutPrefix(first, "# want: ")
			if !ok {
				t.Fatalf("first line must be '# want: LINE: FIELD: TEXT', got %q", first)
			}
			parts := strings.SplitN(spec, ": ", 3)
			if len(parts) != 3 {
				t.Fatalf("malformed want line %q", first)
			}
			line, _ := strconv.Atoi(parts[0])
			field, text := parts[1], parts[2]

			_, err = Parse(f, data, Limits{})
			if err == nil {
				t.Fatal("loaded without error")
			}
			var all []*Error
			var list ErrorList
			var one *Error
			switch {
			case errors.As(err, &list):
				all = list
			case errors.As(err, &one):
				all = []*Error{one}
			default:
				t.Fatalf("error is %T, not *Error: %v", err, err)
			}
			for _, e := range all {
				if e.File != f {
					t.Errorf("error names file %q, want %q", e.File, f)
				}
				if (line == 0 || e.Line == line) && e.Field == field && strings.Contains(e.Msg, text) {
					return
				}
			}
			t.Errorf("no error at line %d, field %q containing %q; got:\n%v", line, field, text, err)
		})
	}
}

const minimal = `
model:
  n: 30
  intercept: 2
  columns:
    - {name: x, slope: 1.5, dist: uniform, min: 0, max: 10}
noise: {dist: normal, scale: 0.5}
estimators:
  - {method: ls}
  - {method: irls, psi: huber}
  - {label: b, method: newton, psi: bisquare, tuning: 4, scale: fixed:0.5, start: [0, 1], stop: {equations: 1e-9, max-iter: 50}}
`

func TestDefaultsAndBuild(t *testing.T) {
	st, err := Parse("bench.yaml", []byte(minimal), Limits{})
	if err != nil {
		t.Fatal(err)
	}
	s := st.Base
	if s.Name != "bench" || s.Seed != DefaultSeed || s.Replicates != DefaultReplicates {
		t.Errorf("defaults: name %q seed %d replicates %d", s.Name, s.Seed, s.Replicates)
	}
	if got := fmt.Sprint(s.CoefficientNames(), s.Truth()); got != "[intercept x] [2 1.5]" {
		t.Errorf("coefficients %s", got)
	}
	labels := s.estimatorLabels()
	if fmt.Sprint(labels) != "[ls irls-huber b]" || s.Reference != "ls" {
		t.Errorf("labels %v reference %q", labels, s.Reference)
	}
	if len(st.Cells) != 1 {
		t.Fatalf("%d cells, want 1", len(st.Cells))
	}
	e, err := s.Estimators[2].Build()
	if err != nil {
		t.Fatal(err)
	}
	if e.Settings.MaxIterations != 50 || e.Settings.EquationTol != 1e-9 || e.Scale.Value != 0.5 || len(e.Start) != 2 {
		t.Errorf("built estimator %+v", e)
	}
	if e.Settings.Rules != 2 { // equations only
		t.Errorf("rules %v, want equations only", e.Settings.Rules)
	}
	if len(st.Hash) != 64 {
		t.Errorf("hash %q", st.Hash)
	}
}

func TestSweepsCrossProduct(t *testing.T) {
	src := minimal + `
contamination:
  - {label: spikes, kind: vertical, fraction: 0.1, shift: 5}
vary:
  contamination.spikes.fraction: [0, 0.1, 0.2]
  model.n: [20, 40]
  estimators.b.tuning: [3, 5]
`
	st, err := Parse("s.yaml", []byte(src), Limits{})
	if err != nil {
		t.Fatal(err)
	}
	if len(st.Cells) != 12 {
		t.Fatalf("%d cells, want 12", len(st.Cells))
	}
	// The first sweep varies slowest.
	c := st.Cells[5]
	if describe(c.Settings) != "contamination.spikes.fraction=0.1, model.n=20, estimators.b.tuning=5" {
		t.Errorf("cell 5 settings: %s", describe(c.Settings))
	}
	if c.Scenario.Contamination[0].Fraction != 0.1 || c.Scenario.Model.N != 20 || c.Scenario.Estimators[2].Tuning[0] != 5 {
		t.Errorf("cell 5 scenario does not carry its settings")
	}
	if st.Base.Model.N != 30 {
		t.Errorf("sweep leaked into the base scenario")
	}
}

func TestHashIgnoresSeedAndReplicates(t *testing.T) {
	a, err := Parse("a.yaml", []byte("seed: 5\nreplicates: 10\n"+minimal), Limits{})
	if err != nil {
		t.Fatal(err)
	}
	b, err := Parse("a.yaml", []byte("seed: 6\nreplicates: 20\nabout: other words\n"+minimal), Limits{})
	if err != nil {
		t.Fatal(err)
	}
	c, err := Parse("a.yaml", []byte(strings.Replace(minimal, "scale: 0.5}", "scale: 0.6}", 1)), Limits{})
	if err != nil {
		t.Fatal(err)
	}
	if a.Hash != b.Hash {
		t.Error("seed, replicates or about changed the hash")
	}
	if a.Hash == c.Hash {
		t.Error("a change of the noise scale did not change the hash")
	}
}

func TestLimitsCanBeRaised(t *testing.T) {
	src := strings.Replace(minimal, "n: 30", "n: 2000000", 1)
	if _, err := Parse("big.yaml", []byte(src), Limits{}); err == nil {
		t.Fatal("n = 2e6 accepted under default limits")
	}
	if _, err := Parse("big.yaml", []byte(src), Limits{MaxN: 3_000_000, MaxWork: 1e15}); err != nil {
		t.Fatalf("raised limit still refused: %v", err)
	}
}

// FuzzParse: loading never panics or hangs, whatever the bytes; every
// failure is an *Error or an ErrorList.
func FuzzParse(f *testing.F) {
	f.Add([]byte(minimal))
	for _, name := range []string{"flow-meter", "clean-normal"} {
		data, _ := LibraryFile(name)
		f.Add(data)
	}
	files, _ := filepath.Glob("../testdata/scenarios/bad/*.yaml")
	for _, file := range files {
		data, _ := os.ReadFile(file)
		f.Add(data)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		st, err := Parse("fuzz.yaml", data, Limits{MaxCells: 50, MaxWork: 1e9})
		if err != nil {
			var one *Error
			if !errors.As(err, &one) {
				t.Fatalf("error of type %T: %v", err, err)
			}
			return
		}
		for _, c := range st.Cells {
			if _, err := NewGenerator(c.Scenario); err != nil {
				t.Fatalf("validated scenario does not build: %v", err)
			}
		}
	})
}

func TestCustomPsiScenario(t *testing.T) {
	src := `
model: {n: 40, columns: [{name: x, slope: 1}]}
noise: {dist: normal}
estimators:
  - {method: ls}
  - label: mine
    method: irls
    psi:
      expr: r / (1 + abs(r)/c)
      constants: {c: 1.4}
vary:
  estimators.mine.psi.constants.c: [1, 2]
`
	st, err := Parse("custom.yaml", []byte(src), Limits{})
	if err != nil {
		t.Fatal(err)
	}
	if len(st.Cells) != 2 {
		t.Fatalf("%d cells", len(st.Cells))
	}
	e, err := st.Cells[1].Scenario.Estimators[1].Build()
	if err != nil {
		t.Fatal(err)
	}
	if got := e.Psi.Psi(4); math.Abs(got-4/(1+4.0/2)) > 1e-12 {
		t.Errorf("psi(4) with c = 2: %v", got)
	}
	if st.Base.Estimators[1].Psi.Name() != "custom" {
		t.Errorf("psi name %q", st.Base.Estimators[1].Psi.Name())
	}
	bad := strings.Replace(src, "r / (1 + abs(r)/c)", "r / (1 + abs(r)/q)", 1)
	_, err = Parse("custom.yaml", []byte(bad), Limits{})
	if err == nil || !strings.Contains(err.Error(), "custom.yaml:9:") || strings.Contains(err.Error(), "in the cell") || !strings.Contains(err.Error(), `unknown name "q"`) {
		t.Errorf("bad expression error: %v", err)
	}
	// A psi that is not finite for some residuals is refused at load.
	nonFinite := strings.Replace(src, "r / (1 + abs(r)/c)", "r * sqrt(c - abs(r))", 1)
	_, err = Parse("custom.yaml", []byte(nonFinite), Limits{})
	if err == nil || !strings.Contains(err.Error(), "custom.yaml:9:") || !strings.Contains(err.Error(), "gives NaN") {
		t.Errorf("non-finite psi error: %v", err)
	}
}

// TestReferenceFixedAcrossCells: the default reference is chosen once for
// the study, not again in each cell from its swept methods.
func TestReferenceFixedAcrossCells(t *testing.T) {
	src := `
model: {n: 30, columns: [{name: x, slope: 1}]}
noise: {dist: normal}
estimators: [{label: a, method: lad}, {label: b, method: ls}]
vary:
  estimators.b.method: [ls, lad]
`
	st, err := Parse("ref.yaml", []byte(src), Limits{})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range st.Cells {
		if c.Scenario.Reference != "b" {
			t.Errorf("cell %d: reference %q, want the study's b", c.Index, c.Scenario.Reference)
		}
	}
}

// TestExpansionBounded: a long list of levels in a scenario with many
// cells is refused before the document is decoded once per cell (it would
// take minutes), with the figures.
func TestExpansionBounded(t *testing.T) {
	var levels, scales []string
	for i := 0; i < 150_000; i++ {
		levels = append(levels, strconv.Itoa(i%7))
	}
	for i := 1; i <= 100; i++ {
		scales = append(scales, strconv.Itoa(i))
	}
	src := "model: {n: 30, columns: [{name: x, dist: levels, levels: [" + strings.Join(levels, ", ") + "]}]}\n" +
		"noise: {dist: normal}\nestimators: [{method: ls}]\nvary:\n  noise.scale: [" + strings.Join(scales, ", ") + "]\n"
	_, err := Parse("long.yaml", []byte(src), Limits{})
	if err == nil || !strings.Contains(err.Error(), "100 cells") || !strings.Contains(err.Error(), "vary") {
		t.Errorf("error %v, want one refusing 100 cells of a long document", err)
	}
}

// TestWorkGrowsWithSquareOfCoefficients: the work limit counts a fit as
// n × p², so ten times the columns is a hundred times the work, not ten.
func TestWorkGrowsWithSquareOfCoefficients(t *testing.T) {
	study := func(columns int) string {
		var b strings.Builder
		b.WriteString("replicates: 1000\nmodel:\n  n: 100\n  intercept: none\n  columns:\n")
		for j := range columns {
			fmt.Fprintf(&b, "    - {name: x%d}\n", j)
		}
		b.WriteString("estimators: [{method: ls}]\n")
		return b.String()
	}
	// 1000 replicates × 100 × 2² = 4e5 units; with 20 columns 4e7 (2e6 if
	// the work were linear in the columns).
	lim := Limits{MaxWork: 1e7}
	if _, err := Parse("two.yaml", []byte(study(2)), lim); err != nil {
		t.Errorf("2 columns: %v", err)
	}
	_, err := Parse("twenty.yaml", []byte(study(20)), lim)
	if err == nil || !strings.Contains(err.Error(), "4e+07 units of work") || !strings.Contains(err.Error(), "coefficients²") {
		t.Errorf("20 columns under a limit of 1e7: %v, want a refusal at 4e+07 units", err)
	}
}

// gridScenario returns a scenario of 100 × 100 = 10,000 cells, the default
// cell limit.
func gridScenario() string {
	var a, b []string
	for i := range 100 {
		a = append(a, fmt.Sprint(0.1+0.01*float64(i)))
		b = append(b, fmt.Sprint(0.001*float64(i)))
	}
	return `replicates: 10
model:
  n: 40
  columns:
    - {name: volume, slope: 0.98, dist: levels, levels: [5, 10, 20, 50, 100]}
noise: {scale: 0.15, grows-with: {column: volume, rate: 0.01}}
estimators: [{label: ls, method: ls}, {label: huber, method: irls, psi: huber}]
vary:
  noise.scale: [` + strings.Join(a, ", ") + `]
  noise.grows-with.rate: [` + strings.Join(b, ", ") + `]
`
}

// TestTenThousandCellsMemory: a loaded study of 10,000 cells keeps its
// cells' scenarios, not each cell's copy of the YAML document. Before the
// cells shared the file's sweeps, this study held 378 MB after loading;
// now 10.5 MB (about 1 kB a cell). The bound, 40 MB, leaves room
// for changes to the scenario types without letting the copies back.
func TestTenThousandCellsMemory(t *testing.T) {
	if testing.Short() {
		t.Skip("loads 10,000 cells")
	}
	var before, after runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&before)
	st, err := Parse("grid.yaml", []byte(gridScenario()), Limits{})
	if err != nil {
		t.Fatal(err)
	}
	runtime.GC()
	runtime.ReadMemStats(&after)
	held := int64(after.HeapAlloc) - int64(before.HeapAlloc)
	t.Logf("%d cells hold %.1f MB", len(st.Cells), float64(held)/(1<<20))
	if len(st.Cells) != 10_000 {
		t.Fatalf("%d cells, want 10000", len(st.Cells))
	}
	if held > 40<<20 {
		t.Errorf("the loaded study holds %.0f MB; want under 40 MB", float64(held)/(1<<20))
	}
	runtime.KeepAlive(st)
}
