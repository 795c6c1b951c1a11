package harness

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

// fakeMarker, as the first argument, makes the test binary act as an
// outside estimator (runFakeEstimator) instead of running the tests.
const fakeMarker = "rhomark-harness-fake"

func TestMain(m *testing.M) {
	if len(os.Args) >= 3 && os.Args[1] == fakeMarker {
		os.Exit(runFakeEstimator(os.Args[2]))
	}
	os.Exit(m.Run())
}

// fakeRequest is a request as the fake program reads it.
type fakeRequest struct {
	Replicate int         `json:"replicate"`
	Seed      uint64      `json:"seed"`
	X         [][]float64 `json:"x"`
	Y         []float64   `json:"y"`
}

// runFakeEstimator answers each request with the least-squares fit (by
// gonum's QR), misbehaving as mode says:
//
//	ls       always answers; writes its process id to standard error first
//	seeded   adds seed/2⁶⁴ · 1e-3 to the intercept, so that a result
//	         depends on the seeds the program was sent
//	flaky    replicate r misbehaves by r mod 16: 3 a line that is not
//	         JSON, 5 exits, 7 wrong length, 9 NaN, 11 an error reply, 13
//	         no reply (until killed); every other replicate is answered
//	hang     writes "waiting at r" and never answers from replicate 40 on
//	instant  answers every line with fixed coefficients without reading it
//	broken   cannot load what it needs: says so and exits at once
func runFakeEstimator(mode string) int {
	in := bufio.NewReaderSize(os.Stdin, 1<<20)
	out := bufio.NewWriter(os.Stdout)
	fmt.Fprintf(os.Stderr, "pid %d\n", os.Getpid())
	if mode == "broken" {
		fmt.Fprintln(os.Stderr, "cannot load the meter model")
		return 1
	}
	for {
		line, err := in.ReadBytes('\n')
		if len(line) == 0 && err != nil {
			return 0
		}
		if mode == "instant" {
			out.WriteString(`{"coefficients":[1,2,3]}` + "\n")
			out.Flush()
			continue
		}
		var req fakeRequest
		if err := json.Unmarshal(line, &req); err != nil {
			fmt.Fprintf(os.Stderr, "bad request: %v\n", err)
			return 3
		}
		n, p := len(req.X), len(req.X[0])
		x := mat.NewDense(n, p, nil)
		for i, row := range req.X {
			x.SetRow(i, row)
		}
		var qr mat.QR
		qr.Factorize(x)
		var beta mat.VecDense
		if err := qr.SolveVecTo(&beta, false, mat.NewVecDense(n, req.Y)); err != nil {
			fmt.Fprintf(out, "{\"error\":%q}\n", err.Error())
			out.Flush()
			continue
		}
		coefs := beta.RawVector().Data
		if mode == "seeded" {
			coefs[0] += float64(req.Seed) / math.Pow(2, 64) * 1e-3
		}
		if mode == "hang" && req.Replicate >= 40 {
			fmt.Fprintf(os.Stderr, "waiting at %d\n", req.Replicate)
			hang()
		}
		if mode == "flaky" {
			switch req.Replicate % 16 {
			case 3:
				out.WriteString("not json\n")
				out.Flush()
				continue
			case 5:
				return 1
			case 7:
				coefs = coefs[:p-1]
			case 9:
				out.WriteString(`{"coefficients":[NaN,1,2]}` + "\n")
				out.Flush()
				continue
			case 11:
				out.WriteString(`{"error":"the meter model did not load"}` + "\n")
				out.Flush()
				continue
			case 13:
				hang()
			}
		}
		b, _ := json.Marshal(map[string]any{"coefficients": coefs, "iterations": 1})
		out.Write(append(b, '\n'))
		out.Flush()
	}
}

// hang blocks for ever, reading a pipe nothing writes to (the fake
// program's silence, ended only by its being killed).
func hang() {
	r, w, err := os.Pipe()
	if err == nil {
		r.Read(make([]byte, 1))
	}
	w.Close()
}

// fakeScenario is a flow-meter calibration bench: meter reading against
// reference volume and flow rate, with stuck-sensor spikes. The program of
// estimator "prog" is the fake in the given mode.
func fakeScenario(t testing.TB, mode, timeout string) *scenarios.Study {
	t.Helper()
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	src := fmt.Sprintf(`
name: bench
seed: 2026
replicates: 64
model:
  n: 30
  intercept: 0.2
  columns:
    - {name: volume, slope: 0.98, dist: uniform, min: 1, max: 50}
    - {name: flow, slope: 0.05, dist: uniform, min: 0.5, max: 5}
noise: {dist: normal, scale: 0.1}
contamination:
  - {label: stuck, kind: vertical, fraction: 0.1, shift: 8}
estimators:
  - {label: ls, method: ls}
  - {label: prog, method: external, command: [%q, %s, %s], timeout: %s}
vary:
  contamination.stuck.fraction: [0, 0.1]
`, exe, fakeMarker, mode, timeout)
	st, err := scenarios.Parse("bench.yaml", []byte(src), scenarios.Limits{})
	if err != nil {
		t.Fatal(err)
	}
	return st
}

// syncBuffer is a bytes.Buffer safe for concurrent use.
type syncBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *syncBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *syncBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}

// pids returns the process ids the fake programs wrote to stderr.
func pids(t *testing.T, stderr string) []int {
	t.Helper()
	var out []int
	for _, m := range regexp.MustCompile(`\[prog\] pid (\d+)`).FindAllStringSubmatch(stderr, -1) {
		pid, _ := strconv.Atoi(m[1])
		out = append(out, pid)
	}
	if len(out) == 0 {
		t.Fatalf("no program wrote its pid; stderr:\n%s", stderr)
	}
	return out
}

// TestExternalMatchesBuiltIn: a program fitting least squares gives, cell
// by cell, the bias and empirical SE of rhomark's own least squares (both
// solve the same equations by QR, so they agree to rounding: 1e-9), with
// the external-ok status; its standard error reaches Options.Stderr with
// the label's prefix; and its processes are gone when the run ends.
func TestExternalMatchesBuiltIn(t *testing.T) {
	st := fakeScenario(t, "ls", "20s")
	var stderr syncBuffer
	res, err := Run(context.Background(), st, Options{Workers: 2, AllowCommands: true, Stderr: &stderr})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range res.Cells {
		ls, prog := c.Estimators[0], c.Estimators[1]
		if prog.Method != "external" || prog.Convergence.Converged != 64 || len(prog.Convergence.Statuses) != 1 || prog.Convergence.Statuses[0].Status != "external-ok" {
			t.Fatalf("cell %d: method %q, statuses %+v", c.Index, prog.Method, prog.Convergence.Statuses)
		}
		for k := range ls.Coefficients {
			a, b := ls.Coefficients[k], prog.Coefficients[k]
			for _, m := range [][2]float64{{float64(a.Bias.Value), float64(b.Bias.Value)}, {float64(a.EmpSE.Value), float64(b.EmpSE.Value)}} {
				if math.Abs(m[0]-m[1]) > 1e-9 {
					t.Errorf("cell %d %s: ls %v, program %v", c.Index, a.Name, m[0], m[1])
				}
			}
		}
	}
	checkGone(t, pids(t, stderr.String()))
}

// TestExternalDeterministic: the results of a program that uses its seed
// are byte-identical for 1 and 3 workers, for two shards merged, and for
// a run resumed from a checkpoint of half its units.
func TestExternalDeterministic(t *testing.T) {
	st := fakeScenario(t, "seeded", "20s")
	base := Options{AllowCommands: true, Stderr: &syncBuffer{}}
	run := func(opt Options) []byte {
		t.Helper()
		opt.AllowCommands, opt.Stderr = base.AllowCommands, base.Stderr
		res, err := Run(context.Background(), st, opt)
		if err != nil {
			t.Fatal(err)
		}
		return csvOf(t, res)
	}
	want := run(Options{Workers: 1})
	if got := run(Options{Workers: 3}); !bytes.Equal(got, want) {
		t.Error("3 workers differ from 1")
	}
	var parts []*Partial
	for s := range 2 {
		opt := base
		opt.Shard, opt.Shards, opt.Workers = s, 2, 1
		_, part, err := RunPartial(context.Background(), st, opt)
		if err != nil {
			t.Fatal(err)
		}
		parts = append(parts, part)
	}
	merged, mst, err := MergePartials(parts, scenariosLimits())
	if err != nil {
		t.Fatal(err)
	}
	res, err := Summarise(mst, merged, results.Tool{})
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(csvOf(t, res), want) {
		t.Error("two shards merged differ from one run")
	}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	var last *Partial
	opt := base
	opt.Workers = 1
	opt.Progress = func(r ProgressReport) { cancel() }
	opt.Checkpoint = func(p *Partial) error { last = p; return nil }
	if _, _, err := RunPartial(ctx, st, opt); err == nil || last == nil || last.Complete() {
		t.Fatalf("the run was not interrupted: %v", err)
	}
	opt = base
	opt.Resume, opt.Workers = last, 2
	if res, err = Run(context.Background(), st, opt); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(csvOf(t, res), want) {
		t.Error("a resumed run differs from one run")
	}
}

// TestResumeElsewhereKeepsCommandFolder: a scenario whose program is named
// relative to its own folder, loaded by a relative path and resumed through
// its checkpoint file from another working directory, still runs the
// program from the scenario's folder and gives the results of one run.
func TestResumeElsewhereKeepsCommandFolder(t *testing.T) {
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	root := t.TempDir()
	bench := filepath.Join(root, "bench")
	if err := os.Mkdir(bench, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.Symlink(exe, filepath.Join(bench, "prog")); err != nil {
		t.Skipf("no symbolic link to the test program: %v", err)
	}
	src := fmt.Sprintf(`
name: bench
seed: 2026
replicates: 16
model:
  n: 30
  columns:
    - {name: volume, slope: 0.98, dist: uniform, min: 1, max: 50}
noise: {dist: normal, scale: 0.1}
estimators:
  - {label: prog, method: external, command: [./prog, %s, seeded], timeout: 20s}
vary:
  noise.scale: [0.1, 0.2]
`, fakeMarker)
	if err := os.WriteFile(filepath.Join(bench, "bench.yaml"), []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	t.Chdir(root)
	st, err := scenarios.Load(filepath.Join("bench", "bench.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	base := Options{AllowCommands: true, Stderr: &syncBuffer{}, Workers: 1}
	whole, err := Run(context.Background(), st, base)
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	var last *Partial
	opt := base
	opt.Progress = func(ProgressReport) { cancel() }
	opt.Checkpoint = func(p *Partial) error { last = p; return nil }
	if _, _, err := RunPartial(ctx, st, opt); err == nil || last == nil || last.Complete() {
		t.Fatalf("the run was not interrupted: %v", err)
	}
	var file bytes.Buffer
	if err := WritePartial(&file, last); err != nil {
		t.Fatal(err)
	}

	t.Chdir(t.TempDir())
	cp, err := ReadPartial(&file)
	if err != nil {
		t.Fatal(err)
	}
	rst, err := StudyOf(cp, scenariosLimits())
	if err != nil {
		t.Fatal(err)
	}
	if got := CommandDir(rst); got != bench {
		t.Errorf("resumed from another folder, the program runs in %s, want %s", got, bench)
	}
	opt = base
	opt.Resume = cp
	res, err := Run(context.Background(), rst, opt)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(csvOf(t, res), csvOf(t, whole)) {
		t.Errorf("the resumed run differs from one run:\n%s\nwant\n%s", csvOf(t, res), csvOf(t, whole))
	}
}

// TestExternalFailuresAreStatuses: every kind of misbehaviour ends only
// its own fit, with its status, counted exactly; the run goes on, each
// failure is reported naming the estimator and the replicate, and no
// program outlives the run.
//
// The hanging fits must each cost the timeout, so it is short; a reply of
// the running fake takes microseconds, far inside it. Only the first reply
// after a start waits for the test binary to start again, which on a
// loaded machine can take longer than any short timeout: the start
// allowance is generous, so that no start passes for a hang. A hang is
// never the first request after a start (replicate 13 follows 12, which
// the same program answers), so the allowance does not lengthen the test.
func TestExternalFailuresAreStatuses(t *testing.T) {
	st := fakeScenario(t, "flaky", "300ms")
	var stderr syncBuffer
	res, err := Run(context.Background(), st, Options{Workers: 2, AllowCommands: true, Stderr: &stderr, startTimeout: time.Minute})
	if err != nil {
		t.Fatal(err)
	}
	// 64 replicates: r mod 16 takes each value 4 times.
	want := map[string]int64{"external-ok": 40, "external-bad-reply": 4, "external-exited": 4, "external-wrong-length": 4,
		"external-non-finite": 4, "external-program-error": 4, "external-timeout": 4}
	for _, c := range res.Cells {
		got := map[string]int64{}
		for _, s := range c.Estimators[1].Convergence.Statuses {
			got[s.Status] = s.Count
		}
		if fmt.Sprint(got) != fmt.Sprint(want) {
			t.Errorf("cell %d: statuses %v, want %v", c.Index, got, want)
		}
		if u := c.Estimators[1].Coefficients[1].Used; u != 40 {
			t.Errorf("cell %d: %d fits used, want 40", c.Index, u)
		}
	}
	msgs := stderr.String()
	for _, m := range []string{`external estimator "prog", replicate 13: timeout`, `external estimator "prog", replicate 3: bad-reply`,
		`external estimator "prog", replicate 5: exited`} {
		if !strings.Contains(msgs, m) {
			t.Errorf("stderr lacks %q:\n%s", m, msgs)
		}
	}
	checkGone(t, pids(t, msgs))
}

// TestBrokenProgramStopsRun: a program that never replies (it dies at
// every start) stops the run after maxSilentStarts starts per worker with
// an error naming it, rather than being restarted for every fit; its
// standard error says why, and the run's finished work is returned.
func TestBrokenProgramStopsRun(t *testing.T) {
	st := fakeScenario(t, "broken", "20s")
	var stderr syncBuffer
	res, err := Run(context.Background(), st, Options{Workers: 1, AllowCommands: true, Stderr: &stderr})
	if err == nil || !strings.Contains(err.Error(), `"prog"`) || !strings.Contains(err.Error(), "never gave a valid reply") {
		t.Fatalf("got %v, want an error naming prog", err)
	}
	if res == nil || res.Complete {
		t.Errorf("want incomplete results, got %v", res)
	}
	if n := strings.Count(stderr.String(), "[prog] cannot load the meter model"); n != maxSilentStarts {
		t.Errorf("the program was started %d times, want %d", n, maxSilentStarts)
	}
	checkGone(t, pids(t, stderr.String()))
}

// TestExternalCancelLeavesNoProcess: cancelling a run while a program is
// in the middle of a batch stops the run promptly (long before the
// program's one-minute timeout) and leaves no process behind.
func TestExternalCancelLeavesNoProcess(t *testing.T) {
	st := fakeScenario(t, "hang", "1m")
	var stderr syncBuffer
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	done := make(chan error, 1)
	go func() {
		_, err := Run(ctx, st, Options{Workers: 2, AllowCommands: true, Stderr: &stderr})
		done <- err
	}()
	for !strings.Contains(stderr.String(), "waiting at") {
		select {
		case err := <-done:
			t.Fatalf("the run ended before the program hung: %v", err)
		case <-time.After(10 * time.Millisecond):
		}
	}
	cancel()
	select {
	case err := <-done:
		if !errors.Is(err, context.Canceled) {
			t.Errorf("Run returned %v, want context.Canceled", err)
		}
	case <-time.After(30 * time.Second):
		t.Fatal("the run did not stop within 30 s of being cancelled")
	}
	checkGone(t, pids(t, stderr.String()))
}

// TestCommandsNeedConsent: without AllowCommands a scenario with a
// command is refused before anything runs, naming the label and the
// command; a program that cannot be started stops the run with an error
// naming it; a go estimator needs its Fitter.
func TestCommandsNeedConsent(t *testing.T) {
	st := fakeScenario(t, "ls", "20s")
	_, err := Run(context.Background(), st, Options{})
	var ce *CommandError
	if !errors.As(err, &ce) || ce.Label != "prog" || !strings.Contains(err.Error(), fakeMarker) {
		t.Fatalf("got %v, want a *CommandError naming prog and its command", err)
	}
	missing := fakeScenario(t, "ls", "20s")
	missing.Cells[0].Scenario.Estimators[1].Command = []string{"./no-such-meter-program"}
	missing.Cells = missing.Cells[:1]
	if _, err := Run(context.Background(), missing, Options{AllowCommands: true}); err == nil || !strings.Contains(err.Error(), `"prog"`) {
		t.Errorf("a program that cannot start: got %v, want an error naming prog", err)
	}
	gost, err := scenarios.Parse("g.yaml", []byte("model: {n: 10, columns: [{name: volume}]}\nestimators: [{label: mine, method: go}]\n"), scenarios.Limits{})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := Run(context.Background(), gost, Options{}); err == nil || !strings.Contains(err.Error(), `"mine"`) {
		t.Errorf("a go estimator without its Fitter: got %v", err)
	}
}

// TestProgramFitterReplaysRun: a ProgramFitter through Replicator.FitWith
// gives a replicate's fit exactly as the run kept it (the same dataset and
// seed).
func TestProgramFitterReplaysRun(t *testing.T) {
	st := fakeScenario(t, "seeded", "20s")
	recs, _, _ := keptRecords(t, st, Options{Workers: 2, AllowCommands: true, Stderr: &syncBuffer{}})
	sc := st.Cells[1].Scenario
	pf, err := StartProgram(st, sc.Estimators[1], sc.CoefficientNames(), &syncBuffer{})
	if err != nil {
		t.Fatal(err)
	}
	defer pf.Close()
	rp, err := NewReplicator(sc, sc.Seed)
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range []int{0, 37} {
		rp.Draw(r)
		var ws estimators.Workspace
		var res estimators.Result
		if err := rp.FitWith("prog", pf, &ws, &res); err != nil {
			t.Fatal(err)
		}
		want := recs[[2]int{1, r}]["prog"]
		if res.Status.String() != want.Status || fmt.Sprint(res.Coefficients) != fmt.Sprint(want.Coefficients) {
			t.Errorf("replicate %d: replay %v %v, run %v %v", r, res.Status, res.Coefficients, want.Status, want.Coefficients)
		}
	}
}

// TestFitWithNoFitter: FitWith refuses a nil Fitter, and a nil
// *ProgramFitter (a non-nil Fitter) as well, with an error, not a panic.
func TestFitWithNoFitter(t *testing.T) {
	sc := fakeScenario(t, "ls", "20s").Cells[0].Scenario
	rp, err := NewReplicator(sc, sc.Seed)
	if err != nil {
		t.Fatal(err)
	}
	rp.Draw(0)
	var nilProgram *ProgramFitter
	for _, tt := range []struct {
		name string
		fit  estimators.Fitter
	}{
		{"nil Fitter", nil},
		{"nil *ProgramFitter", nilProgram},
	} {
		var ws estimators.Workspace
		var res estimators.Result
		if err := rp.FitWith("prog", tt.fit, &ws, &res); err == nil || !strings.Contains(err.Error(), "no estimator") {
			t.Errorf("%s: got %v, want the error for no estimator", tt.name, err)
		}
	}
}

// TestDeclaredPsiGivesTheory: an external estimator that declares a psi
// gets the theory of an M-estimator with that psi in the clean normal
// cell, and its psi curves; one that declares none gets no theory.
// Huber (1981), Robust Statistics: Huber's psi with k = 1.345 has
// asymptotic efficiency 0.95 at the normal model.
func TestDeclaredPsiGivesTheory(t *testing.T) {
	st := fakeScenario(t, "ls", "20s")
	src := strings.Replace(string(st.Source), "method: external,", "method: external, psi: huber,", 1)
	declared, err := scenarios.Parse("bench.yaml", []byte(src), scenarios.Limits{})
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		st     *scenarios.Study
		theory bool
	}{{st, false}, {declared, true}} {
		res, err := Run(context.Background(), tc.st, Options{Workers: 1, Replicates: 2, AllowCommands: true, Stderr: &syncBuffer{}})
		if err != nil {
			t.Fatal(err)
		}
		eff := float64(res.Cells[0].Estimators[1].TheoryEfficiency)
		if got := !math.IsNaN(eff); got != tc.theory || (tc.theory && math.Abs(eff-0.95) > 0.001) {
			t.Errorf("declared psi %v: theory efficiency %v", tc.theory, eff)
		}
		if got := len(res.Functions) == 1 && res.Functions[0].Estimator == "prog"; got != tc.theory {
			t.Errorf("declared psi %v: function curves %v", tc.theory, len(res.Functions))
		}
		if p := res.Cells[0].Estimators[1]; tc.theory && (p.Psi != "huber" || p.Method != "external") {
			t.Errorf("described as %s %s", p.Method, p.Psi)
		}
	}
}

// hiddenErrors fits as its estimator does but offers no standard errors:
// a Fitter that does not implement estimators.StandardErrorer.
type hiddenErrors struct{ e estimators.Estimator }

func (h hiddenErrors) Fit(x *mat.Dense, y []float64, ws *estimators.Workspace, res *estimators.Result) error {
	return h.e.Fit(x, y, ws, res)
}

// TestGoEstimatorCoverage: a Go estimator that gives standard errors
// (estimators.StandardErrorer) has its intervals' coverage measured exactly
// as rhomark's own method's, and one that gives none has none.
func TestGoEstimatorCoverage(t *testing.T) {
	const src = `model: {n: 40, columns: [{name: volume, dist: uniform, min: 1, max: 10}]}
noise: {dist: normal, scale: 0.5}
seed: 7
replicates: 64
estimators:
  - {label: huber, method: irls, psi: huber}
  - {label: wrapped, method: go}
  - {label: hidden, method: go}
  - {label: ls, method: ls}
`
	st, err := scenarios.Parse("bench.yaml", []byte(src), scenarios.Limits{})
	if err != nil {
		t.Fatal(err)
	}
	huber, err := st.Cells[0].Scenario.Estimators[0].Build()
	if err != nil {
		t.Fatal(err)
	}
	res, err := Run(context.Background(), st, Options{Workers: 2, Fitters: map[string]estimators.Fitter{
		"wrapped": huber, "hidden": hiddenErrors{huber}}})
	if err != nil {
		t.Fatal(err)
	}
	ests := res.Cells[0].Estimators
	for k := range ests[0].Coefficients {
		own, wrapped, hidden := ests[0].Coefficients[k], ests[1].Coefficients[k], ests[2].Coefficients[k]
		if own.Intervals == 0 || wrapped.Intervals != own.Intervals || wrapped.Coverage != own.Coverage {
			t.Errorf("%s: wrapped Huber %d intervals, coverage %v; rhomark's %d, %v", own.Name, wrapped.Intervals, wrapped.Coverage.Value, own.Intervals, own.Coverage.Value)
		}
		if hidden.Intervals != 0 {
			t.Errorf("%s: %d intervals for a Go estimator without standard errors", own.Name, hidden.Intervals)
		}
	}
}
