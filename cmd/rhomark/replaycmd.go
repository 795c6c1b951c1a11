package main

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/harness"
	"github.com/rhomark/rhomark/internal/atomicfile"
	"github.com/rhomark/rhomark/scenarios"
)

// traceStep is one traced iteration, for JSON.
type traceStep struct {
	Iteration    int       `json:"iteration"`
	Coefficients []float64 `json:"coefficients"`
	Scale        float64   `json:"scale"`
	Objective    jsonFloat `json:"objective"`
	EquationNorm float64   `json:"equation_norm"`
	StepLength   float64   `json:"step_length"`
	Change       float64   `json:"change"`
	Halvings     int       `json:"halvings"`
	Fallback     bool      `json:"irls_fallback"`
	QR           bool      `json:"qr_fallback"`
	MinWeight    float64   `json:"min_weight"`
	MaxWeight    float64   `json:"max_weight"`
}

// replayFit is one estimator's replayed fit.
type replayFit struct {
	Estimator    string       `json:"estimator"`
	Method       string       `json:"method"`
	Status       string       `json:"status"`
	Iterations   int          `json:"iterations"`
	Scale        jsonFloat    `json:"scale"` // null when an external program gave none
	Coefficients []float64    `json:"coefficients"`
	Trace        []traceStep  `json:"trace"`
	Roots        []replayRoot `json:"roots,omitempty"` // each start's refit, for an estimator with roots: true
	RootScale    float64      `json:"root_scale,omitempty"`
}

func replayCmd(e env, args []string) error {
	fs := newFlags(e, "replay", "SCENARIO --cell C --replicate R [--estimator LABEL] [options]",
		"Regenerates exactly the dataset that replicate R of cell C saw, writes it as\nCSV (usable with rhomark fit), and refits the estimators with the same random\nstreams, printing the solver's trace: per iteration the coefficients, scale,\nobjective, estimating-equation norm, step length, safeguards fired and the\nsmallest and largest weight.")
	cell := fs.Int("cell", 0, "cell `C`")
	rep := addInt(fs.FlagSet, "replicate", 0, "replicate `R`", atLeast(0), "a replicate number, 0 or more")
	label := fs.String("estimator", "", "replay only the estimator with this `label`")
	dataOut := fs.String("data-out", "", "write the dataset to this CSV `file` (default NAME-cC-rR.csv; with --json, only when given)")
	seedFlag := addSeedFlag(fs.FlagSet, "seed", "the run's root `seed` (decimal digits), if it overrode the scenario's")
	asJSON := fs.Bool("json", false, "print JSON")
	lim := addLimitFlags(fs.FlagSet)
	allowCommands := addAllowCommands(fs.FlagSet)
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usagef("want one scenario, got %d arguments", len(pos))
	}
	st, err := loadScenario(pos[0], lim.limits())
	if err != nil {
		return err
	}
	if err := checkCommands(st, *allowCommands); err != nil {
		return err
	}
	if *cell < 0 || *cell >= len(st.Cells) {
		return usagef("--cell %d: the scenario has cells 0 to %d", *cell, len(st.Cells)-1)
	}
	seed := st.Base.Seed
	if s, ok := seedFlag.get(); ok {
		seed = s
	}
	sc := st.Cells[*cell].Scenario
	if *rep >= sc.Replicates {
		// Still well defined (the stream exists), but no run of this file
		// at its own replicate count fitted it; say so, then go on.
		fmt.Fprintf(e.stderr, "rhomark replay: note: replicate %d is beyond the scenario's %d replicates (0 to %d); a run with --replicates larger than %d would have fitted it\n", *rep, sc.Replicates, sc.Replicates-1, *rep)
	}
	rp, err := harness.NewReplicator(sc, seed)
	if err != nil {
		return err
	}
	x, y := rp.Draw(*rep)

	if *label != "" && !slices.ContainsFunc(sc.Estimators, func(s scenarios.EstimatorSpec) bool { return s.Label == *label }) {
		var labels []string
		for _, s := range sc.Estimators {
			labels = append(labels, s.Label)
		}
		return usagef("--estimator %q: no such estimator; labels: %s", *label, strings.Join(labels, ", "))
	}
	// The table writes the dataset to a default file; --json writes only
	// what it prints unless --data-out asks for the file.
	path := *dataOut
	if path == "" && !*asJSON {
		path = fmt.Sprintf("%s-c%d-r%d.csv", sc.Name, *cell, *rep)
	}
	if path != "" {
		if err := atomicfile.WriteFile(path, datasetCSV(sc, x, y)); err != nil {
			return err
		}
	}
	var fits []replayFit
	for _, spec := range sc.Estimators {
		if *label != "" && spec.Label != *label {
			continue
		}
		f := replayFit{Estimator: spec.Label, Method: spec.Method}
		if spec.Outside() {
			fit, stop, err := outsideFitter(e, st, spec, sc.CoefficientNames())
			if err != nil {
				return err
			}
			var res estimators.Result
			err = rp.FitWith(spec.Label, fit, &estimators.Workspace{}, &res)
			stop()
			if err != nil {
				return fmt.Errorf("estimator %s: %w", spec.Label, err)
			}
			f.Status, f.Iterations, f.Scale = res.Status.String(), res.Iterations, jsonFloat(res.Scale)
			if !slices.ContainsFunc(res.Coefficients, math.IsNaN) {
				f.Coefficients = res.Coefficients // a failed fit has none to show
			}
			fits = append(fits, f)
			continue
		}
		est, err := spec.Build()
		if err != nil {
			return err
		}
		est.Trace = func(it estimators.Iteration) {
			f.Trace = append(f.Trace, traceStep{Iteration: it.Index, Coefficients: append([]float64(nil), it.Coefficients...),
				Scale: it.Scale, Objective: jsonFloat(it.Objective), EquationNorm: it.EquationNorm, StepLength: it.StepLength, Change: it.Change,
				Halvings: it.Halvings, Fallback: it.Fallback, QR: it.QR, MinWeight: it.MinWeight, MaxWeight: it.MaxWeight})
		}
		var ws estimators.Workspace
		var res estimators.Result
		// The same dataset and stream the run gave this estimator.
		if err := rp.Fit(spec.Label, &est, &ws, &res); err != nil {
			return fmt.Errorf("estimator %s: %w", spec.Label, err)
		}
		f.Status, f.Iterations, f.Scale, f.Coefficients = res.Status.String(), res.Iterations, jsonFloat(res.Scale), append([]float64(nil), res.Coefficients...)
		if spec.Roots {
			if f.Roots, f.RootScale, err = replayRoots(rp, spec.Label, &est); err != nil {
				return err
			}
		}
		fits = append(fits, f)
	}
	if *asJSON {
		return writeJSON(e, struct {
			Dataset      string      `json:"dataset,omitempty"` // the CSV written, with --data-out
			Cell         int         `json:"cell"`
			Replicate    int         `json:"replicate"`
			Coefficients []string    `json:"coefficient_names"`
			Fits         []replayFit `json:"fits"`
		}{path, *cell, *rep, sc.CoefficientNames(), fits})
	}
	w := e.stdout
	fmt.Fprintf(w, "replay · %s · cell %d · replicate %d · dataset written to %s\n", sc.Name, *cell, *rep, path)
	names := sc.CoefficientNames()
	for _, f := range fits {
		fmt.Fprintf(w, "\n ▸ %s (%s): %s after %d iterations, scale %.6g\n", f.Estimator, f.Method, f.Status, f.Iterations, f.Scale)
		if len(f.Trace) > 0 {
			fmt.Fprintf(w, "   %4s %12s %12s %10s %10s %7s %-12s %s\n", "iter", "scale", "objective", "eq. norm", "change", "step", "safeguards", "weights [min, max]")
			for _, s := range f.Trace {
				var guards []string
				if s.Halvings > 0 {
					guards = append(guards, fmt.Sprintf("halved×%d", s.Halvings))
				}
				if s.Fallback {
					guards = append(guards, "irls")
				}
				if s.QR {
					guards = append(guards, "qr")
				}
				g := strings.Join(guards, ",")
				if g == "" {
					g = "-"
				}
				fmt.Fprintf(w, "   %4d %12.6g %12s %10.3g %10.3g %7.3g %-12s [%.3g, %.3g]\n", s.Iteration, s.Scale, num(float64(s.Objective), 6),
					s.EquationNorm, s.Change, s.StepLength, g, s.MinWeight, s.MaxWeight)
				fmt.Fprintf(w, "        β = %s\n", coefText(names, s.Coefficients))
			}
		}
		fmt.Fprintf(w, "   final β = %s\n", coefText(names, f.Coefficients))
		writeReplayRoots(w, names, f.Roots, f.RootScale)
	}
	return nil
}

// coefText formats named coefficients on one line.
func coefText(names []string, b []float64) string {
	parts := make([]string, len(b))
	for i, v := range b {
		parts[i] = fmt.Sprintf("%s %.10g", names[i], v)
	}
	return strings.Join(parts, ", ")
}

// datasetCSV renders a dataset with the predictors' names and the response
// (named y, or response if a predictor is called y), without the intercept
// column, so that rhomark fit refits it with an intercept.
func datasetCSV(sc *scenarios.Scenario, x *mat.Dense, y []float64) []byte {
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	off := 0
	if !sc.Model.Intercept.None {
		off = 1
	}
	yName := "y"
	var header []string
	for _, c := range sc.Model.Columns {
		header = append(header, c.Name)
		if c.Name == "y" {
			yName = "response"
		}
	}
	w.Write(append(header, yName))
	n, p := x.Dims()
	for i := 0; i < n; i++ {
		var row []string
		for j := off; j < p; j++ {
			row = append(row, strconv.FormatFloat(x.At(i, j), 'g', -1, 64))
		}
		w.Write(append(row, strconv.FormatFloat(y[i], 'g', -1, 64)))
	}
	w.Flush()
	return b.Bytes()
}
