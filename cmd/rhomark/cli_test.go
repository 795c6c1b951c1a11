package main

import (
	"bytes"
	"encoding/json"
	"encoding/xml"
	"errors"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/rhomark/rhomark/results"
)

// rhomark runs the CLI in-process and returns its exit status and output.
func rhomark(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errb bytes.Buffer
	code := run(args, strings.NewReader(""), &out, &errb)
	return code, out.String(), errb.String()
}

func TestRunWritesResults(t *testing.T) {
	dir := t.TempDir()
	code, out, errs := rhomark(t, "run", "flow-meter", "--replicates", "40", "--out", dir, "--workers", "2")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if !strings.Contains(out, "flow-meter") || !strings.Contains(out, "what to choose") || !strings.Contains(out, "var. eff.") {
		t.Errorf("table missing expected text:\n%s", out)
	}
	for _, ext := range []string{".json", ".csv", ".txt"} {
		if _, err := os.Stat(filepath.Join(dir, "flow-meter"+ext)); err != nil {
			t.Errorf("no %s written: %v", ext, err)
		}
	}
	f, err := os.Open(filepath.Join(dir, "flow-meter.json"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	res, err := results.ReadJSON(f)
	if err != nil {
		t.Fatal(err)
	}
	if res.Replicates != 40 || len(res.Cells) != 4 || !res.Complete || res.Scenario.Hash == "" {
		t.Errorf("results: replicates %d cells %d complete %v", res.Replicates, len(res.Cells), res.Complete)
	}
	csv, _ := os.ReadFile(filepath.Join(dir, "flow-meter.csv"))
	header, _, _ := strings.Cut(string(csv), "\n")
	if !strings.HasPrefix(header, "scenario,cell,contamination.spikes.fraction,contamination.mislabelled.fraction,estimator") {
		t.Errorf("CSV header %q", header)
	}
}

func TestRunJSONAndSeed(t *testing.T) {
	code, out, errs := rhomark(t, "run", "clean-normal", "--replicates", "8", "--seed", "5", "--json")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var res results.Results
	if err := json.Unmarshal([]byte(out), &res); err != nil {
		t.Fatalf("--json output is not JSON: %v", err)
	}
	if res.Seed != 5 {
		t.Errorf("seed %d, want 5", res.Seed)
	}
}

func TestRunBadScenario(t *testing.T) {
	bad := filepath.Join("..", "..", "testdata", "scenarios", "bad", "fraction-half.yaml")
	code, _, errs := rhomark(t, "run", bad)
	if code != exitUsage {
		t.Fatalf("exit %d, want %d", code, exitUsage)
	}
	if !strings.Contains(errs, "fraction-half.yaml:11:") || !strings.Contains(errs, "contamination[0].fraction") {
		t.Errorf("error does not name file, line and field:\n%s", errs)
	}
}

// TestLimitsFollowOverrides: the work limit applies to the replicates that
// will run, so --replicates can bring a study under it; every command that
// loads a scenario takes the flags that raise the limits.
func TestLimitsFollowOverrides(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "bench.yaml")
	os.WriteFile(path, []byte("replicates: 1000\nmodel: {n: 100, columns: [{name: volume, slope: 1}]}\nnoise: {dist: normal}\nestimators: [{method: ls}]\n"), 0o644)
	// 1000 replicates × n 100 × 2² coefficients × 1 estimator = 4e5 units.
	code, _, errs := rhomark(t, "run", path, "--max-work", "1e5", "--quiet")
	if code != exitUsage || !strings.Contains(errs, "--max-work") {
		t.Errorf("over the work limit: exit %d %q", code, errs)
	}
	if code, _, errs := rhomark(t, "run", path, "--max-work", "1e5", "--replicates", "10", "--quiet"); code != exitOK {
		t.Errorf("--replicates 10 brings it under the limit: exit %d %q", code, errs)
	}
	code, _, errs = rhomark(t, "run", path, "--replicates", "20000000", "--quiet")
	if code != exitUsage || !strings.Contains(errs, "--max-replicates") {
		t.Errorf("--replicates over its limit: exit %d %q", code, errs)
	}
	for _, c := range []struct {
		cmd   string
		extra []string
	}{{"replay", []string{"--data-out", filepath.Join(dir, "d.csv")}}, {"breakdown", nil}} {
		code, _, errs := rhomark(t, append([]string{c.cmd, path, "--max-work", "1e5"}, c.extra...)...)
		if code != exitUsage || !strings.Contains(errs, "--max-work") {
			t.Errorf("%s over the work limit: exit %d %q", c.cmd, code, errs)
		}
		if code, _, errs := rhomark(t, append([]string{c.cmd, path, "--max-work", "1e6"}, c.extra...)...); code != exitOK {
			t.Errorf("%s with the limit raised: exit %d %q", c.cmd, code, errs)
		}
	}
}

func TestUsageErrors(t *testing.T) {
	cases := [][]string{
		{"frobnicate"},
		{"run"},
		{"run", "no-such-scenario"},
		{"run", "flow-meter", "--replicates", "-3"},
		{"run", "flow-meter", "--seed", "abc"},
		{"run", "flow-meter", "--workers", "1025"},
		{"run", "flow-meter", "--workers", "-1"},
		{"run", "flow-meter", "--bogus"},
		{"fit", "x.csv"},
		{"fit", "../../testdata/refdata/stackloss.csv", "--y", "stack.loss", "--method", "lms"},
		{"fit", "../../testdata/refdata/stackloss.csv", "--y", "stack.loss", "--psi", "nope"},
		{"fit", "../../testdata/refdata/stackloss.csv", "--y", "nope"},
		{"fit", "../../testdata/refdata/stackloss.csv", "--y", "stack.loss", "--method", "ls", "--psi", "huber"},
		{"fit", "../../testdata/refdata/stackloss.csv", "--y", "stack.loss", "--scale", "fixed:0"},
		{"scenarios", "nope"},
	}
	for _, args := range cases {
		code, _, errs := rhomark(t, args...)
		if code != exitUsage {
			t.Errorf("%v: exit %d, want %d (stderr %q)", args, code, exitUsage, errs)
		}
		if strings.Count(strings.TrimSpace(errs), "\n") > 20 || errs == "" {
			t.Errorf("%v: stderr %q", args, errs)
		}
	}
}

func TestHelpAndVersion(t *testing.T) {
	for _, args := range [][]string{{"help"}, {"--help"}, {"run", "--help"}, {"fit", "-h"}, {"scenarios", "--help"}, {"help", "fit"}} {
		if code, _, errs := rhomark(t, args...); code != exitOK {
			t.Errorf("%v: exit %d: %s", args, code, errs)
		}
	}
	code, out, _ := rhomark(t, "--version")
	if code != exitOK || !strings.HasPrefix(out, "rhomark "+version) {
		t.Errorf("--version: %d %q", code, out)
	}
}

func TestFitStackloss(t *testing.T) {
	code, out, errs := rhomark(t, "fit", "../../testdata/refdata/stackloss.csv", "--y", "stack.loss", "--json", "--tol", "1e-10")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var got fitOutput
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatal(err)
	}
	if len(got.Fits) != 1 || !got.Fits[0].Converged || got.Fits[0].Status != "converged-change" {
		t.Fatalf("fits: %+v", got.Fits)
	}
	// Venables & Ripley (2002), Modern Applied Statistics with S, 4th ed.,
	// section 6.5: Huber fit of stack loss, intercept -41.03 and air flow
	// 0.829 (from memory; the estimators package checks every coefficient).
	c := got.Fits[0].Coefficients
	if d := c["intercept"] + 41.03; d > 0.005 || d < -0.005 {
		t.Errorf("intercept %v", c["intercept"])
	}
	if d := c["Air.Flow"] - 0.829; d > 0.0005 || d < -0.0005 {
		t.Errorf("Air.Flow %v", c["Air.Flow"])
	}
}

func TestFitGroupsAndBadData(t *testing.T) {
	dir := t.TempDir()
	data := "run,volume,reading\nA,5,5.2\nA,10,10.1\nA,20,19.7\nA,50,49.6\nB,5,5.0\nB,10,9.9\nB,20,20.2\nB,50,48.8\nB,100,98.1\n"
	path := filepath.Join(dir, "bench.csv")
	os.WriteFile(path, []byte(data), 0o644)
	code, out, errs := rhomark(t, "fit", path, "--y", "reading", "--group", "run", "--method", "ls", "--json")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var got fitOutput
	json.Unmarshal([]byte(out), &got)
	if len(got.Fits) != 2 || got.Fits[0].Group != "A" || got.Fits[1].Rows != 5 {
		t.Fatalf("groups: %+v", got.Fits)
	}
	if _, ok := got.Fits[0].Coefficients["volume"]; !ok {
		t.Errorf("default predictors should be the numeric columns: %v", got.Fits[0].Coefficients)
	}
	bad := "volume,reading\n5,5.2\n10,oops\n"
	os.WriteFile(path, []byte(bad), 0o644)
	code, _, errs = rhomark(t, "fit", path, "--y", "reading", "--x", "volume")
	if code != exitUsage || !strings.Contains(errs, "bench.csv:3: column reading") {
		t.Errorf("bad data: exit %d, stderr %q", code, errs)
	}
	// Without --x, a predictor column with one bad cell is reported, not
	// silently left out of the fit.
	badX := "volume,reading,run\n5,5.2,A\n10,10.1,A\n2O,19.7,B\n"
	os.WriteFile(path, []byte(badX), 0o644)
	code, _, errs = rhomark(t, "fit", path, "--y", "reading", "--method", "ls")
	if code != exitUsage || !strings.Contains(errs, "bench.csv:4: column volume") {
		t.Errorf("bad predictor cell: exit %d, stderr %q", code, errs)
	}
	code, _, errs = rhomark(t, "fit", path, "--y", "reading", "--x", "volume,volume")
	if code != exitUsage || !strings.Contains(errs, "listed twice") {
		t.Errorf("duplicated predictor: exit %d, stderr %q", code, errs)
	}
	code, _, errs = rhomark(t, "fit", path, "--y", "reading", "--group", "reading")
	if code != exitUsage || !strings.Contains(errs, `column "reading" cannot be both the response (--y) and the group (--group)`) {
		t.Errorf("--group the same as --y: exit %d, stderr %q", code, errs)
	}
	for _, tol := range []string{"inf", "+Inf", "NaN", "0", "-1"} {
		code, _, errs = rhomark(t, "fit", path, "--y", "reading", "--x", "volume", "--tol", tol)
		if code != exitUsage || !strings.Contains(errs, "--tol must be a positive finite number") {
			t.Errorf("--tol %s: exit %d, stderr %q", tol, code, errs)
		}
	}
	for _, c := range []struct{ data, want string }{
		{"volume,reading\n5,5.2\n10\n", "bench.csv:3: row has 1 field; the header has 2"},
		{"volume,reading\n5,5.2\n10,1,2\n", "bench.csv:3: row has 3 fields; the header has 2"},
		{"volume,\"reading\"\n5,5.2\n10,1,2\n", "bench.csv:3: row has 3 fields; the header has 2"},
	} {
		os.WriteFile(path, []byte(c.data), 0o644)
		code, _, errs = rhomark(t, "fit", path, "--y", "reading")
		if code != exitUsage || !strings.Contains(errs, c.want) {
			t.Errorf("ragged data %q: exit %d, stderr %q, want %q", c.data, code, errs, c.want)
		}
	}
}

func TestScenariosCommand(t *testing.T) {
	code, out, _ := rhomark(t, "scenarios")
	if code != exitOK || !strings.Contains(out, "flow-meter") {
		t.Fatalf("list: %d %q", code, out)
	}
	code, out, _ = rhomark(t, "scenarios", "flow-meter")
	if code != exitOK || !strings.Contains(out, "name: flow-meter") {
		t.Fatalf("print: %d", code)
	}
	dir := t.TempDir()
	if code, _, errs := rhomark(t, "scenarios", "vertical-outliers", "--write", dir); code != exitOK {
		t.Fatalf("write: %s", errs)
	}
	if code, _, errs := rhomark(t, "run", filepath.Join(dir, "vertical-outliers.yaml"), "--replicates", "4"); code != exitOK {
		t.Fatalf("running the written scenario: %s", errs)
	}
}

func TestTheoryCommand(t *testing.T) {
	code, out, errs := rhomark(t, "theory", "--psi", "huber", "--tuning", "1.345", "--json")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var got map[string]any
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatal(err)
	}
	for _, key := range []string{"efficiency", "asymptotic_variance", "gross_error_sensitivity", "rejection_point", "models"} {
		if _, ok := got[key]; !ok {
			t.Errorf("JSON lacks %q", key)
		}
	}
	// Holland & Welsch (1977), Comm. Statist. Theory Methods 6:813-827:
	// k = 1.345 gives 95% efficiency.
	if e := got["efficiency"].(float64); e < 0.949 || e > 0.951 {
		t.Errorf("efficiency %v", e)
	}
	if got["rejection_point"] != nil {
		t.Errorf("Huber has no rejection point; JSON gives %v", got["rejection_point"])
	}
	if code, out, _ := rhomark(t, "theory", "--psi-expr", "r / (1 + abs(r)/c)", "--const", "c=1.4"); code != exitOK || !strings.Contains(out, "efficiency") {
		t.Errorf("custom theory: %d %s", code, out)
	}
}

func TestTuneCommand(t *testing.T) {
	cases := []struct {
		args []string
		want float64
		tol  float64
	}{
		// Holland & Welsch (1977): bisquare c = 4.685 gives 95%.
		{[]string{"--psi", "bisquare", "--efficiency", "0.95"}, 4.685, 0.0005},
		// Huber (1964), Ann. Math. Statist. 35:73-101, from memory: eps = 0.1 → k ≈ 1.140.
		{[]string{"--psi", "huber", "--minimax", "0.1"}, 1.140, 0.001},
		// Rousseeuw & Yohai (1984), "Robust regression by means of
		// S-estimators", Lecture Notes in Statistics 26: c = 1.547
		// (truncated) for 50% breakdown, so the constant lies in
		// [1.547, 1.548).
		{[]string{"--psi", "bisquare", "--breakdown", "0.5"}, 1.5475, 0.0005},
	}
	for _, c := range cases {
		code, out, errs := rhomark(t, append(append([]string{"tune"}, c.args...), "--json")...)
		if code != exitOK {
			t.Fatalf("%v: exit %d: %s", c.args, code, errs)
		}
		var got struct{ Tuning []float64 }
		if err := json.Unmarshal([]byte(out), &got); err != nil || len(got.Tuning) != 1 {
			t.Fatalf("%v: %v %s", c.args, err, out)
		}
		if d := got.Tuning[0] - c.want; d > c.tol || d < -c.tol {
			t.Errorf("%v: tuning %v, want %v", c.args, got.Tuning[0], c.want)
		}
	}
	if code, out, _ := rhomark(t, "tune", "--psi", "welsch", "--sweep", "1:4:4"); code != exitOK || strings.Count(out, "\n") != 6 {
		t.Errorf("sweep: %d\n%s", code, out)
	}
	for _, bad := range [][]string{{"tune", "--psi", "huber"}, {"tune", "--psi", "huber", "--efficiency", "0.9", "--minimax", "0.1"},
		{"tune", "--psi", "bisquare", "--minimax", "0.1"}, {"tune", "--psi", "huber", "--breakdown", "0.5"}} {
		if code, _, _ := rhomark(t, bad...); code == exitOK {
			t.Errorf("%v succeeded", bad)
		}
	}
	// Targets out of range are usage errors (exit 2) naming the flag.
	for _, bad := range [][]string{{"--efficiency", "1.2"}, {"--efficiency", "0"}, {"--breakdown", "0.7"}, {"--sweep", "1:2:100000"},
		{"--plot", "p.svg", "--efficiency", "0.9"}, {"--plot", "p.pdf", "--sweep", "1:4"}} {
		code, _, errs := rhomark(t, append([]string{"tune", "--psi", "bisquare"}, bad...)...)
		if code != exitUsage || !strings.Contains(errs, bad[0]) {
			t.Errorf("%v: exit %d, stderr %q", bad, code, errs)
		}
	}
}

func TestCheckPsiCommand(t *testing.T) {
	if code, out, _ := rhomark(t, "check-psi", "--psi", "hampel"); code != exitOK || !strings.Contains(out, "every required property holds") {
		t.Errorf("hampel: exit %d\n%s", code, out)
	}
	code, out, _ := rhomark(t, "check-psi", "--psi-expr", "r > 0 ? r : 0.5*r", "--json")
	if code != exitFailure {
		t.Errorf("broken psi: exit %d, want %d", code, exitFailure)
	}
	if !strings.Contains(out, `"ok": false`) {
		t.Errorf("JSON does not report the failure:\n%s", out)
	}
	if code, _, _ := rhomark(t, "check-psi", "--psi-expr", "open('/etc/passwd')"); code != exitUsage {
		t.Errorf("unsafe expression: exit %d, want %d", code, exitUsage)
	}
}

func TestFitCustomPsi(t *testing.T) {
	code, out, errs := rhomark(t, "fit", "../../testdata/refdata/stackloss.csv", "--y", "stack.loss",
		"--psi-expr", "abs(r) <= k ? r : k*sign(r)", "--const", "k=1.345", "--tol", "1e-10", "--json")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var got fitOutput
	json.Unmarshal([]byte(out), &got)
	// The same Huber fit as the built-in family (Venables & Ripley (2002),
	// section 6.5, from memory: intercept -41.03).
	if c := got.Fits[0].Coefficients["intercept"]; c < -41.035 || c > -41.025 {
		t.Errorf("intercept %v", c)
	}
}

func TestFitHighBreakdown(t *testing.T) {
	// Hawkins, Bradu & Kass (1984), Technometrics 26:197-208: rows 1-10 are
	// bad leverage points; an MM fit leaves the clean intercept near 0 and
	// least squares does not (the estimators package checks residuals).
	for _, m := range []string{"s-estimate", "mm-estimate", "lts", "lad"} {
		code, out, errs := rhomark(t, "fit", "../../testdata/refdata/hbk.csv", "--y", "Y", "--method", m, "--json")
		if code != exitOK {
			t.Fatalf("%s: exit %d: %s", m, code, errs)
		}
		var got fitOutput
		json.Unmarshal([]byte(out), &got)
		if !got.Fits[0].Converged {
			t.Errorf("%s: %+v", m, got.Fits[0])
		}
	}
	code, out, _ := rhomark(t, "fit", "../../testdata/refdata/hbk.csv", "--y", "Y", "--psi", "bisquare", "--start", "s-estimate", "--scale", "start", "--json")
	var viaStart fitOutput
	json.Unmarshal([]byte(out), &viaStart)
	code2, out2, _ := rhomark(t, "fit", "../../testdata/refdata/hbk.csv", "--y", "Y", "--method", "mm-estimate", "--json")
	var mm fitOutput
	json.Unmarshal([]byte(out2), &mm)
	if code != exitOK || code2 != exitOK || viaStart.Fits[0].Coefficients["X1"] != mm.Fits[0].Coefficients["X1"] {
		t.Errorf("bisquare from the S-estimate with its scale should equal MM: %v vs %v", viaStart.Fits[0].Coefficients, mm.Fits[0].Coefficients)
	}
	if mm.Estimator.Scale != "s-estimate" {
		t.Errorf("MM reported scale %q, want the S-estimate's", mm.Estimator.Scale)
	}
	// Every psi option is refused with a method that has no psi, not
	// silently ignored.
	for _, opt := range [][]string{{"--psi", "huber"}, {"--const", "c=3"}, {"--kinks", "1"}, {"--rho-expr", "r*r"}} {
		code, _, errs := rhomark(t, append([]string{"fit", "../../testdata/refdata/hbk.csv", "--y", "Y", "--method", "lts"}, opt...)...)
		if code != exitUsage || !strings.Contains(errs, opt[0]) {
			t.Errorf("%s with lts: exit %d %q", opt[0], code, errs)
		}
	}
}

func TestBreakdownCommand(t *testing.T) {
	dir := t.TempDir()
	scen := filepath.Join(dir, "bd.yaml")
	os.WriteFile(scen, []byte(`
model: {n: 30, intercept: 1, columns: [{name: x, slope: 1}]}
noise: {dist: normal}
estimators:
  - {label: ls, method: ls}
  - {label: s, method: s-estimate, resampling: {subsets: 200}}
`), 0o644)
	code, out, errs := rhomark(t, "breakdown", scen, "--directions", "2", "--json")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var got struct {
		Breakdown []struct {
			Estimator    string
			M            int
			N            int
			Outcome      string
			Bound        int
			Fraction     float64
			FailedM      int    `json:"failed_m"`
			FailedStatus string `json:"failed_status"`
		}
	}
	if err := json.Unmarshal([]byte(out), &got); err != nil || len(got.Breakdown) != 2 {
		t.Fatalf("%v: %s", err, out)
	}
	// Rousseeuw & Leroy (1987), from memory: least squares breaks at 1/n;
	// the S-estimator at (⌊n/2⌋−p+2)/n = 15/30 here, the equivariance
	// bound ⌊(n−p)/2⌋+1 = 15. What the command must get right is the
	// reading: least squares broken at m = 1; S either broken at most at
	// 15, or undetermined because a fit failed first (its refinement can
	// crawl on some contaminated configurations), with the failure named;
	// never a fraction above the bound. TestReplacementBreakdown (harness)
	// checks the values themselves.
	if ls := got.Breakdown[0]; ls.Outcome != "broken" || ls.M != 1 {
		t.Errorf("ls: %+v", ls)
	}
	switch s := got.Breakdown[1]; s.Outcome {
	case "broken":
		if s.M < 1 || s.M > 15 {
			t.Errorf("s: broken at m = %d, want 1 to 15", s.M)
		}
	case "fit-failed":
		if s.FailedM < 1 || s.FailedM > 15 || s.FailedStatus == "" || s.Fraction != float64(s.FailedM)/30 {
			t.Errorf("s: fit failed but reported as %+v", s)
		}
	default:
		t.Errorf("s: outcome %q, want broken or fit-failed", s.Outcome)
	}
	for _, r := range got.Breakdown {
		if r.Bound != 15 || r.Fraction > 0.5 {
			t.Errorf("%s: bound %d, fraction %v", r.Estimator, r.Bound, r.Fraction)
		}
	}
	if code, out, _ := rhomark(t, "breakdown", scen, "--data", "../../testdata/refdata/stars_cyg.csv", "--y", "log.light"); code != exitOK || !strings.Contains(out, "stars_cyg.csv") {
		t.Errorf("--data: exit %d\n%s", code, out)
	}
	if code, _, _ := rhomark(t, "breakdown", scen, "--cell", "5"); code != exitUsage {
		t.Errorf("bad cell: exit %d", code)
	}
}

func TestCompareCommand(t *testing.T) {
	dir := t.TempDir()
	a, b := filepath.Join(dir, "a"), filepath.Join(dir, "b")
	for _, d := range []string{a, b} {
		if code, _, errs := rhomark(t, "run", "vertical-outliers", "--replicates", "32", "--keep-replicates", "--out", d); code != exitOK {
			t.Fatal(errs)
		}
	}
	code, out, errs := rhomark(t, "compare", a, b, "--junit", filepath.Join(dir, "junit.xml"))
	if code != exitOK || !strings.Contains(out, "paired:") {
		t.Fatalf("identical runs: exit %d %s\n%s", code, errs, out)
	}
	junit, _ := os.ReadFile(filepath.Join(dir, "junit.xml"))
	if !strings.Contains(string(junit), `<testsuite name="rhomark vertical-outliers paired"`) || strings.Contains(string(junit), "<failure") {
		t.Errorf("JUnit:\n%s", junit)
	}
	code, out, _ = rhomark(t, "compare", a, b, "--markdown")
	if code != exitOK || !strings.HasPrefix(out, "### rhomark compare") {
		t.Errorf("markdown: %d\n%s", code, out)
	}
	// Different scenarios are refused, naming what differs.
	c := filepath.Join(dir, "c")
	rhomark(t, "run", "heavy-tails", "--replicates", "8", "--out", c)
	code, _, errs = rhomark(t, "compare", filepath.Join(a, "vertical-outliers.json"), filepath.Join(c, "heavy-tails.json"))
	if code != exitUsage || !strings.Contains(errs, "different scenarios") || !strings.Contains(errs, "differ") {
		t.Errorf("different scenarios: exit %d %q", code, errs)
	}
	if code, _, _ := rhomark(t, "compare", a, "/no/such/dir"); code != exitUsage {
		t.Errorf("missing candidate: exit %d", code)
	}
	// Directories with two scenarios each: one JUnit document holding the
	// suites of both pairs.
	for _, d := range []string{a, b} {
		rhomark(t, "run", "heavy-tails", "--replicates", "8", "--out", d)
	}
	junitPath := filepath.Join(dir, "two.xml")
	if code, _, errs := rhomark(t, "compare", a, b, "--junit", junitPath); code != exitOK {
		t.Fatalf("two scenarios: exit %d %s", code, errs)
	}
	data, _ := os.ReadFile(junitPath)
	var doc struct {
		Suites []struct {
			Name string `xml:"name,attr"`
		} `xml:"testsuite"`
	}
	if err := xml.Unmarshal(data, &doc); err != nil || len(doc.Suites) != 3 || bytes.Count(data, []byte("<?xml")) != 1 {
		t.Errorf("JUnit for two scenarios: %v, %d suites\n%s", err, len(doc.Suites), data)
	}
	// A recorded replicate file that has gone missing is an error, not a
	// quiet fall-back to summary mode.
	os.Rename(filepath.Join(b, "vertical-outliers.replicates"), filepath.Join(dir, "moved.replicates"))
	code, _, errs = rhomark(t, "compare", filepath.Join(a, "vertical-outliers.json"), filepath.Join(b, "vertical-outliers.json"))
	if code != exitUsage || !strings.Contains(errs, "vertical-outliers.replicates") {
		t.Errorf("missing replicate file: exit %d %q", code, errs)
	}
	// A damaged results file in a directory is reported, not skipped.
	full, _ := os.ReadFile(filepath.Join(b, "heavy-tails.json"))
	os.WriteFile(filepath.Join(b, "heavy-tails.json"), full[:len(full)/2], 0o644)
	code, _, errs = rhomark(t, "compare", a, b)
	if code != exitUsage || !strings.Contains(errs, "heavy-tails.json") {
		t.Errorf("damaged results file: exit %d %q", code, errs)
	}
}

// TestReplayReproducesRun: the dataset and fits replay writes are exactly
// those of the run's replicate.
func TestReplayReproducesRun(t *testing.T) {
	dir := t.TempDir()
	if code, _, errs := rhomark(t, "run", "bad-leverage", "--replicates", "40", "--keep-replicates", "--out", dir); code != exitOK {
		t.Fatal(errs)
	}
	f, err := os.Open(filepath.Join(dir, "bad-leverage.replicates"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rr, err := results.NewReplicateReader(f)
	if err != nil {
		t.Fatal(err)
	}
	recorded := map[string][]float64{}
	for {
		rec, err := rr.Next()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		if rec.Cell == 2 && rec.Replicate == 33 {
			recorded[rr.Header.Cells[2].Estimators[rec.Estimator]] = rec.Coefficients
		}
	}
	if len(recorded) != len(rr.Header.Cells[2].Estimators) {
		t.Fatalf("recorded fits of %d estimators, the cell has %d", len(recorded), len(rr.Header.Cells[2].Estimators))
	}
	csvPath := filepath.Join(dir, "replicate.csv")
	code, out, errs := rhomark(t, "replay", "bad-leverage", "--cell", "2", "--replicate", "33", "--data-out", csvPath, "--json")
	if code != exitOK {
		t.Fatal(errs)
	}
	var got struct {
		Fits []replayFit
	}
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatal(err)
	}
	if len(got.Fits) != len(recorded) {
		t.Fatalf("replay fitted %d estimators, the run %d", len(got.Fits), len(recorded))
	}
	for _, f := range got.Fits {
		want := recorded[f.Estimator]
		if len(want) == 0 || len(f.Coefficients) != len(want) {
			t.Fatalf("%s: replay %v, run %v", f.Estimator, f.Coefficients, want)
		}
		for j := range want {
			if f.Coefficients[j] != want[j] {
				t.Errorf("%s coefficient %d: replay %v, run %v", f.Estimator, j, f.Coefficients[j], want[j])
			}
		}
		if f.Estimator == "huber" && len(f.Trace) != f.Iterations {
			t.Errorf("huber: %d trace lines for %d iterations", len(f.Trace), f.Iterations)
		}
	}
	// The written dataset refits to the same least-squares estimate.
	code, out, _ = rhomark(t, "fit", csvPath, "--y", "y", "--method", "ls", "--json")
	var fit fitOutput
	json.Unmarshal([]byte(out), &fit)
	if code != exitOK || float64(fit.Fits[0].Coefficients["x1"]) != recorded["ls"][1] {
		t.Errorf("refit of the replayed dataset: %v vs %v", fit.Fits[0].Coefficients, recorded["ls"])
	}
}
