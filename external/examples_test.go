package external

import (
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/psi"
)

// requireToolsEnv, when set, makes the tests that need outside programs
// fail instead of skipping where those are missing: .ci/run installs them
// and sets it.
const requireToolsEnv = "RHOMARK_REQUIRE_TOOLS"

// needTool returns the first of the candidate programs for which check
// (its arguments) succeeds, or skips the test (fails it under
// RHOMARK_REQUIRE_TOOLS) saying what to install.
func needTool(t *testing.T, what, install string, candidates []string, check ...string) string {
	t.Helper()
	for _, c := range candidates {
		path, err := exec.LookPath(c)
		if err != nil {
			continue
		}
		if exec.Command(path, check...).Run() == nil {
			return path
		}
	}
	if os.Getenv(requireToolsEnv) != "" {
		t.Fatalf("%s is not installed; .ci/run installs it (%s)", what, install)
	}
	t.Skipf("%s is not installed here, so the example is not run (Debian: apt-get install %s)", what, install)
	return ""
}

// meterBench returns the requests of count flow-meter calibration runs of
// n readings each: a meter's reading (litres) against the reference volume
// and the flow rate, y = 0.2 + 0.98·volume + 0.05·flow + N(0, 0.1²), with
// stuck-sensor spikes (about 8% of readings 5–15 L too high) and two
// mislabelled high-flow runs (flow recorded near 40 L/min, reading 20 L
// low). Invented data, for this demonstration only.
func meterBench(count, n int) []Request {
	rng := rand.New(rand.NewPCG(2026, 13))
	names := []string{"(intercept)", "volume", "flow"}
	reqs := make([]Request, count)
	for r := range reqs {
		x := mat.NewDense(n, 3, nil)
		y := make([]float64, n)
		for i := 0; i < n; i++ {
			volume := 1 + 49*rng.Float64()
			flow := 0.5 + 4.5*rng.Float64()
			y[i] = 0.2 + 0.98*volume + 0.05*flow + 0.1*rng.NormFloat64()
			switch {
			case i < 2:
				flow = 38 + 4*rng.Float64()
				y[i] -= 20
			case rng.Float64() < 0.08:
				y[i] += 5 + 10*rng.Float64()
			}
			x.SetRow(i, []float64{1, volume, flow})
		}
		reqs[r] = Request{Replicate: r, X: x, Y: y, Names: names, Seed: rng.Uint64()}
	}
	return reqs
}

// TestExamplesMatchIRLS runs each example program over the protocol on
// invented flow-meter datasets and compares its fits with rhomark's own
// Huber IRLS fit (k = 1.345, MAD scale, least-squares start, stop on a
// relative change ≤ 1e-10). Both iterate the same map from the same
// start, so they differ by rounding and by where within the tolerance
// each stopped: coefficients and scale must agree to 1e-7 relative
// (to max(1, |value|)), the iteration counts to within one.
func TestExamplesMatchIRLS(t *testing.T) {
	examples, err := filepath.Abs(filepath.Join("..", "examples", "external"))
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name string
		tool func(t *testing.T) string
		dir  string
		file string
	}{
		{"python", func(t *testing.T) string {
			// A python3 earlier in PATH may lack numpy while Debian's has it.
			return needTool(t, "python3 with numpy", "python3-numpy", []string{"python3", "/usr/bin/python3"}, "-c", "import numpy")
		}, "python", "fit_huber.py"},
		{"r", func(t *testing.T) string {
			return needTool(t, "Rscript with jsonlite", "r-base-core r-cran-jsonlite", []string{"Rscript"}, "-e", "library(jsonlite)")
		}, "r", "fit_huber.R"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			tool := tc.tool(t)
			stderr := newLineWriter("")
			p, err := Start(Command{
				Label:   "huber-" + tc.name,
				Args:    []string{tool, tc.file, "--k", "1.345", "--tol", "1e-10"},
				Dir:     filepath.Join(examples, tc.dir),
				Timeout: time.Minute,
				Stderr:  stderr,
			})
			if err != nil {
				t.Fatal(err)
			}
			reqs := meterBench(8, 40)
			out := make([]Reply, len(reqs))
			p.FitBatch(reqs, out)
			if err := p.Close(); err != nil {
				t.Errorf("Close: %v", err)
			}
			if s := stderr.String(); s != "" {
				t.Logf("standard error:\n%s", s)
			}
			e := estimators.Estimator{
				Method:   estimators.MethodIRLS,
				Psi:      psi.Huber{K: 1.345},
				Settings: estimators.Settings{ChangeTol: 1e-10},
			}
			var ws estimators.Workspace
			var want estimators.Result
			close := func(a, b float64) bool { return math.Abs(a-b) <= 1e-7*math.Max(1, math.Abs(b)) }
			for i, req := range reqs {
				if err := e.Fit(req.X, req.Y, &ws, &want); err != nil || want.Status != estimators.ConvergedChange {
					t.Fatalf("replicate %d: rhomark's fit: %v, %v", i, want.Status, err)
				}
				got := out[i]
				if got.Status != OK || got.ProgramStatus != "converged-change" {
					t.Errorf("replicate %d: %v (%q), %v", i, got.Status, got.ProgramStatus, got.Err)
					continue
				}
				for j := range want.Coefficients {
					if !close(got.Coefficients[j], want.Coefficients[j]) {
						t.Errorf("replicate %d: %s = %.12g, rhomark %.12g", i, req.Names[j], got.Coefficients[j], want.Coefficients[j])
					}
				}
				if !got.HasScale || !close(got.Scale, want.Scale) {
					t.Errorf("replicate %d: scale %.12g, rhomark %.12g", i, got.Scale, want.Scale)
				}
				if d := got.Iterations - want.Iterations; d < -1 || d > 1 {
					t.Errorf("replicate %d: %d iterations, rhomark %d", i, got.Iterations, want.Iterations)
				}
			}
		})
	}
}
