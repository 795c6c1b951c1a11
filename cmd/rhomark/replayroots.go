package main

import (
	"fmt"
	"io"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/harness"
)

// replayRoot is one start's refit of a replayed root search, for JSON.
type replayRoot struct {
	Start        string      `json:"start"`
	Status       string      `json:"status"`
	Iterations   int         `json:"iterations"`
	Objective    jsonFloat   `json:"objective"`
	Root         int         `json:"root"` // the distinct root reached, numbered from 0; −1 if the refit failed
	Best         bool        `json:"best"` // the root with the smallest objective
	Coefficients []float64   `json:"coefficients"`
	Trace        []traceStep `json:"trace"`
}

// replayRoots repeats the root search a run makes for an estimator with
// roots: true on the replicate rp last drew, tracing every start's refit.
func replayRoots(rp *harness.Replicator, label string, est *estimators.Estimator) ([]replayRoot, float64, error) {
	traces := map[estimators.RootStart][]traceStep{}
	opts := estimators.RootOptions{Trace: func(s estimators.RootStart, it estimators.Iteration) {
		traces[s] = append(traces[s], traceStep{Iteration: it.Index, Coefficients: append([]float64(nil), it.Coefficients...),
			Scale: it.Scale, Objective: jsonFloat(it.Objective), EquationNorm: it.EquationNorm, StepLength: it.StepLength, Change: it.Change,
			Halvings: it.Halvings, Fallback: it.Fallback, QR: it.QR, MinWeight: it.MinWeight, MaxWeight: it.MaxWeight})
	}}
	var ws estimators.Workspace
	rs, err := rp.FindRoots(label, est, &ws, opts)
	if err != nil {
		return nil, 0, fmt.Errorf("estimator %s: root search: %w", label, err)
	}
	var out []replayRoot
	for _, r := range rs.Roots {
		out = append(out, replayRoot{Start: r.Start.String(), Status: r.Status.String(), Iterations: r.Iterations,
			Objective: jsonFloat(r.Objective), Root: r.Group, Best: rs.Best >= 0 && r.Group >= 0 && r.Group == rs.Roots[rs.Best].Group,
			Coefficients: r.Coefficients, Trace: traces[r.Start]})
	}
	return out, rs.Scale, nil
}

// writeReplayRoots prints a replayed root search: each start's trace and
// where it ended.
func writeReplayRoots(w io.Writer, names []string, roots []replayRoot, scale float64) {
	if len(roots) == 0 {
		return
	}
	distinct := 0
	for _, r := range roots {
		distinct = max(distinct, r.Root+1)
	}
	fmt.Fprintf(w, "   root search (IRLS from each start at the S-scale %.6g): %d distinct root(s)\n", scale, distinct)
	for _, r := range roots {
		mark := ""
		if r.Best {
			mark = " ◂ smallest objective"
		}
		if r.Root < 0 {
			fmt.Fprintf(w, "   · from %s: %s after %d iterations, no root reached\n", r.Start, r.Status, r.Iterations)
		} else {
			fmt.Fprintf(w, "   · from %s: %s after %d iterations, root %d, objective %s%s\n", r.Start, r.Status, r.Iterations, r.Root, num(float64(r.Objective), 8), mark)
		}
		for _, s := range r.Trace {
			fmt.Fprintf(w, "     %4d  objective %-14s change %-10.3g β = %s\n", s.Iteration, num(float64(s.Objective), 8), s.Change, coefText(names, s.Coefficients))
		}
		fmt.Fprintf(w, "     root β = %s\n", coefText(names, r.Coefficients))
	}
}
