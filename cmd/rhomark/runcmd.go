package main

import (
	"bytes"
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"io/fs"
	"os"
	"os/signal"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"time"

	"github.com/rhomark/rhomark/harness"
	"github.com/rhomark/rhomark/internal/atomicfile"
	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

func runCmd(e env, args []string) error {
	fs := newFlags(e, "run", "SCENARIO [options] | --resume DIR [options]",
		"Runs a scenario: SCENARIO is a YAML file, or the name of a shipped scenario\n(see 'rhomark scenarios'). Prints a summary table unless --json is given.\nWith --out, finished work is checkpointed to DIR/NAME.checkpoint, and an\ninterrupted run continues with --resume DIR. With --shard I/M (or --shards M\nunder a Slurm job array or a Kubernetes indexed job) it runs one share of the\nwork into DIR/NAME.shard-I-of-M.partial, for rhomark merge.")
	out := fs.String("out", "", "write NAME.json, NAME.csv and NAME.txt into this `directory`")
	reps := addInt(fs.FlagSet, "replicates", 0, "replicates per cell (`N`; default: the scenario's)", atLeast(0),
		"a whole number of replicates per cell, 1 or more (0: the scenario's)")
	seed := addSeedFlag(fs.FlagSet, "seed", "root seed (`S`, decimal digits; default: the scenario's)")
	workers := addInt(fs.FlagSet, "workers", 0, "parallel workers (`W`; default: all cores)", between(0, maxWorkers),
		fmt.Sprintf("a number of workers from 1 to %d (or 0: one per core)", maxWorkers))
	asJSON := fs.Bool("json", false, "print the results as JSON instead of the table")
	report := fs.Bool("report", false, "with --out, also write NAME.html (a self-contained report), NAME.md and the figures")
	quiet := fs.Bool("quiet", false, "do not draw the progress bar (it is drawn only when stderr is a terminal)")
	keep := fs.Bool("keep-replicates", false, "with --out, also keep every replicate's estimates, iterations and status in NAME.replicates (for paired comparisons)")
	resume := fs.String("resume", "", "continue the interrupted run whose checkpoint is in this `directory`")
	every := addDuration(fs.FlagSet, "checkpoint-every", 30*time.Second, "with --out, checkpoint finished work this often (`interval`; 0: only at the end)",
		func(d time.Duration) bool { return d >= 0 }, "an interval of 0 or more, such as 30s or 5m (0: only at the end)")
	var shard shardFlag
	fs.Var(&shard, "shard", "run only share `I/M` of the work (0 ≤ I < M)")
	shards := addInt(fs.FlagSet, "shards", 0, "split the work into `M` shares, the index taken from SLURM_ARRAY_TASK_ID or JOB_COMPLETION_INDEX",
		between(0, maxShards), fmt.Sprintf("a number of shares from 1 to %d", maxShards))
	lim := addLimitFlags(fs.FlagSet)
	target := addTargetFlag(fs.FlagSet)
	audit := fs.Bool("audit-solvers", false, "audit every estimator's fits: how far each stopping rule leaves the estimate from its fixed point, in standard errors (as solver-audit: true)")
	allowCommands := addAllowCommands(fs.FlagSet)
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	opt := harness.Options{Replicates: *reps, Workers: *workers, Tool: results.Tool{Name: "rhomark", Version: toolVersion()},
		AllowCommands: *allowCommands, Stderr: e.stderr, AuditSolvers: *audit}
	if s, ok := seed.get(); ok {
		opt.Seed = &s
	}
	if opt.Shard, opt.Shards, err = shardOf(shard, *shards, os.Getenv); err != nil {
		return err
	}
	if *keep && (*out == "" || *resume != "" || opt.Shards > 0) {
		return usagef("--keep-replicates needs --out, and works only for a whole run (not --resume or --shard)")
	}
	limits := lim.limits()
	if *reps > 0 {
		if l := limits.WithDefaults(); *reps > l.MaxReplicates {
			return usagef("--replicates %d exceeds the limit of %d (raise it with --max-replicates)", *reps, l.MaxReplicates)
		}
		limits.Replicates = *reps
	}

	var st *scenarios.Study
	switch {
	case *resume != "":
		if len(pos) > 1 {
			return usagef("--resume takes the scenario from the checkpoint; give no other argument (got %q)", pos)
		}
		cp, err := findCheckpoint(*resume, opt.Shard, opt.Shards)
		if err != nil {
			return err
		}
		if cp.Build != harness.BuildID() {
			build := cp.Build
			if build == "" {
				build = "(none recorded)"
			}
			return dataError{fmt.Errorf("%s was written by build %s of rhomark %s, this is build %s of rhomark %s: builds may compute different numbers, so resume with the build that started the run, or delete the checkpoint and start afresh",
				cp.Path, build, cp.Tool, harness.BuildID(), toolVersion())}
		}
		// A script may repeat the run's options when it resumes: they are
		// accepted when they agree with the checkpoint, refused otherwise.
		if s, ok := seed.get(); ok && s != cp.Seed {
			return usagef("--seed %d differs from the checkpoint's seed %d (%s); resume with --seed %d or without --seed, or start afresh in another directory", s, cp.Seed, cp.Path, cp.Seed)
		}
		if *reps != 0 && *reps != cp.Replicates {
			return usagef("--replicates %d differs from the checkpoint's %d replicates (%s); resume with --replicates %d or without it, or start afresh in another directory", *reps, cp.Replicates, cp.Path, cp.Replicates)
		}
		if *audit && !cp.AuditSolvers {
			return usagef("--audit-solvers: the checkpoint %s was run without it, so its finished fits were not audited; resume without --audit-solvers, or start afresh in another directory", cp.Path)
		}
		limits.Replicates = cp.Replicates
		if st, err = harness.StudyOf(cp, limits); err != nil {
			return err
		}
		if len(pos) == 1 {
			if err := sameScenario(pos[0], cp, st, limits); err != nil {
				return err
			}
		}
		opt.Resume, opt.Replicates = cp, cp.Replicates
		s := cp.Seed
		opt.Seed = &s
		if *out == "" {
			*out = *resume
		}
	case len(pos) != 1:
		return usagef("want one scenario (a YAML file or a shipped name), got %d arguments", len(pos))
	default:
		if st, err = loadScenario(pos[0], limits); err != nil {
			return err
		}
	}
	if err := checkCommands(st, *allowCommands); err != nil {
		return err
	}
	name, err := results.SafeName(st.Base.Name)
	if err != nil {
		return err
	}
	if *report && (*out == "" || opt.Shards > 0) {
		return usagef("--report needs --out, and a whole run (merge shards, then rhomark report)")
	}
	if opt.Shards > 0 && *out == "" {
		return usagef("--shard needs --out, the directory the shard's partial results go to")
	}
	if *out != "" {
		if err := os.MkdirAll(*out, 0o755); err != nil {
			return fmt.Errorf("cannot create the output directory: %w", err)
		}
		cpPath := checkpointPath(*out, name, opt.Shard, opt.Shards)
		lock, err := lockRun(*out, name, opt.Shard, opt.Shards)
		if err != nil {
			return err
		}
		defer lock.Unlock()
		if opt.Resume == nil || !samePath(opt.Resume.Path, cpPath) {
			if err := refuseCheckpoint(cpPath, *out, opt.Shard, opt.Shards); err != nil {
				return err
			}
		}
		opt.CheckpointEvery = *every
		opt.Checkpoint = func(p *harness.Partial) error {
			return atomicfile.Write(cpPath, func(w io.Writer) error { return harness.WritePartial(w, p) })
		}
	}
	var repFile *os.File
	repPath := filepath.Join(*out, name+".replicates")
	if *keep {
		if repFile, err = atomicfile.Create(repPath); err != nil {
			return err
		}
		defer os.Remove(repFile.Name()) // a no-op once renamed
		opt.KeepReplicates = repFile
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	bar := newProgress(e.stderr, *quiet, st.Base.Name, len(st.Cells))
	if bar != nil {
		opt.Progress = bar.update
	}
	res, part, runErr := harness.RunPartial(ctx, st, opt)
	bar.finish()
	if res == nil {
		if repFile != nil {
			repFile.Close()
		}
		return runErr
	}
	if opt.Shards > 0 {
		// A shard's output is its partial file, written by the checkpoint.
		if runErr == nil {
			fmt.Fprintf(e.stderr, "rhomark run: wrote %s (shard %d of %d: %d units); combine the shards with rhomark merge\n",
				checkpointPath(*out, name, opt.Shard, opt.Shards), opt.Shard, opt.Shards, part.DoneUnits())
		}
		return stoppedShard(runErr, *out, name, opt.Shard, opt.Shards)
	}
	res.Recommendation = results.Recommend(res, *target)
	if repFile != nil {
		if err := atomicfile.Commit(repFile, repPath); err != nil {
			return err
		}
		res.ReplicateFile = filepath.Base(repPath)
	}
	if *out != "" {
		paths, err := results.Save(*out, res)
		if err != nil {
			return err
		}
		if repFile != nil {
			paths = append(paths, filepath.Join(*out, res.ReplicateFile))
		}
		if *report {
			rp, err := writeReport(*out, res, true, st.Source)
			if err != nil {
				return err
			}
			paths = append(paths, rp...)
		}
		if res.Complete {
			os.Remove(checkpointPath(*out, name, 0, 0)) // the work is in the results now
		}
		fmt.Fprintf(e.stderr, "rhomark run: wrote %s\n", strings.Join(paths, ", "))
	}
	if *asJSON {
		if err := results.WriteJSON(e.stdout, res); err != nil {
			return err
		}
	} else if err := results.WriteTable(e.stdout, res, 100); err != nil {
		return err
	}
	return stopped(runErr, *out)
}

// maxWorkers bounds --workers: each worker holds a workspace per estimator,
// and far more workers than cores only costs memory.
const maxWorkers = 1024

// stopped turns the error of a run into the command's: an interruption
// says the work is safe and how to continue it.
func stopped(runErr error, out string) error {
	if runErr == nil {
		return nil
	}
	if errors.Is(runErr, context.Canceled) {
		msg := "stopped early; the finished replicates were summarised and the results are marked incomplete"
		if out != "" {
			msg += fmt.Sprintf("; continue with: rhomark run --resume %s", out)
		}
		return interrupted{msg}
	}
	return runErr
}

// stoppedShard is stopped for a shard, whose finished work is its partial
// file rather than a summary.
func stoppedShard(runErr error, out, name string, shard, shards int) error {
	if !errors.Is(runErr, context.Canceled) {
		return runErr
	}
	return interrupted{fmt.Sprintf("stopped early; shard %d of %d saved its finished work in %s; continue with: rhomark run --resume %s --shard %d/%d",
		shard, shards, checkpointPath(out, name, shard, shards), out, shard, shards)}
}

// sameScenario refuses to resume cp with a scenario (the argument arg,
// loaded) other than the one it was made from: an edit of the file since the
// run started would otherwise be silently ignored.
func sameScenario(arg string, cp *harness.Partial, st *scenarios.Study, limits scenarios.Limits) error {
	given, err := loadScenario(arg, limits)
	if err != nil {
		return err
	}
	if bytes.Equal(given.Source, st.Source) {
		return nil
	}
	if given.Base.Name != st.Base.Name {
		return usagef("the checkpoint %s is of scenario %s, not %s (%s)", cp.Path, st.Base.Name, given.Base.Name, arg)
	}
	line := firstDifferentLine(given.Source, st.Source)
	return usagef("%s:%d: the scenario differs from the one the checkpoint %s was made from (first difference on line %d); "+
		"resume without naming the scenario to continue the checkpoint's copy, or delete the checkpoint and start afresh with the edited file", arg, line, cp.Path, line)
}

// firstDifferentLine returns the number (from 1) of the first line at which
// a and b differ.
func firstDifferentLine(a, b []byte) int {
	la, lb := strings.Split(string(a), "\n"), strings.Split(string(b), "\n")
	for i := range min(len(la), len(lb)) {
		if strings.TrimRight(la[i], "\r") != strings.TrimRight(lb[i], "\r") {
			return i + 1
		}
	}
	return min(len(la), len(lb)) + 1
}

// samePath reports whether two paths name the same file.
func samePath(a, b string) bool {
	if a == "" || b == "" {
		return false
	}
	fa, errA := os.Stat(a)
	fb, errB := os.Stat(b)
	if errA != nil || errB != nil {
		return filepath.Clean(a) == filepath.Clean(b)
	}
	return os.SameFile(fa, fb)
}

// lockRun takes the lock on a run's outputs in dir (a whole run's, or one
// shard's, so that the shards of a job array can share a directory), and
// removes the temporary files a killed run of the same outputs left behind.
func lockRun(dir, name string, shard, shards int) (*results.OutputLock, error) {
	lockName, temps := name, []string{".checkpoint", ".json", ".csv", ".txt", "-bias.csv", ".replicates", ".html", ".md"}
	if shards > 0 {
		lockName = fmt.Sprintf("%s.shard-%d-of-%d", name, shard, shards)
		temps = []string{".partial"}
	}
	lock, err := results.LockOutputs(dir, lockName)
	if err != nil {
		if errors.Is(err, results.ErrLocked) {
			return nil, usageError{err}
		}
		return nil, err
	}
	// Holding the lock, no other run is writing these files: temporary
	// files of them are leftovers of a run that was killed.
	for _, ext := range temps {
		leftovers, _ := filepath.Glob(filepath.Join(dir, "."+lockName+ext+".tmp-*"))
		for _, f := range leftovers {
			os.Remove(f)
		}
	}
	return lock, nil
}

// refuseCheckpoint refuses to start a run afresh over the checkpoint (or
// shard partial) at path, which it would overwrite: it says how to resume
// the run or discard the checkpoint.
func refuseCheckpoint(path, dir string, shard, shards int) error {
	f, err := os.Open(path)
	if errors.Is(err, fs.ErrNotExist) {
		return nil
	}
	if err != nil {
		return err
	}
	defer f.Close()
	resume := "rhomark run --resume " + dir
	if shards > 0 {
		resume += fmt.Sprintf(" --shard %d/%d", shard, shards)
	}
	p, err := harness.ReadPartial(f)
	switch {
	case err != nil:
		return dataError{fmt.Errorf("%s: a damaged checkpoint is in the way (%v); delete it to start afresh", path, err)}
	case p.Complete() && shards > 0:
		return dataError{fmt.Errorf("%s holds this shard's finished work (%d units); merge it with rhomark merge, or delete it to run the shard again", path, p.DoneUnits())}
	case p.Complete():
		return dataError{fmt.Errorf("%s holds the checkpoint of a finished run whose results were not all written; write them with: %s, or delete %s to start afresh", path, resume, path)}
	}
	return dataError{fmt.Errorf("%s holds the checkpoint of a run not yet finished (%d of %d units done); continue it with: %s, or delete %s to start afresh", path, p.DoneUnits(), shareOf(p), resume, path)}
}

// checkpointPath names the checkpoint (or a shard's partial) file.
func checkpointPath(dir, name string, shard, shards int) string {
	if shards > 0 {
		return filepath.Join(dir, fmt.Sprintf("%s.shard-%d-of-%d.partial", name, shard, shards))
	}
	return filepath.Join(dir, name+".checkpoint")
}

// findCheckpoint reads the checkpoint to resume in dir: NAME.checkpoint, or
// the shard's partial file.
func findCheckpoint(dir string, shard, shards int) (*harness.Partial, error) {
	pattern := "*.checkpoint"
	if shards > 0 {
		pattern = fmt.Sprintf("*.shard-%d-of-%d.partial", shard, shards)
	}
	matches, _ := filepath.Glob(filepath.Join(dir, pattern))
	switch len(matches) {
	case 0:
		return nil, usagef("no checkpoint (%s) in %s: nothing to resume", pattern, dir)
	case 1:
	default:
		return nil, usagef("%d checkpoints in %s (%s); resume one run per directory", len(matches), dir, strings.Join(matches, ", "))
	}
	f, err := os.Open(matches[0])
	if err != nil {
		return nil, err
	}
	defer f.Close()
	p, err := harness.ReadPartial(f)
	if err != nil {
		return nil, dataError{fmt.Errorf("%s: %w", matches[0], err)}
	}
	p.Path = matches[0]
	return p, nil
}

// shardOf resolves the shard options: --shard I/M, or --shards M with the
// index from a Slurm job array (SLURM_ARRAY_TASK_ID) or a Kubernetes indexed
// job (JOB_COMPLETION_INDEX).
func shardOf(shard shardFlag, shards int, getenv func(string) string) (int, int, error) {
	if shard.set {
		if shards != 0 && shards != shard.m {
			return 0, 0, usagef("--shard %s and --shards %d disagree", shard.String(), shards)
		}
		return shard.i, shard.m, nil
	}
	if shards == 0 {
		return 0, 0, nil
	}
	for _, name := range []string{"SLURM_ARRAY_TASK_ID", "JOB_COMPLETION_INDEX"} {
		if v := getenv(name); v != "" {
			i, err := strconv.Atoi(v)
			if err != nil || i < 0 || i >= shards {
				return 0, 0, usagef("%s=%q is not a shard index from 0 to %d", name, v, shards-1)
			}
			return i, shards, nil
		}
	}
	return 0, 0, usagef("--shards %d needs the shard index: give --shard I/%d, or run inside a Slurm job array (SLURM_ARRAY_TASK_ID) or a Kubernetes indexed job (JOB_COMPLETION_INDEX)", shards, shards)
}

// maxShards bounds --shards.
const maxShards = 1_000_000

// limitFlags are the options that raise the resource limits.
type limitFlags struct {
	cells, n, reps *int
	work           *float64
}

func addLimitFlags(fs *flag.FlagSet) limitFlags {
	return limitFlags{
		cells: fs.Int("max-cells", 0, "refuse scenarios with more than `N` cells (default 10000)"),
		n:     fs.Int("max-n", 0, "refuse datasets of more than `N` observations (default 1000000)"),
		reps:  fs.Int("max-replicates", 0, "refuse more than `N` replicates per cell (default 10000000)"),
		work:  fs.Float64("max-work", 0, "refuse studies of more than `W` units of work, cells × replicates × estimators × n × coefficients² (default 1e13)"),
	}
}

func (l limitFlags) limits() scenarios.Limits {
	return scenarios.Limits{MaxCells: *l.cells, MaxN: *l.n, MaxReplicates: *l.reps, MaxWork: *l.work}
}

// loadScenario loads a scenario file, or a shipped scenario by name when no
// such file exists.
func loadScenario(arg string, limits scenarios.Limits) (*scenarios.Study, error) {
	st, err := scenarios.LoadWith(arg, limits)
	if err == nil {
		return st, nil
	}
	if errors.Is(err, fs.ErrNotExist) && !strings.ContainsAny(arg, `/\`) {
		st, lerr := scenarios.LoadLibraryWith(strings.TrimSuffix(arg, ".yaml"), limits)
		if lerr == nil || !errors.Is(lerr, fs.ErrNotExist) {
			return st, lerr
		}
		return nil, usagef("%s: no such file, and no shipped scenario of that name (see 'rhomark scenarios')", arg)
	}
	return nil, err
}

// isInputError reports errors caused by the user's input files. A failed
// write of an output file is not one: it is a failure (exit 1).
func isInputError(err error) bool {
	var we *results.WriteError
	if errors.As(err, &we) {
		return false
	}
	var se *scenarios.Error
	var pe *fs.PathError
	var de dataError
	return errors.As(err, &se) || errors.As(err, &pe) || errors.As(err, &de)
}
