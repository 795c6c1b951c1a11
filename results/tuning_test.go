package results

import (
	"encoding/json"
	"math"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// synthLevel is one level of a synthetic tuning sweep: per constant the
// paired MSE ratio against the reference on the intercept (the slope's is
// 1 everywhere, so the intercept is always the worst coefficient), the
// simulated and asymptotic efficiency, and the failed fits out of 1000.
type synthLevel struct {
	fraction string
	ratio    []float64
	relEff   []float64
	theory   []float64
	failed   []int64
	heavy    bool // the errors are heavy-tailed: no meaningful efficiency
}

// synthTuning builds results of a sweep of huber's tuning over constants
// (as written) crossed with the levels, every MSE ratio with MCSE rel·R
// and every efficiency with MCSE effMCSE.
func synthTuning(constants []string, levels []synthLevel, rel, effMCSE float64) *Results {
	nan := Num(math.NaN())
	r := &Results{Reference: "ls", Replicates: 1000, Complete: true,
		Scenario: ScenarioInfo{Name: "synthetic", Normalised: json.RawMessage(`{"contamination":[{"label":"spikes","fraction":0}]}`)}}
	coef := func(name string, ratio, relEff float64) Coefficient {
		return Coefficient{Name: name, Used: 1000, Paired: 1000,
			Bias:     Measure{Value: 0, MCSE: 0.01},
			EmpSE:    Measure{Value: 0.1, MCSE: 0.002},
			RMSE:     Measure{Value: Num(0.1 / math.Sqrt(ratio)), MCSE: 0.002},
			MSERatio: Measure{Value: Num(ratio), MCSE: Num(rel * ratio)},
			RelEff:   Measure{Value: Num(relEff), MCSE: Num(effMCSE)}}
	}
	conv := func(failed int64) Convergence { return Convergence{Fits: 1000, Converged: 1000 - failed} }
	for _, lv := range levels {
		for k, c := range constants {
			ls := Estimator{Label: "ls", Method: "ls", TheoryEfficiency: nan, Convergence: conv(0),
				Coefficients: []Coefficient{coef("intercept", 1, 1), coef("x", 1, 1)}}
			ls.Coefficients[0].MSERatio.MCSE, ls.Coefficients[1].MSERatio.MCSE = nan, nan
			th := nan
			if lv.theory != nil {
				th = Num(lv.theory[k])
			}
			eff, failed := 1.0, int64(0)
			if lv.relEff != nil {
				eff = lv.relEff[k]
			}
			if lv.failed != nil {
				failed = lv.failed[k]
			}
			hu := Estimator{Label: "huber", Method: "irls", Psi: "huber", TheoryEfficiency: th, Convergence: conv(failed),
				Coefficients: []Coefficient{coef("intercept", lv.ratio[k], eff), coef("x", 1, eff)}}
			for j := range hu.Coefficients {
				hu.Coefficients[j].RelEffHeavyTails = lv.heavy
			}
			r.Cells = append(r.Cells, Cell{Index: len(r.Cells), Replicates: 1000,
				Settings: []Setting{
					{Path: "contamination.spikes.fraction", Value: lv.fraction},
					{Path: "estimators.huber.tuning", Value: c},
				},
				Estimators: []Estimator{ls, hu}})
		}
	}
	return r
}

// TestRecommend checks the tuning study's answers on synthetic results
// whose scores follow from the ratios by hand: the score of constant k on
// the intercept at a level is √(R_best/R_k), R the MSE ratio against ls.
func TestRecommend(t *testing.T) {
	ks := []string{"1", "2", "3", "4"}
	clean := synthLevel{fraction: "0",
		// Scores √(0.9801/R): 1.1, 1.0421, 1.0102, 1 (k = 4 best).
		ratio:  []float64{0.81, 0.9025, 0.9604, 0.9801},
		relEff: []float64{0.80, 0.90, 0.94, 0.99},
		theory: []float64{0.80, 0.90, 0.94996, 0.99}}
	dirty := synthLevel{fraction: "0.1",
		// Scores √(4/R): 1, 1.0526, 1.1765, 1.4286 (k = 1 best).
		ratio: []float64{4, 3.61, 2.89, 1.96}}
	flat := synthLevel{fraction: "0.1", ratio: []float64{2, 2, 2, 2}}
	rising := synthLevel{fraction: "0.1", ratio: []float64{4, 1, 0.5, 0.25}} // scores 1, 2, 2.83, 4
	cleanRising := clean
	cleanRising.ratio = []float64{1, 1, 1, 1}
	noTheory := clean
	noTheory.theory = nil
	failing := dirty
	failing.failed = []int64{0, 100, 0, 0}
	heavy := noTheory
	heavy.heavy = true
	cases := []struct {
		name    string
		levels  []synthLevel
		rel     float64 // relative MCSE of every MSE ratio
		effMCSE float64
		target  float64
		best    string
		score   float64 // the recommended constant's worst case
		rng     []Num
		end     GridEnd
		basis   EfficiencyBasis
		pick    string // "" for none
		note    string // in the notes, or the target note
	}{
		// Worst cases 1.1, 1.0526, 1.1765, 1.4286: k = 2. At a 1% MCSE of
		// each ratio a score's MCSE is q·½·√2·1% ≈ 0.0074 at k = 2, so
		// k = 1, 0.047 above, is outside 2·√(0.0078² + 0.0074²) = 0.021.
		{"interior, tight", []synthLevel{clean, dirty}, 0.01, 0.01, 0.95, "2", 1.0526, []Num{2}, Inside, Asymptotic, "3", ""},
		// At 5% the threshold is 2·√(0.0389² + 0.0372²) = 0.108 for k = 1
		// (inside, 0.047 above) and 0.112 for k = 3 (outside, 0.124 above).
		{"interior, loose", []synthLevel{clean, dirty}, 0.05, 0.01, 0.95, "2", 1.0526, []Num{1, 2}, Inside, Asymptotic, "3", ""},
		// Contamination that hurts no constant more than another: the clean
		// level decides and the largest constant wins.
		{"best at the high end", []synthLevel{clean, flat}, 0.01, 0.01, 0.95, "4", 1, []Num{3, 4}, HighEnd, Asymptotic, "3", "extend the grid upwards"},
		{"best at the low end", []synthLevel{cleanRising, rising}, 0.01, 0.01, 0.95, "1", 1, []Num{1}, LowEnd, Asymptotic, "3", "extend the grid downwards"},
		{"target 0.9", []synthLevel{clean, dirty}, 0.01, 0.01, 0.9, "2", 1.0526, []Num{2}, Inside, Asymptotic, "2", ""},
		{"target unmet", []synthLevel{clean, dirty}, 0.01, 0.01, 0.999, "2", 1.0526, []Num{2}, Inside, Asymptotic, "", "extend the grid upwards"},
		{"target met by the smallest", []synthLevel{clean, dirty}, 0.01, 0.01, 0.5, "2", 1.0526, []Num{2}, Inside, Asymptotic, "1", "extend the grid downwards"},
		// Without theory: 0.94 + 2·0.01 ≥ 0.95, so k = 3 meets the target
		// within 2 MCSE; with an MCSE of 0.001 it does not, and k = 4 does.
		{"simulated, within 2 MCSE", []synthLevel{noTheory, dirty}, 0.01, 0.01, 0.95, "2", 1.0526, []Num{2}, Inside, Simulated, "3", ""},
		{"simulated, tight", []synthLevel{noTheory, dirty}, 0.01, 0.001, 0.95, "2", 1.0526, []Num{2}, Inside, Simulated, "4", ""},
		// 10% failed fits at k = 2 exclude it: k = 1 (worst 1.1) is next.
		{"excluded", []synthLevel{clean, failing}, 0.01, 0.01, 0.95, "1", 1.1, []Num{1}, LowEnd, Asymptotic, "3", "extend the grid downwards"},
		// Heavy-tailed errors on the clean level and no theory: no
		// efficiency to pick by.
		{"heavy tails", []synthLevel{heavy, dirty}, 0.01, 0.01, 0.95, "2", 1.0526, []Num{2}, Inside, Simulated, "", "no meaningful efficiency"},
		{"no clean level", []synthLevel{dirty}, 0.01, 0.01, 0.95, "1", 1, []Num{1}, LowEnd, NoBasis, "", "sweep a contamination fraction of 0"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			rec := Recommend(synthTuning(ks, tc.levels, tc.rel, tc.effMCSE), tc.target)
			if rec == nil || len(rec.Studies) != 1 {
				t.Fatalf("want one study, got %+v", rec)
			}
			ts := rec.Studies[0]
			if ts.RecommendedValue != tc.best {
				t.Errorf("recommended %q, want %q", ts.RecommendedValue, tc.best)
			}
			if math.Abs(float64(ts.Score.Value)-tc.score) > 5e-5 {
				t.Errorf("worst-case score %v, want %v", ts.Score.Value, tc.score)
			}
			if !slices.Equal(ts.Range, tc.rng) {
				t.Errorf("range %v, want %v", ts.Range, tc.rng)
			}
			if !slices.Contains(ts.Range, ts.Recommended) {
				t.Errorf("the recommended %v is not in its range %v", ts.Recommended, ts.Range)
			}
			if ts.GridEnd != tc.end {
				t.Errorf("grid end %v, want %v", ts.GridEnd, tc.end)
			}
			if ts.Target.Basis != tc.basis {
				t.Errorf("target basis %v, want %v", ts.Target.Basis, tc.basis)
			}
			if ts.Target.Value != tc.pick {
				t.Errorf("target pick %q, want %q", ts.Target.Value, tc.pick)
			}
			all := strings.Join(append(ts.Notes, ts.Target.Note), " ")
			if tc.note != "" && !strings.Contains(all, tc.note) {
				t.Errorf("notes %q lack %q", all, tc.note)
			}
			if !strings.Contains(all, "as if independent") {
				t.Errorf("notes %q do not say how the MCSEs are combined", all)
			}
		})
	}
}

// TestRecommendScoreMCSE checks one score and its MCSE against the formula
// by hand: q = √(R_b/R_k), MCSE q·½·√((m_k/R_k)² + (m_b/R_b)²).
func TestRecommendScoreMCSE(t *testing.T) {
	clean := synthLevel{fraction: "0", ratio: []float64{0.81, 0.9801}}
	ts := Recommend(synthTuning([]string{"1", "2"}, []synthLevel{clean}, 0.03, 0.01), 0.95).Studies[0]
	pt := ts.Constants[0].Points[0]
	wantQ := math.Sqrt(0.9801 / 0.81)
	wantM := wantQ * 0.5 * math.Hypot(0.03, 0.03)
	if math.Abs(float64(pt.Score.Value)-wantQ) > 1e-12 || math.Abs(float64(pt.Score.MCSE)-wantM) > 1e-12 {
		t.Errorf("score %v ± %v, want %v ± %v", pt.Score.Value, pt.Score.MCSE, wantQ, wantM)
	}
	if pt.Worst != "intercept" {
		t.Errorf("worst coefficient %q, want intercept", pt.Worst)
	}
	if best := ts.Constants[1].Points[0].Score; best.Value != 1 || best.MCSE != 0 {
		t.Errorf("the best constant's score is %v ± %v, want exactly 1 ± 0", best.Value, best.MCSE)
	}
	// The verdict's own score against ls rides along: 1/√0.81.
	if v := float64(pt.VsReference.Value); math.Abs(v-1/0.9) > 1e-12 {
		t.Errorf("score against the reference %v, want %v", v, 1/0.9)
	}
}

// TestRecommendNeedsOneConstant: no study without a tuning sweep, and none
// when two constants of one estimator are swept together.
func TestRecommendNeedsOneConstant(t *testing.T) {
	r := synthTuning([]string{"1", "2"}, []synthLevel{{fraction: "0", ratio: []float64{0.9, 1}}}, 0.01, 0.01)
	plain := *r
	plain.Cells = nil
	for _, c := range r.Cells {
		c.Settings = c.Settings[:1]
		plain.Cells = append(plain.Cells, c)
	}
	if rec := Recommend(&plain, 0.95); rec != nil {
		t.Errorf("no tuning sweep, got %+v", rec)
	}
	two := *r
	two.Cells = nil
	for i, c := range r.Cells {
		c.Settings = append(slices.Clone(c.Settings), Setting{Path: "estimators.huber.psi.constants.c", Value: strconv.Itoa(i)})
		two.Cells = append(two.Cells, c)
	}
	rec := Recommend(&two, 0.95)
	if rec == nil || len(rec.Studies) != 0 || len(rec.Notes) != 1 || !strings.Contains(rec.Notes[0], "needs one swept constant") {
		t.Errorf("two swept constants: %+v", rec)
	}
}

// TestRecommendationLeadsTable: the terminal table and the Markdown
// summary open with the tuning study, before the per-cell verdicts.
func TestRecommendationLeadsTable(t *testing.T) {
	r := synthTuning([]string{"1", "2", "3", "4"}, []synthLevel{
		{fraction: "0", ratio: []float64{0.81, 0.9025, 0.9604, 0.9801}, theory: []float64{0.8, 0.9, 0.95, 0.99}},
		{fraction: "0.1", ratio: []float64{4, 3.61, 2.89, 1.96}},
	}, 0.01, 0.01)
	r.Recommendation = Recommend(r, 0.95)
	var tb, md strings.Builder
	if err := WriteTable(&tb, r, 100); err != nil {
		t.Fatal(err)
	}
	if err := WriteMarkdownSummary(&md, r); err != nil {
		t.Fatal(err)
	}
	for name, out := range map[string]string{"table": tb.String(), "markdown": md.String()} {
		study := strings.Index(out, "uning study")
		verdict := strings.Index(out, "cell 0")
		if study < 0 || verdict < 0 || study > verdict {
			t.Errorf("%s: the tuning study does not come first:\n%s", name, out)
		}
		for _, want := range []string{"choose huber.tuning = 2", "efficiency ≥ 0.95 on clean data: 3", "as independent"} {
			if !strings.Contains(out, want) {
				t.Errorf("%s lacks %q:\n%s", name, want, out)
			}
		}
	}
	for _, line := range strings.Split(tb.String(), "\n") {
		if n := len([]rune(line)); n > 100 {
			t.Errorf("line of %d columns: %q", n, line)
		}
	}
	// Six levels do not fit beside the summary columns in 100: the rest
	// go to a continuation table, and no line is wider.
	var six []synthLevel
	for _, f := range []string{"0", "0.01", "0.02", "0.03", "0.04", "0.05"} {
		six = append(six, synthLevel{fraction: f, ratio: []float64{0.81, 0.9025, 0.9604, 0.9801}, theory: []float64{0.8, 0.9, 0.95, 0.99}})
	}
	r = synthTuning([]string{"1", "2", "3", "4"}, six, 0.01, 0.01)
	tb.Reset()
	if err := WriteTable(&tb, r, 100); err != nil {
		t.Fatal(err)
	}
	out := tb.String()
	for _, line := range strings.Split(out, "\n") {
		if n := len([]rune(line)); n > 100 {
			t.Errorf("six levels: line of %d columns: %q", n, line)
		}
	}
	if strings.Count(out, "\n   tuning ") < 2 || !strings.Contains(out, " F") {
		t.Errorf("six levels: want a continuation table reaching level F:\n%s", out)
	}
}

// TestRecommendCustomConstant: a swept constant of a psi of one's own is a
// tuning study too, and another estimator's swept settings, which do not
// change this estimator's fits, make no levels of their own.
func TestRecommendCustomConstant(t *testing.T) {
	r := synthTuning([]string{"1", "2"}, []synthLevel{{fraction: "0", ratio: []float64{0.9, 1}}}, 0.01, 0.01)
	var cells []Cell
	for _, other := range []string{"3.5", "4.685"} {
		for _, c := range r.Cells {
			c.Settings = []Setting{c.Settings[0], {Path: "estimators.huber.psi.constants.c", Value: c.Settings[1].Value},
				{Path: "estimators.bisq.tuning", Value: other}}
			c.Index = len(cells)
			cells = append(cells, c)
		}
	}
	r.Cells = cells
	rec := Recommend(r, 0.95)
	if rec == nil || len(rec.Studies) != 1 {
		t.Fatalf("want one study, got %+v", rec)
	}
	ts := rec.Studies[0]
	if ts.Name != "c" || ts.Path != "estimators.huber.psi.constants.c" || len(ts.Levels) != 1 || ts.RecommendedValue != "2" {
		t.Errorf("study of %s (%s): %d levels, recommended %q; want c, one level, 2", ts.Path, ts.Name, len(ts.Levels), ts.RecommendedValue)
	}
}

// TestRecommendationJSON: a constant whose value is not a number (a
// mapping written as YAML text) still encodes, as null, and reads back.
func TestRecommendationJSON(t *testing.T) {
	r := synthTuning([]string{"{a: 1}", "2"}, []synthLevel{{fraction: "0", ratio: []float64{0.9, 1}, theory: []float64{0.9, 0.96}}}, 0.01, 0.01)
	r.Schema = SchemaVersion
	r.Recommendation = Recommend(r, 0.95)
	var b strings.Builder
	if err := WriteJSON(&b, r); err != nil {
		t.Fatal(err)
	}
	back, err := ReadJSON(strings.NewReader(b.String()))
	if err != nil {
		t.Fatal(err)
	}
	ts := back.Recommendation.Studies[0]
	if !math.IsNaN(float64(ts.Constants[1].Constant)) || ts.Target.Value != "2" || ts.Target.Basis != Asymptotic || ts.GridEnd != Inside {
		t.Errorf("read back %+v", ts)
	}
}
