package main

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"os/signal"
	"path/filepath"
	"strings"
	"syscall"

	"github.com/rhomark/rhomark/harness"
	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

func runCmd(e env, args []string) error {
	fs := newFlags(e, "run", "SCENARIO [options]",
		"Runs a scenario: SCENARIO is a YAML file, or the name of a shipped scenario\n(see 'rhomark scenarios'). Prints a summary table unless --json is given.")
	out := fs.String("out", "", "write NAME.json, NAME.csv and NAME.txt into this `directory`")
	reps := fs.Int("replicates", 0, "replicates per cell (`N`; default: the scenario's)")
	seed := fs.String("seed", "", "root seed (`S`; default: the scenario's)")
	workers := fs.Int("workers", 0, "parallel workers (`W`; default: all cores)")
	asJSON := fs.Bool("json", false, "print the results as JSON instead of the table")
	keep := fs.Bool("keep-replicates", false, "with --out, also keep every replicate's estimates, iterations and status in NAME.replicates (for paired comparisons)")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usagef("want one scenario (a YAML file or a shipped name), got %d arguments", len(pos))
	}
	if *reps < 0 {
		return usagef("--replicates must be positive, got %d", *reps)
	}
	if *workers < 0 {
		return usagef("--workers must be positive, got %d", *workers)
	}
	opt := harness.Options{Replicates: *reps, Workers: *workers, Tool: results.Tool{Name: "rhomark", Version: version}}
	if *seed != "" {
		var s uint64
		if _, err := fmt.Sscan(*seed, &s); err != nil {
			return usagef("--seed must be a whole number from 0 to 18446744073709551615, got %q", *seed)
		}
		opt.Seed = &s
	}
	if *keep && *out == "" {
		return usagef("--keep-replicates needs --out, the directory the replicate file goes to")
	}
	st, err := loadScenario(pos[0])
	if err != nil {
		return err
	}
	var repFile *os.File
	if *keep {
		name, err := results.SafeName(st.Base.Name)
		if err != nil {
			return err
		}
		if err := os.MkdirAll(*out, 0o755); err != nil {
			return err
		}
		if repFile, err = os.CreateTemp(*out, "."+name+".replicates.tmp-*"); err != nil {
			return fmt.Errorf("cannot write the replicate file: %w", err)
		}
		defer os.Remove(repFile.Name()) // a no-op once renamed
		opt.KeepReplicates = repFile
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	res, runErr := harness.Run(ctx, st, opt)
	if res == nil {
		if repFile != nil {
			repFile.Close()
		}
		return runErr
	}
	if repFile != nil {
		final := filepath.Join(*out, res.Scenario.Name+".replicates")
		if err := finishFile(repFile, final); err != nil {
			return err
		}
		res.ReplicateFile = filepath.Base(final)
	}
	if *out != "" {
		paths, err := results.Save(*out, res)
		if err != nil {
			return err
		}
		if repFile != nil {
			paths = append(paths, filepath.Join(*out, res.ReplicateFile))
		}
		fmt.Fprintf(e.stderr, "rhomark run: wrote %s\n", strings.Join(paths, ", "))
	}
	if *asJSON {
		if err := results.WriteJSON(e.stdout, res); err != nil {
			return err
		}
	} else if err := results.WriteTable(e.stdout, res, 80); err != nil {
		return err
	}
	if runErr != nil {
		if errors.Is(runErr, context.Canceled) {
			return interrupted{"stopped early; the finished replicates were summarised and the results are marked incomplete"}
		}
		return runErr
	}
	return nil
}

// finishFile syncs and closes a temporary file and renames it to path.
func finishFile(f *os.File, path string) error {
	if err := f.Chmod(0o644); err != nil {
		f.Close()
		return fmt.Errorf("cannot write %s: %w", path, err)
	}
	if err := f.Sync(); err != nil {
		f.Close()
		return fmt.Errorf("cannot write %s: %w", path, err)
	}
	if err := f.Close(); err != nil {
		return fmt.Errorf("cannot write %s: %w", path, err)
	}
	if err := os.Rename(f.Name(), path); err != nil {
		return fmt.Errorf("cannot write %s: %w", path, err)
	}
	return nil
}

// loadScenario loads a scenario file, or a shipped scenario by name when no
// such file exists.
func loadScenario(arg string) (*scenarios.Study, error) {
	st, err := scenarios.Load(arg)
	if err == nil {
		return st, nil
	}
	if errors.Is(err, fs.ErrNotExist) && !strings.ContainsAny(arg, `/\`) {
		name := strings.TrimSuffix(arg, ".yaml")
		if _, lerr := scenarios.LibraryFile(name); lerr == nil {
			return scenarios.LoadLibrary(name)
		}
		return nil, usagef("%s: no such file, and no shipped scenario of that name (see 'rhomark scenarios')", arg)
	}
	return nil, err
}

// isInputError reports errors caused by the user's input files.
func isInputError(err error) bool {
	var se *scenarios.Error
	var pe *fs.PathError
	var de dataError
	return errors.As(err, &se) || errors.As(err, &pe) || errors.As(err, &de)
}
