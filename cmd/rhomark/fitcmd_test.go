package main

import (
	"encoding/json"
	"flag"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/internal/refdata"
	"github.com/rhomark/rhomark/psi"
	"github.com/rhomark/rhomark/scenarios"
	"gonum.org/v1/gonum/mat"
)

// TestFitSDivisor: --s-divisor reaches the S-scale (the estimators
// package checks the values themselves), the JSON reports the S
// refinement, and the flag is refused where no S-scale is computed.
func TestFitSDivisor(t *testing.T) {
	const file = "../../testdata/refdata/stackloss.csv"
	scales := map[string]float64{}
	for _, div := range []string{"n", "n-p"} {
		code, out, errs := rhomark(t, "fit", file, "--y", "stack.loss", "--method", "mm-estimate", "--s-divisor", div, "--json")
		if code != exitOK {
			t.Fatalf("exit %d: %s", code, errs)
		}
		var got fitOutput
		if err := json.Unmarshal([]byte(out), &got); err != nil {
			t.Fatal(err)
		}
		f := got.Fits[0]
		if f.SRefinement != "converged" || f.SSteps == 0 {
			t.Errorf("divisor %s: S refinement %q after %d steps", div, f.SRefinement, f.SSteps)
		}
		if len(got.Estimator.Tuning) != 1 || got.Estimator.Tuning[0] != estimators.DefaultMMTuning {
			t.Errorf("MM tuning %v, want the exact 95%% constant", got.Estimator.Tuning)
		}
		scales[div] = float64(f.Scale)
	}
	// The same fit through the package, with the same seed.
	tab, err := refdata.ReadCSV("stackloss.csv")
	if err != nil {
		t.Fatal(err)
	}
	x := mat.NewDense(len(tab.Rows), 4, nil)
	y := make([]float64, len(tab.Rows))
	for i, r := range tab.Rows {
		x.SetRow(i, []float64{1, r[0], r[1], r[2]})
		y[i] = r[3]
	}
	var ws estimators.Workspace
	var res estimators.Result
	ws.SeedRandom(1, 0)
	e := estimators.Estimator{Method: estimators.MethodMM, Resampling: estimators.Resampling{SDivisor: estimators.DivideByNMinusP}}
	if err := e.Fit(x, y, &ws, &res); err != nil {
		t.Fatal(err)
	}
	if math.Abs(scales["n-p"]-res.Scale) > 1e-12*res.Scale || !(scales["n-p"] > scales["n"]) {
		t.Errorf("scales %v; package gives %v with n − p", scales, res.Scale)
	}
	for _, args := range [][]string{
		{"--method", "lts", "--s-divisor", "n-p"},
		{"--method", "irls", "--s-divisor", "n-p"},
		{"--method", "s-estimate", "--s-divisor", "p"},
	} {
		code, _, errs := rhomark(t, append([]string{"fit", file, "--y", "stack.loss"}, args...)...)
		if code != exitUsage || !strings.Contains(errs, "--s-divisor") {
			t.Errorf("%v: exit %d, stderr %q", args, code, errs)
		}
	}
}

// fitJSONOf runs fit with args and decodes its JSON.
func fitJSONOf(t *testing.T, args ...string) fitOutput {
	t.Helper()
	code, out, errs := rhomark(t, append(append([]string{"fit"}, args...), "--json")...)
	if code != exitOK {
		t.Fatalf("fit %v: exit %d: %s", args, code, errs)
	}
	var got fitOutput
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatal(err)
	}
	return got
}

// TestFitLeastSquaresNIST: fit's least-squares standard errors match the
// certified standard deviations of the estimates of the NIST StRD (NIST
// Statistical Reference Datasets, Linear Least Squares Regression: Norris,
// and Longley (1967), "An appraisal of least squares programs for the
// electronic computer from the viewpoint of the user", JASA 62:819-841).
// Required digits (log relative error, as in TestLeastSquaresNIST of the
// estimators package): 10 for Norris and 8 for the ill-conditioned Longley.
func TestFitLeastSquaresNIST(t *testing.T) {
	dir, err := refdata.NISTDir()
	if err != nil {
		t.Skipf("NIST StRD check not run: %v", err)
	}
	for _, tc := range []struct {
		name   string
		minLRE float64
	}{{"Norris", 10}, {"Longley", 8}} {
		d, err := refdata.ReadNIST(dir, tc.name)
		if err != nil {
			t.Fatal(err)
		}
		var b strings.Builder
		k := len(d.X[0])
		for j := range k {
			fmt.Fprintf(&b, "x%d,", j+1)
		}
		b.WriteString("y\n")
		for i, row := range d.X {
			for _, v := range row {
				b.WriteString(strconv.FormatFloat(v, 'g', -1, 64) + ",")
			}
			b.WriteString(strconv.FormatFloat(d.Y[i], 'g', -1, 64) + "\n")
		}
		path := filepath.Join(t.TempDir(), tc.name+".csv")
		if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
		f := fitJSONOf(t, path, "--y", "y", "--method", "ls").Fits[0]
		for j, name := range f.Order {
			cert := d.StdDev[fmt.Sprintf("B%d", j)]
			got := float64(f.StandardErrors[name])
			if l := lre(got, cert); l < tc.minLRE {
				t.Errorf("%s %s: standard error %.15g, certified %.15g: %.1f digits, want %.0f", tc.name, name, got, cert, l, tc.minLRE)
			} else {
				t.Logf("%s %s: %.1f digits", tc.name, name, l)
			}
		}
	}
}

// lre is the number of correct significant digits of est against cert,
// capped at 15 (the NIST StRD's log relative error).
func lre(est, cert float64) float64 {
	if est == cert {
		return 15
	}
	return math.Min(15, -math.Log10(math.Abs(est-cert)/math.Abs(cert)))
}

// TestFitInference: standard errors and intervals on the stack loss data.
// Least squares: the standard errors of the data's least-squares fit as
// printed in Rousseeuw & Leroy (1987), Robust Regression and Outlier
// Detection, Wiley, chapter 2 (11.8960, 0.1349, 0.3680, 0.1563 for
// intercept, Air.Flow, Water.Temp, Acid.Conc.; from memory, the book not at
// hand: TestFitLeastSquaresNIST is the certified check), to half a unit of
// the last printed digit, and 95% intervals of half-width t(0.975, 17)
// × SE, with t(0.975, 17) = 2.110 from a table of Student's t (common
// practice). M-estimators and MM: exactly the standard errors of
// Workspace.StandardErrors, the formula a run's coverage uses, and Wald
// intervals with the normal quantile 1.960 (common practice). Methods
// without a covariance say why instead of printing a number.
func TestFitInference(t *testing.T) {
	const file = "../../testdata/refdata/stackloss.csv"
	ls := fitJSONOf(t, file, "--y", "stack.loss", "--method", "ls").Fits[0]
	for name, want := range map[string]float64{"intercept": 11.8960, "Air.Flow": 0.1349, "Water.Temp": 0.3680, "Acid.Conc.": 0.1563} {
		se := float64(ls.StandardErrors[name])
		if math.Abs(se-want) > 0.00005+1e-12 {
			t.Errorf("ls %s: standard error %v, published %v", name, se, want)
		}
		iv := ls.Intervals[name]
		if q := float64(iv[1]-iv[0]) / (2 * se); math.Abs(q-2.110) > 0.0005 {
			t.Errorf("ls %s: interval %v is ± %.5f SE, want t(0.975, 17) = 2.110", name, iv, q)
		}
		if mid := float64(iv[0]+iv[1]) / 2; math.Abs(mid-float64(ls.Coefficients[name])) > 1e-9*math.Abs(mid) {
			t.Errorf("ls %s: interval %v not centred on %v", name, iv, ls.Coefficients[name])
		}
	}
	if !strings.Contains(ls.IntervalRule, "17 degrees of freedom") {
		t.Errorf("ls interval rule %q", ls.IntervalRule)
	}

	tab, err := refdata.ReadCSV("stackloss.csv")
	if err != nil {
		t.Fatal(err)
	}
	x := mat.NewDense(len(tab.Rows), 4, nil)
	y := make([]float64, len(tab.Rows))
	for i, r := range tab.Rows {
		x.SetRow(i, []float64{1, r[0], r[1], r[2]})
		y[i] = r[3]
	}
	for _, tc := range []struct {
		args []string
		est  estimators.Estimator
	}{
		{[]string{"--method", "irls"}, estimators.Estimator{Method: estimators.MethodIRLS, Psi: psi.Huber{K: 1.345}}},
		{[]string{"--method", "newton", "--psi", "bisquare"}, estimators.Estimator{Method: estimators.MethodNewton, Psi: psi.Bisquare{C: estimators.DefaultMMTuning}}},
		{[]string{"--method", "mm-estimate"}, estimators.Estimator{Method: estimators.MethodMM}},
	} {
		f := fitJSONOf(t, append([]string{file, "--y", "stack.loss"}, tc.args...)...).Fits[0]
		e := tc.est
		e.StartFrom = estimators.MethodLS
		e.Settings = estimators.Settings{Rules: estimators.RuleChange, ChangeTol: estimators.DefaultChangeTol, MaxIterations: estimators.DefaultMaxIterations}
		var ws estimators.Workspace
		var res estimators.Result
		ws.SeedRandom(1, 0)
		if err := e.Fit(x, y, &ws, &res); err != nil {
			t.Fatal(err)
		}
		se := make([]float64, 4)
		if !ws.StandardErrors(e, x, &res, se) {
			t.Fatalf("%v: the package gives no standard errors", tc.args)
		}
		for j, name := range f.Order {
			if float64(f.StandardErrors[name]) != se[j] {
				t.Errorf("%v %s: standard error %v, Workspace.StandardErrors %v", tc.args, name, f.StandardErrors[name], se[j])
			}
			iv := f.Intervals[name]
			if q := float64(iv[1]-iv[0]) / (2 * se[j]); math.Abs(q-1.960) > 0.0005 {
				t.Errorf("%v %s: interval ± %.5f SE, want 1.960", tc.args, name, q)
			}
		}
		if f.NoStandardErrors != "" || !strings.HasPrefix(f.IntervalRule, "Wald") {
			t.Errorf("%v: rule %q, no-SE %q", tc.args, f.IntervalRule, f.NoStandardErrors)
		}
	}
	for _, args := range [][]string{
		{"--method", "lts"}, {"--method", "s-estimate"}, {"--method", "lad"},
		{"--psi", "talwar"},
		{"--max-iter", "1"},
	} {
		f := fitJSONOf(t, append([]string{file, "--y", "stack.loss"}, args...)...).Fits[0]
		if f.StandardErrors != nil || f.Intervals != nil || f.NoStandardErrors == "" {
			t.Errorf("%v: standard errors %v, reason %q; want none and a reason", args, f.StandardErrors, f.NoStandardErrors)
		}
		code, out, _ := rhomark(t, append([]string{"fit", file, "--y", "stack.loss"}, args...)...)
		if code != exitOK && args[0] != "--max-iter" || !strings.Contains(out, "no standard errors or intervals: "+f.NoStandardErrors) {
			t.Errorf("%v: exit %d, table:\n%s", args, code, out)
		}
	}
}

// TestFitWeightsAndOutliers: every row's residual, scaled residual, final
// weight and flag, in the JSON and in --weights FILE (with the group).
// The weights are the psi's own psi(u)/u at the final fit; rows flagged
// are those with |r/σ| above the cut. On stack loss, observations 1, 3, 4
// and 21 are the outliers (Rousseeuw & Leroy (1987), Robust Regression and
// Outlier Detection, Wiley, chapter 2; from memory): the MM-estimate must
// flag them and give them weight 0.
func TestFitWeightsAndOutliers(t *testing.T) {
	const file = "../../testdata/refdata/stackloss.csv"
	tab, err := refdata.ReadCSV("stackloss.csv")
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		args []string
		psi  psi.Psi
	}{
		{[]string{"--method", "irls"}, psi.Huber{K: 1.345}},
		{[]string{"--method", "mm-estimate"}, psi.Bisquare{C: estimators.DefaultMMTuning}},
		{[]string{"--method", "irls", "--outlier-cut", "1.5"}, psi.Huber{K: 1.345}},
	} {
		out := fitJSONOf(t, append([]string{file, "--y", "stack.loss"}, tc.args...)...)
		f := out.Fits[0]
		cut := out.Estimator.OutlierCut
		if len(f.Observations) != len(tab.Rows) {
			t.Fatalf("%v: %d observations, want %d", tc.args, len(f.Observations), len(tab.Rows))
		}
		flagged := map[int]bool{}
		for i, o := range f.Observations {
			r := tab.Rows[i]
			fitted := float64(f.Coefficients["intercept"]) + float64(f.Coefficients["Air.Flow"])*r[0] +
				float64(f.Coefficients["Water.Temp"])*r[1] + float64(f.Coefficients["Acid.Conc."])*r[2]
			u := float64(o.Resid) / float64(f.Scale)
			switch {
			case o.Row != i+1 || o.Line != i+2:
				t.Errorf("%v: observation %d is row %d, line %d", tc.args, i, o.Row, o.Line)
			case math.Abs(float64(o.Resid)-(r[3]-fitted)) > 1e-9*math.Max(1, math.Abs(r[3])):
				t.Errorf("%v row %d: residual %v, y − xβ = %v", tc.args, o.Row, o.Resid, r[3]-fitted)
			case float64(o.Scaled) != u:
				t.Errorf("%v row %d: scaled residual %v, want %v", tc.args, o.Row, o.Scaled, u)
			case float64(o.Weight) != tc.psi.Weight(u):
				t.Errorf("%v row %d: weight %v, psi gives %v", tc.args, o.Row, o.Weight, tc.psi.Weight(u))
			case o.Flag != (math.Abs(u) > cut):
				t.Errorf("%v row %d: flag %v at r/σ = %v, cut %v", tc.args, o.Row, o.Flag, u, cut)
			}
			if o.Flag {
				flagged[o.Row] = true
			}
		}
		if f.Outliers != len(flagged) {
			t.Errorf("%v: %d outliers counted, %d flagged", tc.args, f.Outliers, len(flagged))
		}
		if tc.args[1] == "mm-estimate" {
			for _, row := range []int{1, 3, 4, 21} {
				if !flagged[row] || f.Observations[row-1].Weight != 0 {
					t.Errorf("MM: row %d flagged %v, weight %v; want flagged with weight 0", row, flagged[row], f.Observations[row-1].Weight)
				}
			}
		}
	}

	// --weights FILE with groups: one line per fitted row, the group first.
	dir := t.TempDir()
	data, err := os.ReadFile(file)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(data)), "\n")
	var b strings.Builder
	b.WriteString("bench," + lines[0] + "\n")
	for i, l := range lines[1:] {
		g := "A"
		if i >= 10 {
			g = "B"
		}
		b.WriteString(g + "," + l + "\n")
	}
	grouped := filepath.Join(dir, "grouped.csv")
	os.WriteFile(grouped, []byte(b.String()), 0o644)
	wpath := filepath.Join(dir, "w.csv")
	code, table, errs := rhomark(t, "fit", grouped, "--y", "stack.loss", "--group", "bench", "--weights", wpath)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	got, err := os.ReadFile(wpath)
	if err != nil {
		t.Fatal(err)
	}
	rows := strings.Split(strings.TrimSpace(string(got)), "\n")
	if rows[0] != "group,row,line,residual,scaled_residual,weight,outlier" || len(rows) != 1+len(tab.Rows) {
		t.Fatalf("weights file: header %q, %d lines", rows[0], len(rows))
	}
	if !strings.HasPrefix(rows[1], "A,1,2,") || !strings.HasPrefix(rows[11], "B,11,12,") {
		t.Errorf("weights rows: %q, %q", rows[1], rows[11])
	}
	if !strings.Contains(table, "group A") || !strings.Contains(table, "group B") || !strings.Contains(table, "outliers") {
		t.Errorf("table:\n%s", table)
	}
	if code, _, errs := rhomark(t, "fit", file, "--y", "stack.loss", "--outlier-cut", "0"); code != exitUsage || !strings.Contains(errs, "--outlier-cut") {
		t.Errorf("--outlier-cut 0: exit %d, %s", code, errs)
	}
}

// TestFitHeaderRules: the header says where each method starts and how its
// scale is found.
func TestFitHeaderRules(t *testing.T) {
	const file = "../../testdata/refdata/stackloss.csv"
	for _, tc := range []struct {
		args []string
		want []string
	}{
		{[]string{"--method", "ls"}, []string{"start    none (solved directly by QR)", "scale    √(RSS/(n−p))"}},
		{[]string{"--method", "irls"}, []string{"start    ls estimate", "MAD of the residuals", "re-estimated at each iteration", "huber k = 1.345"}},
		{[]string{"--method", "irls", "--start", "lts", "--scale", "start", "--seed", "7"}, []string{"start    lts estimate from random elemental subsets (seed 7)", "scale    held at the start's scale"}},
		{[]string{"--method", "newton", "--scale", "fixed:2"}, []string{"scale    fixed at 2"}},
		{[]string{"--method", "mm-estimate", "--s-divisor", "n-p"}, []string{"start    S-estimate from random elemental subsets (seed 1)", "held fixed", "c = 1.5476, divisor n-p"}},
	} {
		code, out, errs := rhomark(t, append([]string{"fit", file, "--y", "stack.loss"}, tc.args...)...)
		if code != exitOK {
			t.Fatalf("%v: exit %d: %s", tc.args, code, errs)
		}
		head := strings.SplitN(out, "\n ▸", 2)[0]
		for _, w := range tc.want {
			if !strings.Contains(head, w) {
				t.Errorf("%v: header lacks %q:\n%s", tc.args, w, head)
			}
		}
	}
}

// TestFitBuildsScenarioEstimator: fit's options make exactly the estimator
// of the scenario entry they stand for, with the scenario's defaults where
// an option is not given, so a fit of one dataset and a run of the same
// settings use the same estimator.
func TestFitBuildsScenarioEstimator(t *testing.T) {
	for _, tc := range []struct {
		args  string
		entry string
	}{
		{"", "{method: irls, psi: huber}"},
		{"--method newton --psi bisquare --tuning 4 --scale start --start s-estimate --tol 1e-6 --max-iter 50",
			"{method: newton, psi: bisquare, tuning: 4, scale: start, start: s-estimate, stop: {change: 1e-6, max-iter: 50}}"},
		{"--psi hampel --tuning 2,4,8 --scale fixed:0.5", "{method: irls, psi: hampel, tuning: [2, 4, 8], scale: fixed:0.5}"},
		{"--method mm-estimate", "{method: mm-estimate}"},
		{"--method mm-estimate --psi welsch --tuning 2.11", "{method: mm-estimate, psi: welsch, tuning: 2.11}"},
		{"--method s-estimate --s-divisor n-p", "{method: s-estimate, resampling: {s-divisor: n-p}}"},
		{"--method irls --start s-estimate --s-divisor n-p", "{method: irls, psi: huber, start: s-estimate, resampling: {s-divisor: n-p}}"},
		{"--start lts --psi cauchy", "{method: irls, psi: cauchy, start: lts}"},
		{"--method lts", "{method: lts}"},
		{"--method lad", "{method: lad}"},
		{"--method ls", "{method: ls}"},
	} {
		t.Run(tc.args, func(t *testing.T) {
			fs := flag.NewFlagSet("fit", flag.ContinueOnError)
			ef := addEstimatorFlags(fs)
			if err := fs.Parse(strings.Fields(tc.args)); err != nil {
				t.Fatal(err)
			}
			got, _, err := ef.build(givenFlags(fs))
			if err != nil {
				t.Fatal(err)
			}
			src := "name: bench\nmodel:\n  n: 30\n  columns:\n    - {name: volume, slope: 0.98, dist: uniform, min: 1, max: 50}\nnoise: {dist: normal, scale: 0.1}\nestimators:\n  - " + tc.entry + "\n"
			st, err := scenarios.Parse("bench.yaml", []byte(src), scenarios.Limits{})
			if err != nil {
				t.Fatal(err)
			}
			want, err := st.Base.Estimators[0].Build()
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(got, want) {
				t.Errorf("fit %s builds\n%+v\nthe scenario entry %s builds\n%+v", tc.args, got, tc.entry, want)
			}
		})
	}
}

// TestFitNonFiniteFails: a group whose values are near the float64 limit
// ends non-finite; fit then exits 1 saying so and suggesting a rescale,
// and writes the other group's fit exactly as a file of it alone gives.
func TestFitNonFiniteFails(t *testing.T) {
	dir := t.TempDir()
	good := "A,1,1.1\nA,2,2.0\nA,3,2.9\nA,4,4.2\nA,5,5.1\nA,6,5.8\n"
	huge := "B,1,1.5e308\nB,2,1.7e308\nB,3,-1.6e308\nB,4,1.75e308\nB,5,-1.4e308\nB,6,1e308\n"
	both := filepath.Join(dir, "both.csv")
	alone := filepath.Join(dir, "alone.csv")
	os.WriteFile(both, []byte("meter,volume,reading\n"+good+huge), 0o644)
	os.WriteFile(alone, []byte("meter,volume,reading\n"+good), 0o644)
	for _, method := range []string{"irls", "ls"} {
		code, out, errs := rhomark(t, "fit", both, "--y", "reading", "--group", "meter", "--method", method, "--json")
		if code != 1 || !strings.Contains(errs, "1 of 2 group(s) ended with coefficients or a scale that are not finite (status non-finite)") ||
			!strings.Contains(errs, "rescale the columns") {
			t.Errorf("%s: exit %d, stderr %q; want exit 1 naming the non-finite group", method, code, errs)
		}
		var got fitOutput
		if err := json.Unmarshal([]byte(out), &got); err != nil || len(got.Fits) != 2 || got.Fits[1].Status != "non-finite" {
			t.Fatalf("%s: %v, %+v", method, err, got.Fits)
		}
		_, wantOut, _ := rhomark(t, "fit", alone, "--y", "reading", "--group", "meter", "--method", method, "--json")
		var want fitOutput
		json.Unmarshal([]byte(wantOut), &want)
		a, _ := json.Marshal(got.Fits[0])
		b, _ := json.Marshal(want.Fits[0])
		if string(a) != string(b) || len(want.Fits) != 1 {
			t.Errorf("%s: group A with B beside it:\n%s\nalone:\n%s", method, a, b)
		}
	}
}
