package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"

	"github.com/rhomark/rhomark/internal/atomicfile"
	"github.com/rhomark/rhomark/results"
)

func compareCmd(e env, args []string) error {
	fs := newFlags(e, "compare", "BASELINE CANDIDATE [options]",
		"Compares two runs: results files (NAME.json) or directories of them (paired by\nscenario name). Runs whose scenarios differ only in solver settings (stop rules,\nstart, resampling subsets/keep, irls vs newton) are one study; the settings that\ndiffer are listed. Failures are tested on their own per cell and estimator (exact\ntests, Holm at --failure-level); the other measures through their difference and\ncombined Monte Carlo SE, flagging |z| past --threshold after Holm's correction.\nWhen both runs kept replicates (run --keep-replicates) of the same data and seed,\npaired mode compares every fit replicate by replicate and lists the status\nchanges and the largest moves.\nExit status: 0 nothing flagged, 1 something flagged, 2 bad input.")
	threshold := addFloat(fs.FlagSet, "threshold", 4, "flag |z| past this `Z` (sets the family-wise level of Holm's correction)",
		func(v float64) bool { return v > 0 }, "a positive number, such as 4")
	tol := addFloat(fs.FlagSet, "tolerance", 1e-9, "paired mode: largest accepted change of an estimate (`T`)",
		atLeast(0.0), "a non-negative number, such as 1e-9")
	failureLevel := addFloat(fs.FlagSet, "failure-level", 0.05, "family-wise `level` at which a change of failures is flagged",
		func(v float64) bool { return v > 0 && v < 1 }, "a level strictly between 0 and 1, such as 0.05")
	list := addInt(fs.FlagSet, "list", 20, "paired mode: list up to `N` status changes and N largest moves (0: none)",
		atLeast(0), "a whole number, 0 or more (0: list none)")
	anyScenario := fs.Bool("any-scenario", false, "compare runs whose scenarios differ in more than solver settings (paired if the data settings and seed agree, else summary mode with cells matched by their settings)")
	markdown := fs.Bool("markdown", false, "print Markdown (for a code review) instead of the terminal report")
	asJSON := fs.Bool("json", false, "print the comparison as JSON (a list, one entry per pair of runs) instead of the terminal report")
	junit := fs.String("junit", "", "also write JUnit XML to this `file`")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 2 {
		return usagef("want two arguments, BASELINE and CANDIDATE, got %d", len(pos))
	}
	if *markdown && *asJSON {
		return usagef("--markdown and --json each replace the terminal report; give one")
	}
	pairs, err := pairRuns(pos[0], pos[1])
	if err != nil {
		return err
	}
	opt := results.CompareOptions{Threshold: *threshold, Tolerance: *tol, FailureAlpha: *failureLevel, List: *list, AnyScenario: *anyScenario}
	if *list == 0 {
		opt.List = -1
	}
	flagged := false
	var junitRuns []results.JUnitRun
	var all []*results.Comparison
	for i, pr := range pairs {
		baseReps, err := pr.base.replicates()
		if err != nil {
			return err
		}
		candReps, err := pr.cand.replicates()
		if err != nil {
			return err
		}
		c, err := results.Compare(pr.base.res, pr.cand.res, baseReps, candReps, opt)
		if err != nil {
			if errors.Is(err, results.ErrDifferentScenarios) {
				return usageError{fmt.Errorf("%w; only solver settings (stop rules, start, resampling subsets and keep, irls vs newton) may differ for runs to be one study: to compare them anyway, add --any-scenario", err)}
			}
			if errors.Is(err, results.ErrDamagedReplicates) {
				// Bad input (exit 2), not a flagged change.
				return dataError{fmt.Errorf("%w (baseline %s, candidate %s)", err, pr.base.replicatePath(), pr.cand.replicatePath())}
			}
			return err
		}
		c.Baseline.Path, c.Candidate.Path = pr.base.path, pr.cand.path
		all = append(all, c)
		junitRuns = append(junitRuns, results.JUnitRun{Suite: "rhomark " + pr.base.res.Scenario.Name, Comparison: c})
		flagged = flagged || c.Flagged()
		if *asJSON {
			continue
		}
		if i > 0 {
			fmt.Fprintln(e.stdout)
		}
		if *markdown {
			err = results.WriteComparisonMarkdown(e.stdout, c)
		} else {
			err = results.WriteComparison(e.stdout, c)
		}
		if err != nil {
			return err
		}
	}
	if *asJSON {
		if err := results.WriteComparisonJSON(e.stdout, all); err != nil {
			return err
		}
	}
	if *junit != "" {
		var b bytes.Buffer
		if err := results.WriteComparisonJUnit(&b, junitRuns); err != nil {
			return err
		}
		if err := atomicfile.WriteFile(*junit, b.Bytes()); err != nil {
			return err
		}
	}
	if flagged {
		return changed{}
	}
	return nil
}

// changed is returned when a comparison flagged something (exit 1, with no
// further message: the report says what).
type changed struct{}

func (changed) Error() string { return "" }

// run is a loaded results file.
type loadedRun struct {
	path string
	res  *results.Results
}

// replicates returns the source of the run's replicate file, or nil when
// the run kept none. A run that recorded one that is now missing is an
// error: falling back to summary mode would hide what paired mode catches.
func (r loadedRun) replicates() (results.ReplicateSource, error) {
	if r.res.ReplicateFile == "" {
		return nil, nil
	}
	path := r.replicatePath()
	if _, err := os.Stat(path); err != nil {
		return nil, dataError{fmt.Errorf("%s records the replicate file %s, which cannot be read (%v); restore it, or rerun with --keep-replicates", r.path, path, err)}
	}
	return func() (io.ReadCloser, error) { return os.Open(path) }, nil
}

// replicatePath returns the path of the run's replicate file, or "none"
// when it kept none.
func (r loadedRun) replicatePath() string {
	if r.res.ReplicateFile == "" {
		return "none"
	}
	return filepath.Join(filepath.Dir(r.path), filepath.Base(r.res.ReplicateFile))
}

type runPair struct{ base, cand loadedRun }

// looksLikeResults reports whether data is meant as a results file: a JSON
// object with a "schema" key, or JSON that does not parse (a damaged file
// is reported, not skipped).
func looksLikeResults(data []byte) bool {
	var top map[string]json.RawMessage
	if err := json.Unmarshal(data, &top); err != nil {
		var syn *json.SyntaxError
		return errors.As(err, &syn) || errors.Is(err, io.ErrUnexpectedEOF)
	}
	_, ok := top["schema"]
	return ok
}

// loadRuns reads a results file, or every results file in a directory.
func loadRuns(arg string) ([]loadedRun, error) {
	info, err := os.Stat(arg)
	if err != nil {
		return nil, err
	}
	paths := []string{arg}
	if info.IsDir() {
		paths, _ = filepath.Glob(filepath.Join(arg, "*.json"))
		sort.Strings(paths)
	}
	var out []loadedRun
	for _, p := range paths {
		f, err := os.Open(p)
		if err != nil {
			return nil, err
		}
		data, err := io.ReadAll(f)
		f.Close()
		if err != nil {
			return nil, err
		}
		if info.IsDir() && !looksLikeResults(data) {
			continue // some other JSON file
		}
		res, err := results.ReadJSON(bytes.NewReader(data))
		if err != nil {
			return nil, dataError{fmt.Errorf("%s: %w", p, err)}
		}
		out = append(out, loadedRun{path: p, res: res})
	}
	if len(out) == 0 {
		return nil, dataError{fmt.Errorf("%s: no results files found", arg)}
	}
	return out, nil
}

// pairRuns pairs baseline and candidate runs by scenario name; single runs
// pair with each other whatever their names.
func pairRuns(a, b string) ([]runPair, error) {
	as, err := loadRuns(a)
	if err != nil {
		return nil, err
	}
	bs, err := loadRuns(b)
	if err != nil {
		return nil, err
	}
	if len(as) == 1 && len(bs) == 1 {
		return []runPair{{as[0], bs[0]}}, nil
	}
	byName := map[string]loadedRun{}
	for _, r := range bs {
		byName[r.res.Scenario.Name] = r
	}
	var out []runPair
	var missing []string
	for _, r := range as {
		c, ok := byName[r.res.Scenario.Name]
		if !ok {
			missing = append(missing, r.res.Scenario.Name)
			continue
		}
		out = append(out, runPair{r, c})
	}
	if len(missing) > 0 {
		return nil, dataError{fmt.Errorf("%s has no run of %v", b, missing)}
	}
	return out, nil
}
