package report

import (
	"bytes"
	"encoding/xml"
	"errors"
	"image"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/rhomark/rhomark/results"
)

// The fixtures in testdata are results files written by
// `rhomark run FILE --replicates 16` (then compacted with json.Compact) for
// three small flow-meter bench scenarios; each file records its scenario in
// scenario.normalised. They are:
//
//	bench-faults     two fault sweeps (spikes, mislabelled runs), noise
//	                 growing with volume: no single swept fraction, no theory
//	bench-breakdown  a bad-leverage mass swept over fractions and two
//	                 positions, with a breakdown section (worst case over
//	                 the positions); huber hit its iteration limit in some fits
//	bench-tuning     Huber's k swept at two spike fractions, normal noise:
//	                 tuning theory present
func readFixture(t testing.TB, name string) *results.Results {
	t.Helper()
	f, err := os.Open(filepath.Join("..", "results", "testdata", name+".json"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	r, err := results.ReadJSON(f)
	if err != nil {
		t.Fatalf("%s: %v", name, err)
	}
	return r
}

// checkSVG checks that b is well-formed XML whose root element is <svg>.
func checkSVG(t *testing.T, what string, b []byte) {
	t.Helper()
	dec := xml.NewDecoder(bytes.NewReader(b))
	root := ""
	for {
		tok, err := dec.Token()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Errorf("%s: SVG does not parse: %v", what, err)
			return
		}
		if se, ok := tok.(xml.StartElement); ok && root == "" {
			root = se.Name.Local
		}
	}
	if root != "svg" {
		t.Errorf("%s: SVG root element %q, want svg", what, root)
	}
}

// checkPNG decodes b and checks its size and that it is not one flat
// colour (at least three distinct colours: background, ink, a series).
func checkPNG(t *testing.T, what string, b []byte) image.Image {
	t.Helper()
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Errorf("%s: PNG does not decode: %v", what, err)
		return nil
	}
	// 7 in wide at figureDPI; 4.5 in high with one row of panels, more
	// with several rows of facets.
	if got := img.Bounds().Size(); got.X != figurePixelsX || got.Y < figurePixelsY {
		t.Errorf("%s: PNG is %dx%d, want %d wide and at least %d high (7 × 4.5 in at %d dpi)", what, got.X, got.Y, figurePixelsX, figurePixelsY, figureDPI)
	}
	colours := map[[4]uint32]bool{}
	bd := img.Bounds()
	for y := bd.Min.Y; y < bd.Max.Y && len(colours) < 3; y += 3 {
		for x := bd.Min.X; x < bd.Max.X; x += 3 {
			r, g, b, a := img.At(x, y).RGBA()
			colours[[4]uint32{r, g, b, a}] = true
		}
	}
	if len(colours) < 3 {
		t.Errorf("%s: PNG has %d colours; it looks blank", what, len(colours))
	}
	return img
}

// hasColourNear reports whether img has a pixel within tol (per 8-bit
// channel) of the given colour.
func hasColourNear(img image.Image, want [3]uint8, tol int) bool {
	bd := img.Bounds()
	for y := bd.Min.Y; y < bd.Max.Y; y++ {
		for x := bd.Min.X; x < bd.Max.X; x++ {
			r, g, b, _ := img.At(x, y).RGBA()
			if abs(int(r>>8)-int(want[0])) <= tol && abs(int(g>>8)-int(want[1])) <= tol && abs(int(b>>8)-int(want[2])) <= tol {
				return true
			}
		}
	}
	return false
}

func abs(v int) int {
	if v < 0 {
		return -v
	}
	return v
}

func figureNames(figs []Figure) []string {
	names := make([]string, len(figs))
	for i, f := range figs {
		names[i] = f.Name
	}
	return names
}

func TestFiguresFromFixtures(t *testing.T) {
	cases := []struct {
		fixture string
		// want follows from what each fixture holds (see readFixture):
		// bias curves need a swept *.fraction (bench-faults sweeps two:
		// the first is the x axis, the other a facet); the tuning figures
		// need a swept tuning constant; failures need a failed fit; psi
		// functions, iterations and coverage come from the M-estimators.
		want    []string
		omitted []string
	}{
		{"bench-faults", []string{"bias-curves", "intercept-bias", "coverage", "iterations", "psi-functions"}, []string{"rmse-vs-tuning", "tuning-accuracy", "failures"}},
		{"bench-breakdown", []string{"bias-curves", "intercept-bias", "coverage", "failures", "iterations", "psi-functions"}, []string{"rmse-vs-tuning", "tuning-accuracy"}},
		{"bench-tuning", []string{"bias-curves", "intercept-bias", "rmse-vs-tuning", "efficiency-vs-tuning", "tuning-accuracy", "coverage", "iterations", "psi-functions"}, []string{"failures"}},
	}
	for _, c := range cases {
		t.Run(c.fixture, func(t *testing.T) {
			r := readFixture(t, c.fixture)
			figs, omitted, err := Figures(r)
			if err != nil {
				t.Fatal(err)
			}
			if got := figureNames(figs); !slices.Equal(got, c.want) {
				t.Fatalf("figures %v, want %v", got, c.want)
			}
			var left []string
			for _, o := range omitted {
				left = append(left, o.Name)
				if len(strings.Fields(o.Reason)) < 6 {
					t.Errorf("omission of %s: reason %q does not say why", o.Name, o.Reason)
				}
			}
			if !slices.Equal(left, c.omitted) {
				t.Errorf("omitted %v, want %v", left, c.omitted)
			}
			for _, f := range figs {
				what := c.fixture + "/" + f.Name
				if !strings.HasPrefix(f.Title, r.Scenario.Name+":") {
					t.Errorf("%s: title %q does not start with the scenario", what, f.Title)
				}
				if f.Question == "" {
					t.Errorf("%s: no question", what)
				}
				if len(strings.Fields(f.Caption)) < 8 {
					t.Errorf("%s: caption %q is too short to say what is drawn", what, f.Caption)
				}
				// Uncertainty is drawn as bars or bounds, never as
				// translucent fills that overlap into one colour.
				if bytes.Contains(f.SVG, []byte("opacity")) {
					t.Errorf("%s: the SVG has translucent fills", what)
				}
				checkSVG(t, what, f.SVG)
				checkPNG(t, what, f.PNG)
			}
		})
	}
}

// TestFixtureFacts guards the facts the expected figure lists rely on, so
// that a regenerated fixture that lost them fails here rather than
// silently changing what TestFiguresFromFixtures covers.
func TestFixtureFacts(t *testing.T) {
	failed := func(r *results.Results) int64 {
		var n int64
		for _, c := range r.Cells {
			for _, e := range c.Estimators {
				n += e.Convergence.Fits - e.Convergence.Converged
			}
		}
		return n
	}
	if r := readFixture(t, "bench-breakdown"); r.Breakdown == nil || len(r.Breakdown.WorstOver) == 0 || failed(r) == 0 {
		t.Error("bench-breakdown should have a breakdown section with worst-over paths and some failed fits")
	}
	if r := readFixture(t, "bench-tuning"); len(r.TuningTheory) == 0 || failed(r) != 0 {
		t.Error("bench-tuning should have tuning theory and no failed fit")
	}
	if r := readFixture(t, "bench-faults"); r.Breakdown != nil || len(r.TuningTheory) != 0 || failed(r) != 0 {
		t.Error("bench-faults should have neither breakdown, tuning theory nor failed fits")
	}
}

// TestFigureColours checks that the series colours reach the PNG: the bias
// curves of bench-breakdown draw four estimators, so the first four
// palette colours must each appear (anti-aliasing blends edges, so the test
// allows 6 levels per channel).
func TestFigureColours(t *testing.T) {
	figs, _, err := Figures(readFixture(t, "bench-breakdown"))
	if err != nil {
		t.Fatal(err)
	}
	img := checkPNG(t, "bias-curves", figs[0].PNG)
	if img == nil {
		t.FailNow()
	}
	for i := range 4 {
		c := seriesColours()[i]
		if !hasColourNear(img, [3]uint8{c.R, c.G, c.B}, 6) {
			t.Errorf("series %d colour (%s) not found in the bias-curve figure", i, seriesColourNames()[i])
		}
	}
}

// handResults builds a small results.Results by hand: two cells that differ in one
// swept fraction (and optionally a second sweep), with ls and a Huber
// M-estimator. Values are invented for the test.
func handResults(extraSweep bool) *results.Results {
	mk := func(frac string, bias float64, extra string) results.Cell {
		settings := []results.Setting{{Path: "contamination.spikes.fraction", Value: frac}}
		if extraSweep {
			settings = append(settings, results.Setting{Path: "model.n", Value: extra})
		}
		coef := func(b float64) []results.Coefficient {
			return []results.Coefficient{
				{Name: "intercept", Bias: results.Measure{Value: results.Num(b), MCSE: 0.01}, EmpSE: results.Measure{Value: 0.1, MCSE: 0.005}, RelEff: results.Measure{Value: 1, MCSE: 0}, Intervals: 100, Coverage: results.Measure{Value: 0.94, MCSE: 0.02}},
				{Name: "volume", Bias: results.Measure{Value: results.Num(b / 10), MCSE: 0.001}, EmpSE: results.Measure{Value: 0.01, MCSE: 0.0005}, RelEff: results.Measure{Value: 1, MCSE: 0}, Intervals: 100, Coverage: results.Measure{Value: 0.96, MCSE: 0.02}},
			}
		}
		return results.Cell{Settings: settings, Replicates: 100, Estimators: []results.Estimator{
			{Label: "ls", Method: "ls", TheoryEfficiency: results.Num(math.NaN()), Coefficients: coef(bias), SlopeBias: results.Measure{Value: results.Num(bias / 10), MCSE: 0.001},
				Convergence: results.Convergence{Fits: 100, Converged: 100, Statuses: []results.StatusCount{{Status: "solved", Converged: true, Count: 100}}, IterationHistogram: []int64{100}}},
			{Label: "huber", Method: "irls", Psi: "huber", Tuning: []float64{1.345}, TheoryEfficiency: results.Num(math.NaN()), Coefficients: coef(bias / 4), SlopeBias: results.Measure{Value: results.Num(bias / 40), MCSE: 0.001},
				Convergence: results.Convergence{Fits: 100, Converged: 100, Statuses: []results.StatusCount{{Status: "converged-change", Converged: true, Count: 100}}, IterationHistogram: []int64{0, 0, 0, 10, 40, 30, 20},
					MeanIterations: results.Measure{Value: 4.6, MCSE: 0.1}, MaxIterations: 6}},
		}}
	}
	r := &results.Results{Schema: results.SchemaVersion, Scenario: results.ScenarioInfo{Name: "bench-hand"}, Seed: 1, Replicates: 100, Complete: true, Reference: "ls"}
	r.Cells = []results.Cell{mk("0", 0.01, "20"), mk("0.1", 0.5, "20"), mk("0.2", 1.2, "20")}
	if extraSweep {
		r.Cells = append(r.Cells, mk("0", 0.02, "40"), mk("0.1", 0.6, "40"), mk("0.2", 1.3, "40"))
	}
	for i := range r.Cells {
		r.Cells[i].Index = i
	}
	return r
}

func TestFiguresFromHandResults(t *testing.T) {
	iterLimit := func(r *results.Results) {
		cv := &r.Cells[1].Estimators[1].Convergence
		cv.Converged = 97
		cv.Statuses = []results.StatusCount{{Status: "converged-change", Converged: true, Count: 97}, {Status: "iteration-limit", Count: 3}}
	}
	twoFractions := func(r *results.Results) {
		for i := range r.Cells {
			r.Cells[i].Settings = append(r.Cells[i].Settings, results.Setting{Path: "contamination.mislabelled.fraction", Value: "0"})
		}
	}
	noIterations := func(r *results.Results) {
		for i := range r.Cells {
			r.Cells[i].Estimators[1].Convergence.IterationHistogram = []int64{100}
			r.Cells[i].Estimators[1].Convergence.MaxIterations = 0
		}
	}
	noIntervals := func(r *results.Results) {
		for i := range r.Cells {
			for j := range r.Cells[i].Estimators {
				for k := range r.Cells[i].Estimators[j].Coefficients {
					r.Cells[i].Estimators[j].Coefficients[k].Intervals = 0
				}
			}
		}
	}

	tuning := func(r *results.Results) {
		// A swept Huber constant, with the asymptotic curve over it.
		for i := range r.Cells {
			r.Cells[i].Settings = append(r.Cells[i].Settings, results.Setting{Path: "estimators.huber.tuning", Value: []string{"1", "1.5", "2"}[i%3]})
		}
		withMeasures(r) // the RMSE figure draws the verdict's score
		r.TuningTheory = []results.TuningCurve{{Path: "estimators.huber.tuning", Estimator: "huber", Constants: []float64{1, 1.5, 2}, Efficiency: []results.Num{0.9, 0.94, 0.95}}}
	}
	noFraction := func(r *results.Results) {
		for i := range r.Cells {
			r.Cells[i].Settings = []results.Setting{{Path: "model.n", Value: strconv.Itoa(10 * (i + 1))}}
		}
	}
	cases := []struct {
		name        string
		extraSweep  bool
		edit        func(*results.Results)
		want        []string
		captionHas  map[string]string
		captionLack map[string]string
		omitted     map[string]string
		panels      map[string][]string // panel titles each figure must draw
	}{
		{name: "one fraction swept", want: []string{"bias-curves", "intercept-bias", "coverage", "iterations"},
			captionLack: map[string]string{"bias-curves": "first values"},
			omitted:     map[string]string{"failures": "none", "rmse-vs-tuning": "no estimator's constant is swept", "tuning-accuracy": "no estimator's tuning constant is swept"}},
		{name: "fraction and another sweep", extraSweep: true, want: []string{"bias-curves", "intercept-bias", "coverage", "iterations"},
			captionHas: map[string]string{"bias-curves": "one panel per combination of the other sweeps"},
			panels:     map[string][]string{"bias-curves": {"model.n = 20", "model.n = 40"}, "intercept-bias": {"model.n = 20", "model.n = 40"}}},
		{name: "two swept fractions", edit: twoFractions, want: []string{"bias-curves", "intercept-bias", "coverage", "iterations"}},
		{name: "no fraction swept", edit: noFraction, want: []string{"coefficient-bias", "coverage", "iterations"},
			captionHas: map[string]string{"coefficient-bias": "intercept included"}},
		{name: "failed fits", edit: iterLimit, want: []string{"bias-curves", "intercept-bias", "coverage", "failures", "iterations"},
			captionHas: map[string]string{"failures": "No failed fit in any cell (not drawn): ls"}},
		{name: "nothing iterates", edit: noIterations, want: []string{"bias-curves", "intercept-bias", "coverage"},
			omitted: map[string]string{"iterations": "no estimator in this run iterates"}},
		{name: "no intervals", edit: noIntervals, want: []string{"bias-curves", "intercept-bias", "iterations"},
			omitted: map[string]string{"coverage": "no estimator in this run gives confidence intervals"}},
		{name: "tuning swept", edit: tuning, want: []string{"bias-curves", "intercept-bias", "rmse-vs-tuning", "efficiency-vs-tuning", "tuning-accuracy", "coverage", "iterations"},
			captionHas: map[string]string{"efficiency-vs-tuning": "asymptotic efficiency", "rmse-vs-tuning": "estimators.huber.tuning", "tuning-accuracy": "estimators.huber.tuning"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := handResults(c.extraSweep)
			if c.edit != nil {
				c.edit(r)
			}
			figs, omitted, err := Figures(r)
			if err != nil {
				t.Fatal(err)
			}
			if got := figureNames(figs); !slices.Equal(got, c.want) {
				t.Fatalf("figures %v, want %v", got, c.want)
			}
			for name, want := range c.omitted {
				found := false
				for _, o := range omitted {
					found = found || (o.Name == name && strings.Contains(o.Reason, want))
				}
				if !found {
					t.Errorf("no note that %s is left out saying %q (notes %v)", name, want, omitted)
				}
			}
			for _, f := range figs {
				if s, ok := c.captionHas[f.Name]; ok && !strings.Contains(f.Caption+" "+f.Title, s) {
					t.Errorf("%s: caption %q lacks %q", f.Name, f.Caption, s)
				}
				for _, title := range c.panels[f.Name] {
					if !bytes.Contains(f.SVG, []byte(">"+title+"<")) {
						t.Errorf("%s: no panel titled %q: every value of the other sweeps must be drawn", f.Name, title)
					}
				}
				if s, ok := c.captionLack[f.Name]; ok && strings.Contains(f.Caption, s) {
					t.Errorf("%s: caption %q should not say %q", f.Name, f.Caption, s)
				}
			}
		})
	}
}

func TestFiguresOfEmptyOrOddResults(t *testing.T) {
	if _, _, err := Figures(nil); err == nil {
		t.Error("Figures(nil) gave no error")
	}
	figs, omitted, err := Figures(&results.Results{Scenario: results.ScenarioInfo{Name: "empty"}})
	if err != nil || len(figs) != 0 {
		t.Errorf("empty results: %d figures, error %v; want none and no error", len(figs), err)
	}
	for _, o := range omitted {
		if o.Name != "rmse-vs-tuning" && o.Name != "tuning-accuracy" {
			t.Errorf("empty results: note on %s: %s", o.Name, o.Reason)
		}
	}
	// Values that are not numbers must be left out, not crash the drawing.
	r := handResults(false)
	nan := results.Num(math.NaN())
	r.Cells[1].Estimators[0].SlopeBias = results.Measure{Value: nan, MCSE: nan}
	r.Cells[0].Estimators[1].Coefficients[0].Coverage = results.Measure{Value: 0.9, MCSE: nan}
	r.Functions = []results.FunctionCurve{{Estimator: "huber", Psi: "huber 1.345", U: []float64{0, 1, 2, math.NaN()}, PsiValues: []results.Num{0, 1, 1.345, 1.345}, Rho: []results.Num{0, 0.5, 1.7, 3}, Weight: []results.Num{1, 1, 0.67, 0.5}}}
	figs, _, err = Figures(r)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := figureNames(figs), []string{"bias-curves", "intercept-bias", "coverage", "iterations", "psi-functions"}; !slices.Equal(got, want) {
		t.Errorf("figures %v, want %v", got, want)
	}
}

func TestEfficiencyCurveFigure(t *testing.T) {
	// Invented, smooth test values (not a real psi's efficiency).
	var k, eff, ges []float64
	for i := range 30 {
		c := 0.5 + 0.1*float64(i)
		k = append(k, c)
		eff = append(eff, 1-0.5*math.Exp(-c))
		ges = append(ges, 1+c/2)
	}
	cases := []struct {
		name    string
		ges     []float64
		wantErr bool
	}{
		{"efficiency only", nil, false},
		{"with sensitivity", ges, false},
		{"sensitivity wrong length", ges[:3], true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			f, err := EfficiencyCurveFigure("flow-meter bench: Huber's k", "Huber's k", k, eff, c.ges)
			if (err != nil) != c.wantErr {
				t.Fatalf("error %v, want error %v", err, c.wantErr)
			}
			if err != nil {
				return
			}
			if f.Name != "efficiency-curve" || f.Title != "flow-meter bench: Huber's k" {
				t.Errorf("name %q, title %q", f.Name, f.Title)
			}
			if (c.ges != nil) != strings.Contains(f.Caption, "gross-error sensitivity") {
				t.Errorf("caption %q does not match the panels drawn", f.Caption)
			}
			checkSVG(t, c.name, f.SVG)
			checkPNG(t, c.name, f.PNG)
		})
	}
	if _, err := EfficiencyCurveFigure("t", "k", []float64{1, 2}, []float64{0.9}, nil); err == nil {
		t.Error("mismatched lengths accepted")
	}
	if _, err := EfficiencyCurveFigure("t", "k", []float64{1, 2}, []float64{0.9, math.NaN()}, nil); err == nil {
		t.Error("a curve with one finite point accepted")
	}
}

func TestSaveFigures(t *testing.T) {
	figs, _, err := Figures(readFixture(t, "bench-tuning"))
	if err != nil {
		t.Fatal(err)
	}
	dir := filepath.Join(t.TempDir(), "out")
	paths, err := SaveFigures(dir, "bench-tuning", figs[:2])
	if err != nil {
		t.Fatal(err)
	}
	want := []string{"bench-tuning-bias-curves.svg", "bench-tuning-bias-curves.png", "bench-tuning-intercept-bias.svg", "bench-tuning-intercept-bias.png"}
	if len(paths) != len(want) {
		t.Fatalf("paths %v, want %v", paths, want)
	}
	for i, p := range paths {
		if filepath.Base(p) != want[i] {
			t.Errorf("path %d is %s, want %s", i, filepath.Base(p), want[i])
		}
		got, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		src := figs[i/2].SVG
		if i%2 == 1 {
			src = figs[i/2].PNG
		}
		if !bytes.Equal(got, src) {
			t.Errorf("%s does not hold the figure", p)
		}
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != len(want) {
		t.Errorf("%d files in the directory, want %d (temporary files left?)", len(entries), len(want))
	}
	for _, bad := range []string{"../x", ".hidden", ""} {
		if _, err := SaveFigures(dir, bad, figs); err == nil {
			t.Errorf("name %q accepted", bad)
		}
	}
	if _, err := SaveFigures(dir, "ok", []Figure{{Name: "a/b", SVG: []byte("x"), PNG: []byte("x")}}); err == nil {
		t.Error("figure name with a slash accepted")
	}
}

// TestNiceTicks: labels fall on round steps, about five of them, with the
// same number of decimals, and never read "-0".
func TestNiceTicks(t *testing.T) {
	cases := []struct {
		lo, hi float64
		want   []string
	}{
		{0, 26.3, []string{"0", "5", "10", "15", "20", "25"}},
		{0.55, 1.12, []string{"0.6", "0.7", "0.8", "0.9", "1.0", "1.1"}},
		{-0.03, 0.02, []string{"-0.03", "-0.02", "-0.01", "0.00", "0.01", "0.02"}},
		{0, 1, []string{"0.0", "0.2", "0.4", "0.6", "0.8", "1.0"}},
		{0.7, 3.1, []string{"1.0", "1.5", "2.0", "2.5", "3.0"}},
	}
	for _, c := range cases {
		var got []string
		for _, tk := range (niceTicks{}).Ticks(c.lo, c.hi) {
			if tk.Label != "" {
				got = append(got, tk.Label)
			}
		}
		if !slices.Equal(got, c.want) {
			t.Errorf("ticks over [%g, %g]: %q, want %q", c.lo, c.hi, got, c.want)
		}
	}
}

// TestCustomPsiConstantsReachFigures: a swept constant of a psi of the
// user's own is a tuning axis, and the psi figure names the constant it
// is drawn at.
func TestCustomPsiConstantsReachFigures(t *testing.T) {
	r := handResults(false)
	withMeasures(r)
	const path = "estimators.huber.psi.constants.c"
	for i := range r.Cells {
		e := &r.Cells[i].Estimators[1]
		e.Psi, e.Tuning = "custom", nil
		r.Cells[i].Settings = append(r.Cells[i].Settings, results.Setting{Path: path, Value: []string{"1", "1.4", "2"}[i]})
	}
	r.Functions = []results.FunctionCurve{{Estimator: "huber", Psi: "custom", U: []float64{0, 1, 2}, PsiValues: []results.Num{0, 0.5, 0.67}, Rho: []results.Num{0, 0.3, 0.9}, Weight: []results.Num{1, 0.5, 0.33}}}
	figs, _, err := Figures(r)
	if err != nil {
		t.Fatal(err)
	}
	found := map[string]bool{}
	for _, f := range figs {
		found[f.Name] = true
		switch f.Name {
		case "rmse-vs-tuning", "efficiency-vs-tuning":
			if !bytes.Contains(f.SVG, []byte("huber psi constant c")) {
				t.Errorf("%s: the axis does not name the custom constant", f.Name)
			}
		case "tuning-accuracy":
			if !bytes.Contains(f.SVG, []byte(">psi constant c<")) {
				t.Errorf("%s: the axis does not name the custom constant", f.Name)
			}
		case "psi-functions":
			if !bytes.Contains(f.SVG, []byte("huber (irls · custom c = 1)")) {
				t.Errorf("psi-functions: the legend does not give the constant drawn")
			}
		}
	}
	for _, want := range []string{"rmse-vs-tuning", "efficiency-vs-tuning", "tuning-accuracy", "psi-functions"} {
		if !found[want] {
			t.Errorf("no %s figure (got %v)", want, figureNames(figs))
		}
	}
}

// TestTuningAccuracyFigure checks the figure of bias, SE and RMSE per
// coefficient against a swept tuning constant: a row of panels (bias, SE,
// RMSE) for every coefficient of the tuned estimator, the intercept
// included, a legend entry per level with the clean one marked, the
// recommended and target constants named, one figure per tuning study, and
// a note saying why when it cannot be drawn.
func TestTuningAccuracyFigure(t *testing.T) {
	// tuned applies f to every cell's settings value of path.
	tuned := func(path string, f func(string) string) func(*results.Results) {
		return func(r *results.Results) {
			for i := range r.Cells {
				for j := range r.Cells[i].Settings {
					if s := &r.Cells[i].Settings[j]; s.Path == path {
						s.Value = f(s.Value)
					}
				}
			}
		}
	}
	// secondTuned adds a second tuned estimator, huber2, a copy of huber
	// with its own swept constant.
	secondTuned := func(r *results.Results) {
		for i := range r.Cells {
			c := &r.Cells[i]
			v, _ := settingValue(c.Settings, "estimators.huber.tuning")
			c.Settings = append(c.Settings, results.Setting{Path: "estimators.huber2.tuning", Value: v})
			for _, e := range c.Estimators {
				if e.Label == "huber" {
					e.Label = "huber2"
					e.Coefficients = slices.Clone(e.Coefficients)
					c.Estimators = append(c.Estimators, e)
					break
				}
			}
		}
	}
	// manyCoefficients gives huber eight coefficients in every cell.
	manyCoefficients := func(r *results.Results) {
		for i := range r.Cells {
			for j := range r.Cells[i].Estimators {
				e := &r.Cells[i].Estimators[j]
				if e.Label != "huber" {
					continue
				}
				ks := slices.Clone(e.Coefficients)
				for n := len(ks); n < 8; n++ {
					k := ks[1]
					k.Name = "extra" + strconv.Itoa(n)
					ks = append(ks, k)
				}
				e.Coefficients = ks
			}
		}
	}
	cases := []struct {
		name    string
		fixture string
		edit    func(*results.Results)
		figures []string // the tuning-accuracy figures drawn
		rows    int      // coefficients drawn per figure (0: all)
		levels  []string // the legend entry of each level
		omitted string   // what the note on a figure left out says
		caption string   // what every figure's caption says
	}{
		{name: "one study", fixture: "bench-tuning", figures: []string{"tuning-accuracy"},
			levels: []string{"spikes.fraction = 0 (clean)", "spikes.fraction = 0.1"}, caption: "intercept included"},
		{name: "two studies", fixture: "bench-tuning", edit: secondTuned, figures: []string{"tuning-accuracy-huber", "tuning-accuracy-huber2"},
			levels: []string{"spikes.fraction = 0 (clean)", "spikes.fraction = 0.1"}},
		{name: "more coefficients than rows", fixture: "bench-tuning", edit: manyCoefficients, figures: []string{"tuning-accuracy"}, rows: maxTuningRows,
			levels: []string{"spikes.fraction = 0 (clean)", "spikes.fraction = 0.1"}, caption: "Only the first 6 of 8 coefficients"},
		{name: "constants are not numbers", fixture: "bench-tuning", edit: tuned("estimators.huber.tuning", func(v string) string { return "k" + v }),
			omitted: "not numbers"},
		{name: "no tuning sweep", fixture: "bench-faults", omitted: "no estimator's tuning constant is swept"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := readFixture(t, c.fixture)
			if c.edit != nil {
				c.edit(r)
			}
			figs, omitted, err := Figures(r)
			if err != nil {
				t.Fatal(err)
			}
			var got []Figure
			for _, f := range figs {
				if strings.HasPrefix(f.Name, "tuning-accuracy") {
					got = append(got, f)
				}
			}
			if !slices.Equal(figureNames(got), c.figures) {
				t.Fatalf("tuning-accuracy figures %v, want %v", figureNames(got), c.figures)
			}
			var notes []string
			for _, o := range omitted {
				if strings.HasPrefix(o.Name, "tuning-accuracy") {
					notes = append(notes, o.Reason)
					if o.Question != QuestionAccuracy {
						t.Errorf("note on %s filed under %q, want %q", o.Name, o.Question, QuestionAccuracy)
					}
				}
			}
			if c.omitted == "" && len(notes) > 0 {
				t.Errorf("unexpected notes %q", notes)
			}
			if c.omitted != "" && (len(notes) != 1 || !strings.Contains(notes[0], c.omitted)) {
				t.Errorf("notes %q, want one saying %q", notes, c.omitted)
			}
			rec := results.RecommendationOf(r)
			for _, f := range got {
				label := strings.TrimPrefix(strings.TrimPrefix(f.Name, "tuning-accuracy"), "-")
				if label == "" {
					label = "huber"
				}
				i := slices.IndexFunc(rec.Studies, func(s results.TuningStudy) bool { return s.Estimator == label })
				if i < 0 {
					t.Fatalf("%s: no tuning study of %s", f.Name, label)
				}
				ts := rec.Studies[i]
				if f.Question != QuestionAccuracy {
					t.Errorf("%s: question %q, want %q", f.Name, f.Question, QuestionAccuracy)
				}
				if !strings.Contains(f.Title, label) || !strings.Contains(f.Caption, c.caption) {
					t.Errorf("%s: title %q or caption %q lacks the estimator or %q", f.Name, f.Title, f.Caption, c.caption)
				}
				// Every coefficient of the tuned estimator, the intercept
				// first, gets a row of bias, SE and RMSE panels.
				e := r.Cells[0].Estimators[slices.IndexFunc(r.Cells[0].Estimators, func(e results.Estimator) bool { return e.Label == label })]
				var coefs []string
				for _, k := range e.Coefficients {
					coefs = append(coefs, k.Name)
				}
				if len(coefs) < 2 || coefs[0] != "intercept" {
					t.Fatalf("%s: fixture coefficients %v, want the intercept and a slope", f.Name, coefs)
				}
				rows := len(coefs)
				if c.rows > 0 {
					rows = c.rows
				}
				for j, name := range coefs {
					for _, m := range []string{"bias", "SE", "RMSE"} {
						has := bytes.Contains(f.SVG, []byte(">"+name+": "+m+"<"))
						if has != (j < rows) {
							t.Errorf("%s: panel %q drawn %v, want %v", f.Name, name+": "+m, has, j < rows)
						}
					}
				}
				for _, l := range c.levels {
					if !bytes.Contains(f.SVG, []byte(">"+l+"<")) {
						t.Errorf("%s: no legend entry for the level %q", f.Name, l)
					}
				}
				if len(ts.Levels) != len(c.levels) {
					t.Errorf("%s: %d levels in the study, want %d", f.Name, len(ts.Levels), len(c.levels))
				}
				// The RMSE drawn is the cell's: √MSE where the file
				// predates the RMSE (the fixtures do), never a zero.
				for _, tc := range ts.Constants {
					for _, pt := range tc.Points {
						for _, k := range tuningCoefficients(r, pt, label) {
							cell := r.Cells[slices.IndexFunc(r.Cells, func(c results.Cell) bool { return c.Index == pt.Cell })]
							ce := cell.Estimators[slices.IndexFunc(cell.Estimators, func(e results.Estimator) bool { return e.Label == label })]
							ck, _ := coefficientNamed(ce, k.Name)
							want := math.Sqrt(float64(ck.MSE.Value))
							if ck.RMSE.Value != 0 {
								want = float64(ck.RMSE.Value)
							}
							if got := float64(k.RMSE.Value); !(got > 0) || math.Abs(got-want) > 1e-12*want {
								t.Errorf("%s: cell %d, %s: RMSE drawn %g, want %g", f.Name, pt.Cell, k.Name, got, want)
							}
						}
					}
				}
				if !bytes.Contains(f.SVG, []byte(">no bias<")) {
					t.Errorf("%s: the zero line of the bias panels has no legend entry", f.Name)
				}
				// The recommended and the target constant are marked
				// and named (the fixture's study has both).
				if ts.RecommendedValue == "" || ts.Target.Value == "" {
					t.Fatalf("%s: the fixture's study lost its recommendation %q or target %q", f.Name, ts.RecommendedValue, ts.Target.Value)
				}
				for _, want := range []string{ts.RecommendedValue, ts.Target.Value} {
					if !bytes.Contains(f.SVG, []byte(": "+want+"<")) {
						t.Errorf("%s: the legend does not name the marked constant %s", f.Name, want)
					}
				}
				if bytes.Contains(f.SVG, []byte("opacity")) {
					t.Errorf("%s: the SVG has translucent fills", f.Name)
				}
				checkSVG(t, f.Name, f.SVG)
				img := checkPNG(t, f.Name, f.PNG)
				if img == nil {
					continue
				}
				// One line per level, in the level's palette colour.
				for l := range c.levels {
					col := styleOf(l).colour
					if !hasColourNear(img, [3]uint8{col.R, col.G, col.B}, 6) {
						t.Errorf("%s: the colour of level %d (%s) is not in the PNG", f.Name, l, styleOf(l).colourName)
					}
				}
			}
		})
	}
}
