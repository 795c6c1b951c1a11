package main

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"

	"github.com/rhomark/rhomark/results"
)

func compareCmd(e env, args []string) error {
	fs := newFlags(e, "compare", "BASELINE CANDIDATE [options]",
		"Compares two runs: results files (NAME.json) or directories of them (paired by\nscenario name). Summary mode compares every measure through its difference and\ncombined Monte Carlo SE, flagging |z| past --threshold after Holm's correction.\nWhen both runs kept replicates (run --keep-replicates) of the same scenario and\nseed, paired mode compares every fit replicate by replicate.\nExit status: 0 nothing flagged, 1 something flagged, 2 bad input.")
	threshold := fs.Float64("threshold", 4, "flag |z| past this `Z` (sets the family-wise level of Holm's correction)")
	tol := fs.Float64("tolerance", 1e-9, "paired mode: largest accepted change of an estimate (`T`)")
	anyScenario := fs.Bool("any-scenario", false, "compare runs of different scenarios (summary mode, cells matched by their settings)")
	markdown := fs.Bool("markdown", false, "print Markdown (for a code review) instead of the terminal report")
	junit := fs.String("junit", "", "also write JUnit XML to this `file`")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 2 {
		return usagef("want two arguments, BASELINE and CANDIDATE, got %d", len(pos))
	}
	if !(*threshold > 0) || !(*tol >= 0) {
		return usagef("--threshold must be positive and --tolerance non-negative")
	}
	pairs, err := pairRuns(pos[0], pos[1])
	if err != nil {
		return err
	}
	opt := results.CompareOptions{Threshold: *threshold, Tolerance: *tol, AnyScenario: *anyScenario}
	flagged := false
	var junitOut io.Writer
	if *junit != "" {
		f, err := os.Create(*junit)
		if err != nil {
			return err
		}
		defer f.Close()
		junitOut = f
	}
	for i, pr := range pairs {
		c, err := results.Compare(pr.base.res, pr.cand.res, pr.base.replicates(), pr.cand.replicates(), opt)
		if err != nil {
			if errors.Is(err, results.ErrDifferentScenarios) {
				return usageError{err}
			}
			return err
		}
		c.Baseline, c.Candidate = pr.base.path, pr.cand.path
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
		if junitOut != nil {
			if err := results.WriteComparisonJUnit(junitOut, c, "rhomark "+pr.base.res.Scenario.Name); err != nil {
				return err
			}
		}
		flagged = flagged || c.Flagged()
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

// replicates returns the source of the run's replicate file, or nil.
func (r loadedRun) replicates() results.ReplicateSource {
	if r.res.ReplicateFile == "" {
		return nil
	}
	path := filepath.Join(filepath.Dir(r.path), filepath.Base(r.res.ReplicateFile))
	if _, err := os.Stat(path); err != nil {
		return nil
	}
	return func() (io.ReadCloser, error) { return os.Open(path) }
}

type runPair struct{ base, cand loadedRun }

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
		res, err := results.ReadJSON(f)
		f.Close()
		if err != nil {
			if info.IsDir() {
				continue // not a results file
			}
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
