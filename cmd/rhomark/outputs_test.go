package main

import (
	"bytes"
	"context"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/rhomark/rhomark/harness"
	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

// writeCheckpoint runs part of st in-process, as a run stopped part-way
// would, and writes its checkpoint to path. build, if not empty, stands
// for another executable's identity.
func writeCheckpoint(t *testing.T, st *scenarios.Study, path, build string) *harness.Partial {
	t.Helper()
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	_, p, err := harness.RunPartial(ctx, st, harness.Options{Replicates: 200, Workers: 1, Build: build,
		Tool:     results.Tool{Name: "rhomark", Version: toolVersion()},
		Progress: func(harness.ProgressReport) { cancel() }})
	if !errors.Is(err, context.Canceled) || p.Complete() {
		t.Fatalf("the run was not stopped part-way: %v", err)
	}
	var b bytes.Buffer
	if err := harness.WritePartial(&b, p); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestSeedHasOneParser(t *testing.T) {
	for _, bad := range []string{"1e3", "0x10", "-1", "+5", "1_000", "1.0", " 7", "18446744073709551616", ""} {
		if _, err := parseSeed(bad); err == nil {
			t.Errorf("parseSeed(%q) accepted it", bad)
		}
		for _, args := range [][]string{
			{"run", "clean-normal", "--replicates", "4", "--seed", bad},
			{"replay", "clean-normal", "--seed", bad, "--data-out", filepath.Join(t.TempDir(), "d.csv")},
			{"fit", "../../testdata/refdata/stackloss.csv", "--y", "stack.loss", "--method", "lts", "--seed", bad},
			{"breakdown", "clean-normal", "--seed", bad},
			{"breakdown", "clean-normal", "--run-seed", bad},
		} {
			code, _, errs := rhomark(t, args...)
			if code != exitUsage || !strings.Contains(errs, "-seed") || !strings.Contains(errs, "decimal digits") {
				t.Errorf("%v: exit %d, %s; want exit 2 saying what a seed is", args, code, errs)
			}
		}
	}
	if code, _, errs := rhomark(t, "breakdown", "clean-normal", "--data", "../../testdata/refdata/stackloss.csv", "--y", "stack.loss", "--run-seed", "5"); code != exitUsage || !strings.Contains(errs, "--run-seed") {
		t.Errorf("--run-seed with --data: exit %d, %s; want it refused", code, errs)
	}
	for _, good := range []struct {
		in   string
		want uint64
	}{{"0", 0}, {"1000", 1000}, {"007", 7}, {"18446744073709551615", 1<<64 - 1}} {
		if got, err := parseSeed(good.in); err != nil || got != good.want {
			t.Errorf("parseSeed(%q) = %d, %v; want %d", good.in, got, err, good.want)
		}
	}
}

// TestFreshRunKeepsCheckpoint: a fresh run into a directory holding a
// resumable checkpoint is refused, says how to resume or discard, and leaves
// the checkpoint as it was; the resume then cleans up the temporary files a
// killed run left.
func TestFreshRunKeepsCheckpoint(t *testing.T) {
	dir := t.TempDir()
	st, err := scenarios.LoadLibrary("clean-normal")
	if err != nil {
		t.Fatal(err)
	}
	cp := filepath.Join(dir, "clean-normal.checkpoint")
	writeCheckpoint(t, st, cp, "")
	before, _ := os.ReadFile(cp)
	code, _, errs := rhomark(t, "run", "clean-normal", "--replicates", "200", "--out", dir, "--quiet")
	if code != exitUsage || !strings.Contains(errs, "rhomark run --resume "+dir) || !strings.Contains(errs, "delete "+cp) {
		t.Errorf("fresh run over a checkpoint: exit %d, %s; want exit 2 saying how to resume or discard", code, errs)
	}
	if after, _ := os.ReadFile(cp); !bytes.Equal(before, after) {
		t.Error("the refused run changed the checkpoint")
	}
	leftovers := []string{filepath.Join(dir, ".clean-normal.checkpoint.tmp-123"), filepath.Join(dir, ".clean-normal.replicates.tmp-9")}
	other := filepath.Join(dir, ".flow-meter.checkpoint.tmp-5") // another scenario's: not ours to remove
	for _, f := range append(leftovers, other) {
		os.WriteFile(f, []byte("partial write"), 0o644)
	}
	// A script repeating the run's own options may resume.
	code, _, errs = rhomark(t, "run", "clean-normal", "--resume", dir, "--replicates", "200", "--seed", "1", "--quiet")
	if code != exitOK {
		t.Fatalf("resume with the checkpoint's own options: exit %d: %s", code, errs)
	}
	for _, f := range leftovers {
		if _, err := os.Stat(f); err == nil {
			t.Errorf("%s was left behind", f)
		}
	}
	if _, err := os.Stat(other); err != nil {
		t.Errorf("another scenario's temporary file was removed: %v", err)
	}
}

// TestResumeRefusesDifferences: --seed or --replicates other than the
// checkpoint's, an edited scenario file, and another build are refused,
// naming both values.
func TestResumeRefusesDifferences(t *testing.T) {
	dir := t.TempDir()
	file := filepath.Join(dir, "bench.yaml")
	src, err := scenarios.LibraryFile("clean-normal")
	if err != nil {
		t.Fatal(err)
	}
	src = []byte(strings.Replace(string(src), "name: clean-normal", "name: bench", 1))
	os.WriteFile(file, src, 0o644)
	st, err := scenarios.Load(file)
	if err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	os.Mkdir(out, 0o755)
	cp := filepath.Join(out, "bench.checkpoint")
	writeCheckpoint(t, st, cp, "")

	edited := strings.Replace(string(src), "replicates:", "# an edit\nreplicates:", 1)
	if edited == string(src) {
		t.Fatal("the edit did not apply")
	}
	editedFile := filepath.Join(dir, "edited", "bench.yaml")
	os.Mkdir(filepath.Dir(editedFile), 0o755)
	os.WriteFile(editedFile, []byte(edited), 0o644)
	cases := []struct {
		args []string
		want []string
	}{
		{[]string{"--seed", "2"}, []string{"--seed 2", "seed 1"}},
		{[]string{"--replicates", "100"}, []string{"--replicates 100", "200 replicates"}},
		{[]string{editedFile}, []string{editedFile + ":", "differs", cp}},
		// The checkpoint was written without the solver audit.
		{[]string{"--audit-solvers"}, []string{"--audit-solvers", cp, "run without it"}},
	}
	for _, c := range cases {
		code, _, errs := rhomark(t, append([]string{"run", "--resume", out, "--quiet"}, c.args...)...)
		if code != exitUsage {
			t.Errorf("%v: exit %d, want 2: %s", c.args, code, errs)
		}
		for _, w := range c.want {
			if !strings.Contains(errs, w) {
				t.Errorf("%v: %q does not say %q", c.args, errs, w)
			}
		}
	}
	other := filepath.Join(t.TempDir(), "bench.checkpoint")
	writeCheckpoint(t, st, other, "exe-0123456789abcdef")
	code, _, errs := rhomark(t, "run", "--resume", filepath.Dir(other), "--quiet")
	if code != exitUsage || !strings.Contains(errs, "exe-0123456789abcdef") || !strings.Contains(errs, harness.BuildID()) {
		t.Errorf("another build's checkpoint: exit %d, %s; want exit 2 naming both builds", code, errs)
	}
	// The unedited file resumes.
	if code, _, errs := rhomark(t, "run", file, "--resume", out, "--quiet"); code != exitOK {
		t.Errorf("resume naming the unedited file: exit %d: %s", code, errs)
	}
}

// TestOutputLock: a run into a directory whose outputs another run holds
// is refused at once; the lock is free again when its holder lets go.
func TestOutputLock(t *testing.T) {
	dir := t.TempDir()
	held, err := results.LockOutputs(dir, "clean-normal")
	if err != nil {
		t.Fatal(err)
	}
	code, _, errs := rhomark(t, "run", "clean-normal", "--replicates", "8", "--out", dir, "--quiet")
	if code != exitUsage || !strings.Contains(errs, "another rhomark process") || !strings.Contains(errs, ".clean-normal.lock") {
		t.Errorf("run into a locked directory: exit %d, %s", code, errs)
	}
	if _, err := os.Stat(filepath.Join(dir, "clean-normal.json")); err == nil {
		t.Error("the refused run wrote results")
	}
	// Another scenario's outputs in the same directory are not locked.
	if code, _, errs := rhomark(t, "run", "flow-meter", "--replicates", "8", "--out", dir, "--quiet"); code != exitOK {
		t.Errorf("another scenario into the same directory: exit %d: %s", code, errs)
	}
	held.Unlock()
	if code, _, errs := rhomark(t, "run", "clean-normal", "--replicates", "8", "--out", dir, "--quiet"); code != exitOK {
		t.Errorf("after the lock was released: exit %d: %s", code, errs)
	}
}

// TestOutputLockAcrossProcesses: a running rhomark holds the lock of its
// outputs, and the kernel frees it when the process is killed with
// SIGKILL, so the next run is not blocked by a dead one.
func TestOutputLockAcrossProcesses(t *testing.T) {
	bin := binary(t)
	dir := t.TempDir()
	cmd := exec.Command(bin, append(killedRunArgs, "--out", dir)...)
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	waitFor(t, filepath.Join(dir, "clean-normal.checkpoint"), 60*time.Second)
	_, err := results.LockOutputs(dir, "clean-normal")
	cmd.Process.Signal(syscall.SIGKILL)
	cmd.Wait()
	if !errors.Is(err, results.ErrLocked) {
		t.Errorf("while the run was going: %v, want ErrLocked", err)
	}
	l, err := results.LockOutputs(dir, "clean-normal")
	if err != nil {
		t.Fatalf("after SIGKILL: %v", err)
	}
	l.Unlock()
}

// TestSavedJSONIsWriteJSON: the results file, written cell by cell to
// bound memory, is byte for byte what WriteJSON prints.
func TestSavedJSONIsWriteJSON(t *testing.T) {
	dir := t.TempDir()
	code, out, errs := rhomark(t, "run", "flow-meter", "--replicates", "40", "--out", dir, "--json", "--quiet")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	saved, err := os.ReadFile(filepath.Join(dir, "flow-meter.json"))
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(saved, []byte(out)) {
		t.Errorf("the saved JSON (%d bytes) differs from WriteJSON's (%d bytes)", len(saved), len(out))
	}
	if !bytes.Contains(saved, []byte(`"cells": [`)) || bytes.Count(saved, []byte(`"settings"`)) < 4 {
		t.Error("the saved JSON lacks its cells")
	}
}
