package external

import (
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"
)

// requests returns count requests of n rows and p columns (intercept
// first) with replicates 0, 1, …, drawn from a fixed seed. The last name
// needs escaping in JSON.
func requests(count, n, p int) []Request {
	rng := rand.New(rand.NewPCG(7, 11))
	names := []string{"(intercept)"}
	for j := 1; j < p-1; j++ {
		names = append(names, "volume")
	}
	if p > 1 {
		names = append(names, "flow \"high\"\tß")
	}
	reqs := make([]Request, count)
	for r := range reqs {
		x := mat.NewDense(n, p, nil)
		y := make([]float64, n)
		for i := 0; i < n; i++ {
			x.Set(i, 0, 1)
			for j := 1; j < p; j++ {
				x.Set(i, j, 10*rng.Float64()+rng.NormFloat64()*1e-9)
			}
			y[i] = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(30)-15))
		}
		reqs[r] = Request{Replicate: r, X: x, Y: y, Names: names, Seed: rng.Uint64()}
	}
	return reqs
}

// rows returns the rows of x.
func rows(x *mat.Dense) [][]float64 {
	n, _ := x.Dims()
	out := make([][]float64, n)
	for i := range out {
		out[i] = x.RawRowView(i)
	}
	return out
}

// checkEcho fails unless rep is the fake program's echo reply to req.
func checkEcho(t *testing.T, req Request, rep Reply) {
	t.Helper()
	if rep.Status != OK || rep.Err != nil {
		t.Errorf("replicate %d: status %v, error %v; want ok", req.Replicate, rep.Status, rep.Err)
		return
	}
	want := echo(rows(req.X), req.Y)
	for j := range want {
		if rep.Coefficients[j] != want[j] {
			t.Errorf("replicate %d: coefficient %d = %v, want %v", req.Replicate, j, rep.Coefficients[j], want[j])
		}
	}
	if !rep.HasScale || rep.Scale != float64(req.Seed)/8 {
		t.Errorf("replicate %d: scale %v (given %v), want %v", req.Replicate, rep.Scale, rep.HasScale, float64(req.Seed)/8)
	}
	if rep.Iterations != len(req.Y) || rep.ProgramStatus != req.Names[len(req.Names)-1] {
		t.Errorf("replicate %d: iterations %d, status %q; want %d, %q", req.Replicate, rep.Iterations, rep.ProgramStatus, len(req.Y), req.Names[len(req.Names)-1])
	}
}

func TestFailuresEndOnlyTheirFit(t *testing.T) {
	const trigger = 2
	for _, tc := range []struct {
		mode    string
		want    Status
		starts  int           // times the program is started
		timeout time.Duration // zero: a generous one
		detail  string        // in the error message
		stderr  string        // in the prefixed standard error
	}{
		{mode: "echo", want: OK, starts: 1},
		{mode: "malformed", want: BadReply, starts: 2, detail: "expected a number"},
		{mode: "stdout-debug", want: BadReply, starts: 2, detail: "iteration 1"},
		{mode: "no-coefficients", want: BadReply, starts: 2, detail: "no coefficients"},
		{mode: "wrong-length", want: WrongLength, starts: 1, detail: "2 coefficients for 3 columns"},
		{mode: "nan", want: NonFinite, starts: 1, detail: "coefficient 1 ((intercept)) is NaN"},
		{mode: "infinity", want: NonFinite, starts: 1, detail: "-Inf"},
		{mode: "overflow", want: NonFinite, starts: 1, detail: "+Inf"},
		{mode: "na-string", want: NonFinite, starts: 1, detail: "NaN"},
		{mode: "null-coefficient", want: NonFinite, starts: 1, detail: "NaN"},
		{mode: "error", want: ProgramError, starts: 1, detail: "design is singular"},
		{mode: "not-converged", want: NotConverged, starts: 1, detail: "iteration-limit"},
		// The start timeout leaves the program time to start again on a
		// busy machine; the silent fit itself has 500 ms.
		{mode: "silent", want: Timeout, starts: 2, timeout: 500 * time.Millisecond, detail: "no reply within 500ms", stderr: "[fake] fake: going silent at replicate 2\n"},
		{mode: "exit", want: Exited, starts: 2, detail: "exit status 3", stderr: "[fake] fake: stopping at replicate 2\n"},
		{mode: "half-line-exit", want: Exited, starts: 2, detail: "ended before replying"},
	} {
		for _, batch := range []bool{true, false} {
			name := tc.mode + "/one-by-one"
			if batch {
				name = tc.mode + "/batch"
			}
			t.Run(name, func(t *testing.T) {
				timeout := tc.timeout
				if timeout == 0 {
					timeout = time.Minute
				}
				cmd := fakeCommand(t, tc.mode, trigger, timeout)
				cmd.StartTimeout = time.Minute
				stderr := newLineWriter("")
				cmd.Stderr = stderr
				p, err := Start(cmd)
				if err != nil {
					t.Fatal(err)
				}
				reqs := requests(6, 9, 3)
				out := make([]Reply, len(reqs))
				if batch {
					p.FitBatch(reqs, out)
				} else {
					for i := range reqs {
						out[i] = p.Fit(reqs[i])
					}
				}
				starts := p.Starts()
				if err := p.Close(); err != nil {
					t.Errorf("Close: %v", err)
				}
				for i, rep := range out {
					if i != trigger || tc.want == OK {
						checkEcho(t, reqs[i], rep)
						continue
					}
					if rep.Status != tc.want {
						t.Fatalf("replicate %d: status %v, want %v (error %v)", i, rep.Status, tc.want, rep.Err)
					}
					var fe *FitError
					if !errors.As(rep.Err, &fe) || fe.Label != "fake" || fe.Replicate != trigger || fe.Status != tc.want {
						t.Fatalf("replicate %d: error %#v, want a FitError for fake, replicate %d, %v", i, rep.Err, trigger, tc.want)
					}
					msg := rep.Err.Error()
					for _, part := range []string{`"fake"`, "replicate 2", tc.want.String(), tc.detail} {
						if !strings.Contains(msg, part) {
							t.Errorf("message %q does not say %q", msg, part)
						}
					}
					if tc.want == NotConverged {
						if len(rep.Coefficients) != 3 || rep.ProgramStatus != "iteration-limit" {
							t.Errorf("not converged: coefficients %v, status %q; want the 3 given, iteration-limit", rep.Coefficients, rep.ProgramStatus)
						}
					} else if len(rep.Coefficients) != 0 {
						t.Errorf("failed fit kept coefficients %v", rep.Coefficients)
					}
				}
				if starts != tc.starts {
					t.Errorf("program started %d times, want %d", starts, tc.starts)
				}
				if !strings.Contains(stderr.String(), tc.stderr) {
					t.Errorf("standard error %q does not hold %q", stderr.String(), tc.stderr)
				}
			})
		}
	}
}

func TestStderrIsPrefixedByLine(t *testing.T) {
	cmd := fakeCommand(t, "chatter", -1, time.Minute)
	stderr := newLineWriter("")
	cmd.Stderr = stderr
	p, err := Start(cmd)
	if err != nil {
		t.Fatal(err)
	}
	reqs := requests(3, 4, 2)
	out := make([]Reply, len(reqs))
	p.FitBatch(reqs, out)
	if err := p.Close(); err != nil {
		t.Fatal(err)
	}
	for i := range reqs {
		checkEcho(t, reqs[i], out[i])
	}
	want := "[fake] fitting replicate 0\n[fake] partial line 0\n" +
		"[fake] fitting replicate 1\n[fake] partial line 1\n" +
		"[fake] fitting replicate 2\n[fake] partial line 2\n"
	if got := stderr.String(); got != want {
		t.Errorf("standard error:\n%s\nwant\n%s", got, want)
	}
}

func TestProgramThatCannotRun(t *testing.T) {
	cmd := fakeCommand(t, "die-at-start", -1, time.Minute)
	stderr := newLineWriter("")
	cmd.Stderr = stderr
	p, err := Start(cmd)
	if err != nil {
		t.Fatal(err)
	}
	reqs := requests(3, 4, 2)
	out := make([]Reply, len(reqs))
	p.FitBatch(reqs, out)
	starts := p.Starts()
	p.Close()
	for i, rep := range out {
		if rep.Status != Exited || !strings.Contains(rep.Err.Error(), "exit status 2") {
			t.Errorf("replicate %d: %v, %v; want exited with exit status 2", i, rep.Status, rep.Err)
		}
	}
	if starts != 3 {
		t.Errorf("started %d times, want once per request (3)", starts)
	}
	if !strings.Contains(stderr.String(), "[fake] cannot load the meter model\n") {
		t.Errorf("standard error %q lacks the program's message", stderr.String())
	}
}

func TestRestartThatFails(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "bench")
	if err := os.Mkdir(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	cmd := fakeCommand(t, "exit", 1, time.Minute)
	cmd.Dir = dir
	p, err := Start(cmd)
	if err != nil {
		t.Fatal(err)
	}
	defer p.Close()
	// The running program keeps its directory; a new one cannot start.
	if err := os.Remove(dir); err != nil {
		t.Fatal(err)
	}
	reqs := requests(4, 3, 2)
	out := make([]Reply, len(reqs))
	p.FitBatch(reqs, out)
	checkEcho(t, reqs[0], out[0])
	if out[1].Status != Exited {
		t.Errorf("replicate 1: %v, want exited", out[1].Status)
	}
	for i := 2; i < len(reqs); i++ {
		if out[i].Status != StartFailed || !strings.Contains(out[i].Err.Error(), "cannot start the program again") ||
			!errors.Is(out[i].Err, os.ErrNotExist) {
			t.Errorf("replicate %d: %v, %v; want start-failed caused by the missing directory", i, out[i].Status, out[i].Err)
		}
	}
}

func TestStartErrors(t *testing.T) {
	good := fakeCommand(t, "echo", -1, time.Minute)
	for _, tc := range []struct {
		name string
		edit func(*Command)
		want string
	}{
		{"no args", func(c *Command) { c.Args = nil }, "no program to run"},
		{"missing program", func(c *Command) { c.Args = []string{"/nonexistent/fit_meter"} }, "starting /nonexistent/fit_meter"},
		{"missing dir", func(c *Command) { c.Dir = "/nonexistent/bench" }, "starting"},
		{"negative timeout", func(c *Command) { c.Timeout = -time.Second }, "negative"},
		{"negative start timeout", func(c *Command) { c.StartTimeout = -time.Second }, "start timeout -1s is negative"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := good
			tc.edit(&c)
			p, err := Start(c)
			if err == nil {
				p.Close()
				t.Fatal("Start succeeded")
			}
			if !strings.Contains(err.Error(), `external estimator "fake"`) || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %q should name the estimator and say %q", err, tc.want)
			}
		})
	}
}

func TestWorkingDirectory(t *testing.T) {
	dir := t.TempDir()
	cmd := fakeCommand(t, "cwd", -1, time.Minute)
	cmd.Dir = dir
	p, err := Start(cmd)
	if err != nil {
		t.Fatal(err)
	}
	defer p.Close()
	rep := p.Fit(requests(1, 3, 2)[0])
	got, err1 := filepath.EvalSymlinks(rep.ProgramStatus)
	want, err2 := filepath.EvalSymlinks(dir)
	if err1 != nil || err2 != nil || got != want {
		t.Errorf("program ran in %q, want %q (%v, %v)", rep.ProgramStatus, dir, err1, err2)
	}
}

func TestBadRequestIsNotSent(t *testing.T) {
	p, err := Start(fakeCommand(t, "echo", -1, time.Minute))
	if err != nil {
		t.Fatal(err)
	}
	defer p.Close()
	reqs := requests(5, 4, 2)
	reqs[1].Y = append([]float64(nil), reqs[1].Y...)
	reqs[1].Y[2] = math.NaN()
	reqs[3].Names = reqs[3].Names[:1]
	out := make([]Reply, len(reqs))
	p.FitBatch(reqs, out)
	for i, rep := range out {
		switch i {
		case 1, 3:
			if rep.Status != BadRequest {
				t.Errorf("replicate %d: %v, want bad-request", i, rep.Status)
			}
		default:
			checkEcho(t, reqs[i], rep)
		}
	}
	if p.Starts() != 1 {
		t.Errorf("started %d times; a bad request should not restart the program", p.Starts())
	}
}

func TestCloseCancelsAFit(t *testing.T) {
	cmd := fakeCommand(t, "silent", 1, time.Hour)
	stderr := newLineWriter("going silent")
	cmd.Stderr = stderr
	p, err := Start(cmd)
	if err != nil {
		t.Fatal(err)
	}
	reqs := requests(4, 3, 2)
	out := make([]Reply, len(reqs))
	done := make(chan struct{})
	go func() {
		p.FitBatch(reqs, out)
		close(done)
	}()
	<-stderr.seen // the program holds replicate 1
	p.Close()
	<-done
	checkEcho(t, reqs[0], out[0])
	for i := 1; i < len(reqs); i++ {
		if out[i].Status != Closed {
			t.Errorf("replicate %d: %v, want closed", i, out[i].Status)
		}
	}
}

// TestStartTimeout checks that only the first reply after a start has
// the start timeout: a program silent on its first request times out
// after both, one silent later after the timeout alone.
func TestStartTimeout(t *testing.T) {
	for _, tc := range []struct {
		trigger int
		want    string
	}{
		{0, "no reply within 1.3s"},
		{1, "no reply within 300ms"},
	} {
		cmd := fakeCommand(t, "silent", tc.trigger, 300*time.Millisecond)
		cmd.StartTimeout = time.Second
		p, err := Start(cmd)
		if err != nil {
			t.Fatal(err)
		}
		out := make([]Reply, 2)
		p.FitBatch(requests(2, 3, 2), out)
		p.Close()
		if got := out[tc.trigger]; got.Status != Timeout || !strings.Contains(got.Err.Error(), tc.want) {
			t.Errorf("silent at replicate %d: %v, %v; want a timeout saying %q", tc.trigger, got.Status, got.Err, tc.want)
		}
	}
}

func TestStatusNames(t *testing.T) {
	seen := map[string]bool{}
	for _, s := range Statuses() {
		name := s.String()
		if strings.HasPrefix(name, "unknown") || seen[name] {
			t.Errorf("status %d has name %q", s, name)
		}
		seen[name] = true
	}
	if got := Status(200).String(); got != "unknown-status(200)" {
		t.Errorf("Status(200) = %q", got)
	}
}
