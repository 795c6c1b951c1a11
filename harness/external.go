package harness

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"time"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/external"
	"github.com/rhomark/rhomark/scenarios"
)

// Outside estimators are those a scenario names with method external (a
// program, fitted through package external) or go (an
// estimators.Fitter the caller registers in Options.Fitters). Inside a run
// they are planned like any estimator, with a placeholder Estimator that
// carries only their declared psi (for theory and figures); each distinct
// fit of a group then gets an outsideFit saying what really fits it.
// External fits are batched: before a unit's replicates are fitted, the
// unit's datasets are drawn and sent to each program as one batch, whose
// replies the replicates then take in turn.

// noMethod is the method of an outside estimator's placeholder without a
// declared psi: no method, so no theory and no curves.
const noMethod = estimators.Method(-1)

// maxSilentStarts is how many times a worker starts a program that has
// never given a valid reply before the run stops with an error: such a
// program cannot run here (a missing library, a wrong path, a banner on
// standard output), and restarting it for every fit would only waste the
// run's time.
const maxSilentStarts = 3

// maxFailureNotes bounds the messages about failed fits written per
// program and worker; the statuses count every failure.
const maxFailureNotes = 20

// CommandError is the refusal to run a scenario whose estimator runs a
// program when Options.AllowCommands is not set.
type CommandError struct {
	// Label is the estimator's label.
	Label string
	// Command is the program and its arguments.
	Command []string
	// Dir is the folder it would run in.
	Dir string
}

// Error names the estimator, the command and its folder.
func (e *CommandError) Error() string {
	return fmt.Sprintf("estimator %q runs the command %s in %s", e.Label, quoteCommand(e.Command), e.Dir)
}

// quoteCommand writes a command as a list of quoted words.
func quoteCommand(args []string) string {
	q := make([]string, len(args))
	for i, a := range args {
		q[i] = fmt.Sprintf("%q", a)
	}
	return "[" + strings.Join(q, ", ") + "]"
}

// CommandDir is the folder the programs of st's external estimators run
// in: the scenario file's folder (Study.Dir, or File's folder from the
// working directory when Dir is empty).
func CommandDir(st *scenarios.Study) string {
	if st.Dir != "" {
		return st.Dir
	}
	dir, err := filepath.Abs(filepath.Dir(st.File))
	if err != nil {
		return filepath.Dir(st.File)
	}
	return dir
}

// CheckCommands returns a *CommandError for the first estimator of st, in
// any cell, that runs a program, and nil if none does. A run refuses such
// a scenario unless Options.AllowCommands is set.
func CheckCommands(st *scenarios.Study) error {
	for _, c := range st.Cells {
		for _, e := range c.Scenario.Estimators {
			if len(e.Command) > 0 {
				return &CommandError{Label: e.Label, Command: e.Command, Dir: CommandDir(st)}
			}
		}
	}
	return nil
}

// buildSpec builds the estimator a run plans for spec: spec.Build() for
// rhomark's own methods, and for an outside estimator a placeholder that
// carries its declared psi as an IRLS M-estimator's (its theory and
// curves), or no method at all when it declares none.
func buildSpec(spec scenarios.EstimatorSpec) (estimators.Estimator, error) {
	if !spec.Outside() {
		return spec.Build()
	}
	if spec.Psi.IsZero() {
		return estimators.Estimator{Method: noMethod}, nil
	}
	fn, err := spec.BuildPsi()
	if err != nil {
		return estimators.Estimator{}, err
	}
	return estimators.Estimator{Method: estimators.MethodIRLS, Psi: fn}, nil
}

// outsideKey identifies what fits an outside estimator, for fitIdentity:
// "" for rhomark's own methods.
func outsideKey(spec scenarios.EstimatorSpec) string {
	if !spec.Outside() {
		return ""
	}
	return spec.Method + "\x00" + spec.Timeout + "\x00" + strings.Join(spec.Command, "\x00")
}

// outsideFit is what fits one distinct outside fit of a group.
type outsideFit struct {
	cmd    external.Command  // method external
	fitter estimators.Fitter // method go
	key    string            // the program's identity among a worker's processes
}

// fitter returns what fits fp: its outside Fitter, or its estimator.
func (fp *fitPlan) fitter() estimators.Fitter {
	if fp.outside != nil && fp.outside.fitter != nil {
		return fp.outside.fitter
	}
	return &fp.est
}

// stderrOf returns where outside programs' messages go.
func (o Options) stderrOf() io.Writer {
	if o.Stderr != nil {
		return o.Stderr
	}
	return os.Stderr
}

// bindOutside gives each outside fit of the groups what fits it, and
// refuses a run whose scenario runs a program without
// Options.AllowCommands, or names a go estimator that Options.Fitters
// lacks.
func bindOutside(st *scenarios.Study, plans []cellPlan, groups []groupPlan, opt Options) error {
	if !opt.AllowCommands {
		if err := CheckCommands(st); err != nil {
			return err
		}
	}
	for gi := range groups {
		g := &groups[gi]
		for f := range g.fits {
			fp := &g.fits[f]
			var spec scenarios.EstimatorSpec
			for _, s := range plans[fp.cell].cell.Scenario.Estimators {
				if s.Label == fp.label {
					spec = s
				}
			}
			switch spec.Method {
			case scenarios.MethodExternal:
				cmd := commandOf(st, spec, opt.stderrOf())
				if opt.startTimeout > 0 {
					cmd.StartTimeout = opt.startTimeout
				}
				fp.outside = &outsideFit{key: fp.label + "\x00" + outsideKey(spec), cmd: cmd}
			case scenarios.MethodGo:
				fit := opt.Fitters[spec.Label]
				if fit == nil {
					return fmt.Errorf("estimator %q has method go, but no Fitter is registered under that label (harness.Options.Fitters)", spec.Label)
				}
				fp.outside = &outsideFit{fitter: fit, key: fp.label}
			}
		}
	}
	return nil
}

// commandOf is the command that runs the program of spec, an estimator of
// method external of study st, in the study's folder, its standard error
// going to stderr. The first reply after each start may also wait for the
// program to load its libraries, so it is allowed the same timeout.
func commandOf(st *scenarios.Study, spec scenarios.EstimatorSpec, stderr io.Writer) external.Command {
	return external.Command{Label: spec.Label, Args: spec.Command, Dir: CommandDir(st),
		Timeout: spec.TimeoutDuration(), StartTimeout: spec.TimeoutDuration(), Stderr: stderr}
}

// outsidePool holds one worker goroutine's running programs, started on
// first use and kept across units and groups. Cancelling the run's context
// closes them at once (killing a program in the middle of a batch); close
// stops them at the end of the run.
type outsidePool struct {
	stderr   io.Writer
	stop     func() bool
	closing  sync.Mutex // held while close stops the programs
	mu       sync.Mutex
	procs    map[string]*external.Process
	notes    map[string]int
	answered map[string]bool // programs that have given a valid reply
	isClosed bool
}

// newOutsidePool returns an empty pool closed when ctx is done.
func newOutsidePool(ctx context.Context, opt Options) *outsidePool {
	p := &outsidePool{stderr: opt.stderrOf()}
	p.stop = context.AfterFunc(ctx, func() { p.close() })
	return p
}

// process returns the running program of o, starting it on first use.
func (p *outsidePool) process(o *outsideFit) (*external.Process, error) {
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.isClosed {
		return nil, errors.New("the run was stopped")
	}
	if pr := p.procs[o.key]; pr != nil {
		return pr, nil
	}
	pr, err := external.Start(o.cmd)
	if err != nil {
		return nil, err
	}
	if p.procs == nil {
		p.procs = map[string]*external.Process{}
	}
	p.procs[o.key] = pr
	return pr, nil
}

// note writes the message of a failed fit, up to maxFailureNotes per
// program.
func (p *outsidePool) note(label string, err error) {
	p.mu.Lock()
	k := p.notes[label]
	if p.notes == nil {
		p.notes = map[string]int{}
	}
	p.notes[label] = k + 1
	p.mu.Unlock()
	switch {
	case k < maxFailureNotes:
		fmt.Fprintf(p.stderr, "rhomark: %v\n", err)
	case k == maxFailureNotes:
		fmt.Fprintf(p.stderr, "rhomark: external estimator %q: further failures of this worker's program are only counted in the statuses\n", label)
	}
}

// replied records whether any of replies is a valid reply of o's program
// (one that kept it running), and reports whether the program has ever
// given one.
func (p *outsidePool) replied(o *outsideFit, replies []external.Reply) bool {
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.answered[o.key] {
		return true
	}
	for i := range replies {
		switch replies[i].Status {
		case external.OK, external.NotConverged, external.ProgramError, external.WrongLength, external.NonFinite:
			if p.answered == nil {
				p.answered = map[string]bool{}
			}
			p.answered[o.key] = true
			return true
		}
	}
	return false
}

// close stops every program of the pool, at once and all together, and
// returns only when they have ended: a second call (the worker ending
// while a cancelled run's close is still killing its programs) waits for
// the first, so that no process outlives the run.
func (p *outsidePool) close() {
	if p.stop != nil {
		p.stop()
	}
	p.closing.Lock()
	defer p.closing.Unlock()
	p.mu.Lock()
	p.isClosed = true
	procs := p.procs
	p.procs = nil
	p.mu.Unlock()
	var wg sync.WaitGroup
	for _, pr := range procs {
		wg.Add(1)
		go func() {
			defer wg.Done()
			pr.Close()
		}()
	}
	wg.Wait()
}

// outsideBatch holds a worker's batch of one unit for its group's
// external fits: the unit's datasets (which the unit's replicates then
// fit, see worker.dataset), the requests and each fit's replies.
type outsideBatch struct {
	lo      int
	names   []string
	xs      []*mat.Dense
	ys      [][]float64
	reqs    []external.Request
	replies [][]external.Reply // per fit of the group; nil for the others
	nanos   []int64            // per fit: the batch's time per fit
}

// outsideSeed is the seed sent to an outside program for one replicate:
// the first word of the estimator's own stream for that replicate, so
// that it is the same for any number of workers, shards or resumes.
func outsideSeed(seed, dataKey uint64, rep int, estKey uint64) uint64 {
	s, _ := EstimatorStream(seed, dataKey, rep, estKey)
	return s
}

// fetchOutside sends replicates [lo, hi) of the group to each external
// fit as one batch and keeps the replies for takeReply. It reports false
// if the run was stopped or a program cannot be started (w.err says so).
func (w *worker) fetchOutside(ctx context.Context, lo, hi int) bool {
	g := w.group
	if w.batch == nil {
		programs := false
		for f := range g.fits {
			programs = programs || (g.fits[f].outside != nil && g.fits[f].outside.fitter == nil)
		}
		if !programs {
			return true
		}
		n, k := g.gen.Dims()
		b := &outsideBatch{names: w.plans[g.cells[0]].cell.Scenario.CoefficientNames(),
			replies: make([][]external.Reply, len(g.fits)), nanos: make([]int64, len(g.fits))}
		for range blockSize {
			b.xs = append(b.xs, mat.NewDense(n, k, nil))
			b.ys = append(b.ys, make([]float64, n))
		}
		b.reqs = make([]external.Request, blockSize)
		for f := range g.fits {
			if o := g.fits[f].outside; o != nil && o.fitter == nil {
				b.replies[f] = make([]external.Reply, blockSize)
			}
		}
		w.batch = b
	}
	b := w.batch
	b.lo = lo
	reqs := b.reqs[:hi-lo]
	for r := lo; r < hi; r++ {
		x, y := w.rp.Draw(r)
		i := r - lo
		b.xs[i].Copy(x)
		copy(b.ys[i], y)
		reqs[i] = external.Request{Replicate: r, X: b.xs[i], Y: b.ys[i], Names: b.names}
	}
	for f := range g.fits {
		fp := &g.fits[f]
		if b.replies[f] == nil {
			continue
		}
		proc, err := w.pool.process(fp.outside)
		if err != nil {
			if ctx.Err() == nil {
				w.err = err
			}
			return false
		}
		for i := range reqs {
			reqs[i].Seed = outsideSeed(w.rp.seed, w.rp.dataKey, lo+i, fp.key)
		}
		t0 := time.Now()
		// Until the program has given a valid reply, it gets one request
		// at a time, so that one that cannot run is given up quickly.
		for done := 0; done < len(reqs); {
			k := len(reqs) - done
			if !w.pool.replied(fp.outside, nil) {
				k = 1
			}
			replies := b.replies[f][done : done+k]
			proc.FitBatch(reqs[done:done+k], replies)
			if ctx.Err() != nil {
				return false
			}
			for i := range replies {
				if err := replies[i].Err; err != nil {
					w.pool.note(fp.label, err)
				}
			}
			if !w.pool.replied(fp.outside, replies) && proc.Starts() >= maxSilentStarts {
				w.err = fmt.Errorf("external estimator %q: its program %s was started %d times and never gave a valid reply (its standard error, above, may say why)",
					fp.label, quoteCommand(fp.outside.cmd.Args), proc.Starts())
				return false
			}
			done += k
		}
		b.nanos[f] = int64(time.Since(t0)) / int64(len(reqs))
	}
	return true
}

// dataset makes replicate r's dataset the one w.rp holds and returns it:
// when the unit went to programs, the copy fetchOutside drew for them
// (the same dataset, bit for bit, without drawing it again), otherwise a
// fresh draw.
func (w *worker) dataset(r int) (*mat.Dense, []float64) {
	if b := w.batch; b != nil {
		i := r - b.lo
		return w.rp.install(r, b.xs[i], b.ys[i])
	}
	return w.rp.Draw(r)
}

// takeReply records, for an external fit f, the reply to replicate r as
// its result, and reports whether f is one.
func (w *worker) takeReply(f, r int) bool {
	o := w.group.fits[f].outside
	if o == nil || o.fitter != nil {
		return false
	}
	b := w.batch
	_, p := w.group.gen.Dims()
	replyResult(&b.replies[f][r-b.lo], p, &w.res[f])
	w.nanos[f] = b.nanos[f]
	w.seOK[f], w.seT[f] = false, false
	return true
}

// standardErrors computes the standard errors of fit f, just made into
// w.res[f] with design x, into w.se[f], and says whether there are any and
// whether their intervals use Student's t. rhomark's own methods give
// theirs (Workspace.StandardErrors); a Go estimator gives them if it
// implements estimators.StandardErrorer; an external program gives none.
func (w *worker) standardErrors(fp *fitPlan, f int, x *mat.Dense, res *estimators.Result) (ok, studentT bool) {
	if !res.Status.Converged() {
		return false, false
	}
	if fp.outside == nil {
		return w.ws[f].StandardErrors(fp.est, x, res, w.se[f]), fp.est.Method.Info().Inference == estimators.StudentT
	}
	se, has := fp.outside.fitter.(estimators.StandardErrorer)
	if !has {
		return false, false
	}
	inf := se.StandardErrors(x, &w.ws[f], res, w.se[f])
	return inf != estimators.NoInference, inf == estimators.StudentT
}

// replyResult turns an outside program's reply into a Result of p
// coefficients (NaN when the reply has none to keep).
func replyResult(rep *external.Reply, p int, res *estimators.Result) {
	coefs := res.Coefficients[:0]
	if len(rep.Coefficients) == p && (rep.Status == external.OK || rep.Status == external.NotConverged) {
		coefs = append(coefs, rep.Coefficients...)
	} else {
		for range p {
			coefs = append(coefs, math.NaN())
		}
	}
	scale := math.NaN()
	if rep.HasScale {
		scale = rep.Scale
	}
	*res = estimators.Result{Coefficients: coefs, Scale: scale, Iterations: rep.Iterations, Status: statusOf(rep.Status),
		EquationNorm: math.NaN(), Objective: math.NaN()}
}

// statusOf is the fit status of an outside program's reply status.
func statusOf(s external.Status) estimators.Status {
	switch s {
	case external.OK:
		return estimators.ExternalOK
	case external.NotConverged:
		return estimators.ExternalNotConverged
	case external.ProgramError:
		return estimators.ExternalProgramError
	case external.BadReply:
		return estimators.ExternalBadReply
	case external.WrongLength:
		return estimators.ExternalWrongLength
	case external.NonFinite:
		return estimators.ExternalNonFinite
	case external.Timeout:
		return estimators.ExternalTimeout
	case external.StartFailed:
		return estimators.ExternalStartFailed
	case external.BadRequest:
		return estimators.ExternalBadRequest
	}
	// Exited, and Closed (a stopped run, whose unfinished unit is dropped).
	return estimators.ExternalExited
}
