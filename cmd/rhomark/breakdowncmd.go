package main

import (
	"fmt"
	"os"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/harness"
	"github.com/rhomark/rhomark/internal/csvdata"
)

func breakdownCmd(e env, args []string) error {
	fs := newFlags(e, "breakdown", "SCENARIO [--cell C --replicate R | --data DATA.csv --y COL [--x COLS]] [options]",
		"Measures the finite-sample replacement breakdown point of each estimator of\nSCENARIO on one dataset: the one replicate R of cell C draws, or your own CSV.\nm observations are replaced by a point moved ever further out, in vertical,\nleverage and random directions; the estimator breaks down at the smallest\nm/n that carries its estimate beyond any bound.")
	cell := fs.Int("cell", 0, "cell `C` of the scenario whose dataset is used")
	rep := addInt(fs.FlagSet, "replicate", 0, "replicate `R` whose dataset is used", atLeast(0), "a replicate number, 0 or more")
	data := fs.String("data", "", "measure on this CSV `file` instead of a simulated dataset")
	yCol := fs.String("y", "", "response `column` of --data")
	xCols := fs.String("x", "", "predictor `columns` of --data (default: every other column holding numbers)")
	dirs := addInt(fs.FlagSet, "directions", 6, "random `directions` besides vertical and leverage", between(0, 1000), "a number of directions from 0 to 1000")
	seed := addSeedFlag(fs.FlagSet, "seed", "`seed` of the replaced rows, directions and resampling (decimal digits; default 1)")
	runSeed := addSeedFlag(fs.FlagSet, "run-seed", "the run's root `seed` (decimal digits), if it overrode the scenario's (as replay --seed), to rebuild that run's replicate")
	asJSON := fs.Bool("json", false, "print JSON")
	lim := addLimitFlags(fs.FlagSet)
	allowCommands := addAllowCommands(fs.FlagSet)
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usagef("want one scenario (for its estimators and, without --data, its data), got %d arguments", len(pos))
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
	sc := st.Cells[*cell].Scenario
	var ests []harness.NamedEstimator
	for _, spec := range sc.Estimators {
		if spec.Outside() {
			fit, stop, err := outsideFitter(e, st, spec, sc.CoefficientNames())
			if err != nil {
				return err
			}
			defer stop()
			ests = append(ests, harness.NamedEstimator{Label: spec.Label, Fitter: fit})
			continue
		}
		est, err := spec.Build()
		if err != nil {
			return err
		}
		ests = append(ests, harness.NamedEstimator{Label: spec.Label, Estimator: est})
	}
	var x *mat.Dense
	var y []float64
	intercept := !sc.Model.Intercept.None
	source := fmt.Sprintf("%s, cell %d, replicate %d", sc.Name, *cell, *rep)
	if *data != "" {
		if *yCol == "" {
			return usagef("--data needs --y, the response column")
		}
		if _, ok := runSeed.get(); ok {
			return usagef("--run-seed rebuilds a run's simulated replicate; it is not used with --data")
		}
		x, y, err = readDesign(*data, *yCol, *xCols, intercept)
		if err != nil {
			return err
		}
		source = *data
	} else {
		rp, err := harness.NewReplicator(sc, runSeed.or(st.Base.Seed))
		if err != nil {
			return err
		}
		x, y = rp.Draw(*rep)
	}
	out, err := harness.MeasureBreakdown(x, y, intercept, ests, harness.ReplacementOptions{Directions: *dirs, Seed: seed.or(1)})
	if err != nil {
		return err
	}
	if *asJSON {
		return writeJSON(e, struct {
			Source    string                         `json:"source"`
			Breakdown []harness.ReplacementBreakdown `json:"breakdown"`
		}{source, out})
	}
	n, _ := x.Dims()
	fmt.Fprintf(e.stdout, "replacement breakdown · %s · n = %d\n", source, n)
	for _, r := range out {
		fmt.Fprintf(e.stdout, "  %-16s %s\n", r.Estimator, describeBreakdown(r))
	}
	if len(out) > 0 {
		fmt.Fprintf(e.stdout, "method: %s\n", out[0].Method)
	}
	return nil
}

// describeBreakdown says in words what the measurement found.
func describeBreakdown(r harness.ReplacementBreakdown) string {
	switch r.Outcome {
	case harness.BreakdownBroken:
		return fmt.Sprintf("%d/%d = %.3f · first broken %s", r.M, r.N, r.Fraction, r.Direction)
	case harness.BreakdownFitFailed:
		s := fmt.Sprintf("undetermined: the fit failed (%s) at m = %d, direction %s, before anything broke it; at least %d/%d = %.3f",
			r.FailedStatus, r.FailedM, r.FailedDirection, r.FailedM, r.N, r.Fraction)
		if r.M > 0 {
			s += fmt.Sprintf(", at most %d/%d = %.3f (broken %s)", r.M, r.N, float64(r.M)/float64(r.N), r.Direction)
		}
		return s
	}
	return fmt.Sprintf("at least %d/%d = %.3f (nothing broke it up to the equivariance bound ⌊(n−p)/2⌋+1 = %d)", r.Bound, r.N, r.Fraction, r.Bound)
}

// readDesign reads a CSV into a design matrix (intercept first when asked)
// and a response.
func readDesign(path, yName, xList string, intercept bool) (*mat.Dense, []float64, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, nil, err
	}
	defer f.Close()
	t, err := csvdata.Read(path, f)
	if err != nil {
		return nil, nil, dataError{err}
	}
	d, err := chooseColumns(t, yName, xList, "")
	if err != nil {
		return nil, nil, dataError{err}
	}
	return d.matrices(t, d.groups[0].rows, intercept)
}
