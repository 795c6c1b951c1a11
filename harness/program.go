package harness

import (
	"errors"
	"fmt"
	"io"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/external"
	"github.com/rhomark/rhomark/scenarios"
)

// ProgramFitter is an estimators.Fitter that fits with the program of an
// estimator of method external, one dataset per call: what replay and
// breakdown use, where a run sends batches. Fitted through
// Replicator.FitWith it receives the seed and replicate the run sent.
// It is not safe for concurrent use; Close stops the program.
type ProgramFitter struct {
	proc  *external.Process
	names []string
	// Replicate and Seed are sent with the next request (the seed the
	// program may use for its own randomness). Replicator.FitWith sets
	// them as a run would.
	Replicate int
	Seed      uint64
	stderr    io.Writer
	reqs      []external.Request
	replies   []external.Reply
}

// StartProgram starts the program of spec, an estimator of method
// external of study st (whose file's folder it runs in), for datasets
// with the coefficients names. Its standard error, and a line for each
// failed fit naming the estimator and the replicate, go to stderr
// (os.Stderr when nil). Running a program needs
// the caller's consent: StartProgram does not check CheckCommands.
func StartProgram(st *scenarios.Study, spec scenarios.EstimatorSpec, names []string, stderr io.Writer) (*ProgramFitter, error) {
	if spec.Method != scenarios.MethodExternal {
		return nil, fmt.Errorf("estimator %q has method %s, not %s", spec.Label, spec.Method, scenarios.MethodExternal)
	}
	stderr = Options{Stderr: stderr}.stderrOf()
	proc, err := external.Start(commandOf(st, spec, stderr))
	if err != nil {
		return nil, err
	}
	return &ProgramFitter{proc: proc, names: names, stderr: stderr, reqs: make([]external.Request, 1), replies: make([]external.Reply, 1)}, nil
}

// Fit sends x and y to the program and records its reply in res, with a
// status from estimators.ExternalOK on; a failed fit is a status, never
// an error. ws is not used. It returns an error only when the data do not
// match the coefficient names.
func (f *ProgramFitter) Fit(x *mat.Dense, y []float64, _ *estimators.Workspace, res *estimators.Result) error {
	n, p := x.Dims()
	if p != len(f.names) || len(y) != n {
		return fmt.Errorf("a %d×%d design and %d responses for %d coefficients", n, p, len(y), len(f.names))
	}
	f.reqs[0] = external.Request{Replicate: f.Replicate, X: x, Y: y, Names: f.names, Seed: f.Seed}
	f.proc.FitBatch(f.reqs, f.replies)
	replyResult(&f.replies[0], p, res)
	if err := f.replies[0].Err; err != nil {
		fmt.Fprintf(f.stderr, "rhomark: %v\n", err)
	}
	return nil
}

// Close stops the program.
func (f *ProgramFitter) Close() error { return f.proc.Close() }

// FitWith is Fit for any estimators.Fitter: it seeds ws with the
// estimator's stream, and gives a *ProgramFitter the seed and replicate
// that a run sends its program, so that the fit is the run's.
func (r *Replicator) FitWith(label string, fit estimators.Fitter, ws *estimators.Workspace, res *estimators.Result) error {
	// A nil *ProgramFitter is a non-nil Fitter: check for it before
	// setting its fields.
	pf, isProgram := fit.(*ProgramFitter)
	if fit == nil || (isProgram && pf == nil) {
		return errors.New("no estimator to fit")
	}
	key := EstimatorKey(label)
	if isProgram {
		pf.Replicate, pf.Seed = r.rep, outsideSeed(r.seed, r.dataKey, r.rep, key)
	}
	return r.fit(key, fit, ws, res)
}
