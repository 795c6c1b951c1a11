package main

import (
	"bufio"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/results"
)

// fakeMarker, as the first argument, makes the test binary act as an
// outside estimator fitting least squares (fakeLS) instead of running
// the tests.
const fakeMarker = "rhomark-cli-fake-ls"

func TestMain(m *testing.M) {
	if len(os.Args) >= 2 && os.Args[1] == fakeMarker {
		os.Exit(fakeLS(len(os.Args) > 2 && os.Args[2] == "v2"))
	}
	os.Exit(m.Run())
}

// fakeLS answers each request with its least-squares fit (gonum's QR),
// and says hello on standard error. Its "version 2" (v2) has a bug: it
// fails on every replicate r with r mod 5 = 2.
func fakeLS(v2 bool) int {
	in := bufio.NewReaderSize(os.Stdin, 1<<20)
	out := bufio.NewWriter(os.Stdout)
	fmt.Fprintln(os.Stderr, "meter model loaded")
	for {
		line, err := in.ReadBytes('\n')
		if len(line) == 0 && err != nil {
			return 0
		}
		var req struct {
			Replicate int         `json:"replicate"`
			X         [][]float64 `json:"x"`
			Y         []float64   `json:"y"`
		}
		if err := json.Unmarshal(line, &req); err != nil {
			return 3
		}
		x := mat.NewDense(len(req.X), len(req.X[0]), nil)
		for i, row := range req.X {
			x.SetRow(i, row)
		}
		var qr mat.QR
		qr.Factorize(x)
		var beta mat.VecDense
		switch err := qr.SolveVecTo(&beta, false, mat.NewVecDense(len(req.Y), req.Y)); {
		case err != nil:
			fmt.Fprintf(out, "{\"error\":%q}\n", err.Error())
		case v2 && req.Replicate%5 == 2:
			fmt.Fprintf(out, "{\"error\":\"index out of range\"}\n")
		default:
			b, _ := json.Marshal(map[string]any{"coefficients": beta.RawVector().Data})
			out.Write(append(b, '\n'))
		}
		out.Flush()
	}
}

// fakeBench writes a flow-meter bench scenario whose estimator "prog" runs
// the fake least-squares program (with the extra arguments), and returns
// its path.
func fakeBench(t *testing.T, extra ...string) string {
	t.Helper()
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "bench.yaml")
	src := fmt.Sprintf(`name: bench
seed: 7
replicates: 20
model:
  n: 25
  intercept: 0.2
  columns:
    - {name: volume, slope: 0.98, dist: uniform, min: 1, max: 50}
noise: {dist: normal, scale: 0.1}
estimators:
  - {label: ls, method: ls}
  - {label: prog, method: external, command: [%q, %s]}
`, exe, strings.Join(append([]string{fakeMarker}, extra...), ", "))
	if err := os.WriteFile(path, []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// TestCommandsNeedAllowCommands: run, replay and breakdown refuse a
// scenario that runs a program unless --allow-commands is given (exit 2,
// naming the label and the command), and run it with the flag.
func TestCommandsNeedAllowCommands(t *testing.T) {
	bench := fakeBench(t)
	for _, args := range [][]string{
		{"run", bench},
		{"replay", bench, "--cell", "0", "--replicate", "1", "--json"},
		{"breakdown", bench},
	} {
		code, _, errs := rhomark(t, args...)
		if code != exitUsage || !strings.Contains(errs, `"prog"`) || !strings.Contains(errs, fakeMarker) || !strings.Contains(errs, "--allow-commands") {
			t.Errorf("%s without --allow-commands: exit %d, stderr %q", args[0], code, errs)
		}
		code, out, errs := rhomark(t, append(args, "--allow-commands", "--json")...)
		if code != exitOK || !strings.Contains(out, "prog") {
			t.Errorf("%s --allow-commands: exit %d, stderr %q", args[0], code, errs)
		}
		if !strings.Contains(errs, "[prog] meter model loaded") {
			t.Errorf("%s: the program's standard error did not reach ours, prefixed: %q", args[0], errs)
		}
	}
}

// TestGoEstimatorRefused: a scenario with a go estimator cannot run from
// the command line (exit 2, naming it).
func TestGoEstimatorRefused(t *testing.T) {
	path := filepath.Join(t.TempDir(), "go.yaml")
	if err := os.WriteFile(path, []byte("model: {n: 10, columns: [{name: volume}]}\nestimators: [{label: ls}, {label: mine, method: go}]\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, cmd := range []string{"run", "replay", "breakdown"} {
		if code, _, errs := rhomark(t, cmd, path, "--allow-commands"); code != exitUsage || !strings.Contains(errs, `"mine" has method go`) {
			t.Errorf("%s: exit %d, stderr %q", cmd, code, errs)
		}
	}
}

// TestReplayExternal: replay refits an external estimator on the
// replicate's dataset; a least-squares program agrees with ls there to
// rounding (1e-9 relative; both solve by QR).
func TestReplayExternal(t *testing.T) {
	code, out, errs := rhomark(t, "replay", fakeBench(t), "--cell", "0", "--replicate", "4", "--json", "--allow-commands")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var got struct {
		Fits []replayFit `json:"fits"`
	}
	if err := json.Unmarshal([]byte(out), &got); err != nil || len(got.Fits) != 2 {
		t.Fatalf("%v: %s", err, out)
	}
	ls, prog := got.Fits[0], got.Fits[1]
	if prog.Status != "external-ok" || prog.Method != "external" || len(prog.Coefficients) != len(ls.Coefficients) {
		t.Fatalf("prog: %+v", prog)
	}
	for j := range ls.Coefficients {
		if math.Abs(prog.Coefficients[j]-ls.Coefficients[j]) > 1e-9*math.Max(1, math.Abs(ls.Coefficients[j])) {
			t.Errorf("coefficient %d: program %v, ls %v", j, prog.Coefficients[j], ls.Coefficients[j])
		}
	}
}

// exampleTool returns the first candidate program for which the check
// arguments succeed, or skips the test (fails it under
// RHOMARK_REQUIRE_TOOLS, which CI sets after installing them).
func exampleTool(t *testing.T, what, install string, candidates []string, check ...string) string {
	t.Helper()
	for _, c := range candidates {
		if path, err := exec.LookPath(c); err == nil && exec.Command(path, check...).Run() == nil {
			return path
		}
	}
	if os.Getenv("RHOMARK_REQUIRE_TOOLS") != "" {
		t.Fatalf("%s is not installed; .ci/run installs it (%s)", what, install)
	}
	t.Skipf("%s is not installed here (Debian: apt-get install %s)", what, install)
	return ""
}

// TestExampleProgramsMatchIRLS runs the shipped scenario
// examples/external/meter-bench.yaml with rhomark run: the Python and R
// example programs fit the Huber M-estimator of rhomark's own irls entry
// (same start, scale and stopping rule, tolerance 1e-10) on the same
// datasets, so in every cell each must use the same fits and match its
// bias and empirical SE to 1e-7 (per-fit differences are rounding and
// where within the tolerance each stopped, far below that).
func TestExampleProgramsMatchIRLS(t *testing.T) {
	python := exampleTool(t, "python3 with numpy", "python3-numpy", []string{"python3", "/usr/bin/python3"}, "-c", "import numpy")
	rscript := exampleTool(t, "Rscript with jsonlite", "r-base-core r-cran-jsonlite", []string{"Rscript"}, "-e", "library(jsonlite)")
	examples, err := filepath.Abs(filepath.Join("..", "..", "examples", "external"))
	if err != nil {
		t.Fatal(err)
	}
	src, err := os.ReadFile(filepath.Join(examples, "meter-bench.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	// The tools found may not be first in PATH: name them in full, in a
	// copy of the scenario in a copy of its folder (commands run in the
	// scenario file's folder), so that the source tree is not written.
	text := strings.Replace(string(src), "command: [python3,", fmt.Sprintf("command: [%q,", python), 1)
	text = strings.Replace(text, "command: [Rscript,", fmt.Sprintf("command: [%q,", rscript), 1)
	if text == string(src) {
		t.Fatal("the example scenario no longer runs python3 and Rscript")
	}
	copied := filepath.Join(t.TempDir(), "external")
	if err := os.CopyFS(copied, os.DirFS(examples)); err != nil {
		t.Fatal(err)
	}
	scenario := filepath.Join(copied, "meter-bench.yaml")
	if err := os.WriteFile(scenario, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	out := t.TempDir()
	code, _, errs := rhomark(t, "run", scenario, "--allow-commands", "--replicates", "32", "--workers", "2", "--quiet", "--out", out)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	f, err := os.Open(filepath.Join(out, "meter-bench.json"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	res, err := results.ReadJSON(f)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range res.Cells {
		byLabel := map[string]results.Estimator{}
		for _, e := range c.Estimators {
			byLabel[e.Label] = e
		}
		want := byLabel["huber"]
		for _, label := range []string{"huber-python", "huber-r"} {
			got := byLabel[label]
			if got.Convergence.Converged != want.Convergence.Converged || got.Convergence.Fits != 32 {
				t.Errorf("cell %d %s: %d of %d fits converged, huber %d", c.Index, label, got.Convergence.Converged, got.Convergence.Fits, want.Convergence.Converged)
			}
			for k, wc := range want.Coefficients {
				gc := got.Coefficients[k]
				if d := math.Abs(float64(gc.Bias.Value - wc.Bias.Value)); !(d <= 1e-7) {
					t.Errorf("cell %d %s %s: bias %v, huber %v", c.Index, label, wc.Name, gc.Bias.Value, wc.Bias.Value)
				}
				if d := math.Abs(float64(gc.EmpSE.Value - wc.EmpSE.Value)); !(d <= 1e-7) {
					t.Errorf("cell %d %s %s: empirical SE %v, huber %v", c.Index, label, wc.Name, gc.EmpSE.Value, wc.EmpSE.Value)
				}
			}
			if c.Index == 0 && !(math.Abs(float64(got.TheoryEfficiency-want.TheoryEfficiency)) < 1e-12) {
				t.Errorf("%s: theory %v, huber %v", label, got.TheoryEfficiency, want.TheoryEfficiency)
			}
		}
	}
}

// TestCompareProgramVersions: the README's regression test of a program.
// Two versions of an external program, named by two commands, make one
// study for compare: the same version again changes nothing (exit 0); a
// version that fails on some datasets is flagged (exit 1) with its new
// failures.
func TestCompareProgramVersions(t *testing.T) {
	dir := t.TempDir()
	runs := map[string]string{}
	for name, extra := range map[string][]string{"v1": nil, "v1-again": nil, "v2": {"v2"}} {
		runs[name] = filepath.Join(dir, name)
		code, _, errs := rhomark(t, "run", fakeBench(t, extra...), "--allow-commands", "--replicates", "40", "--keep-replicates", "--quiet", "--out", runs[name])
		if code != exitOK {
			t.Fatalf("%s: exit %d: %s", name, code, errs)
		}
	}
	if code, out, errs := rhomark(t, "compare", runs["v1"], runs["v1-again"]); code != exitOK {
		t.Errorf("the same program: exit %d\n%s%s", code, out, errs)
	}
	code, out, errs := rhomark(t, "compare", runs["v1"], runs["v2"])
	if code != exitFailure {
		t.Fatalf("version 2: exit %d, want 1 (flagged)\n%s%s", code, out, errs)
	}
	for _, want := range []string{"estimators.prog.command: ", "MORE FAILURES (prog", "external-ok → external-program-error"} {
		if !strings.Contains(out, want) {
			t.Errorf("report lacks %q:\n%s", want, out)
		}
	}
	// A fit that failed in one version only is a status change, not an
	// infinite move of its (NaN) coefficients.
	if strings.Contains(out, "change of an estimate| +Inf") {
		t.Errorf("a failed fit counted as an infinite move:\n%s", out)
	}
}
