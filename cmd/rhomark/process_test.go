package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"
)

var (
	buildOnce sync.Once
	binPath   string
	buildErr  error
)

// testCommit is the commit the test binary is linked with, as a release
// build would be (go build -ldflags "-X main.commit=...").
const testCommit = "0123456789abcdef0123456789abcdef01234567"

// binary builds the rhomark command once for tests that need a real process
// (signals, killing, the linked commit).
func binary(t *testing.T) string {
	t.Helper()
	buildOnce.Do(func() {
		dir, err := os.MkdirTemp("", "rhomark-bin-")
		if err != nil {
			buildErr = err
			return
		}
		binPath = filepath.Join(dir, "rhomark")
		out, err := exec.Command("go", "build", "-buildvcs=false", "-ldflags", "-X main.commit="+testCommit, "-o", binPath, ".").CombinedOutput()
		if err != nil {
			buildErr = err
			t.Logf("%s", out)
		}
	})
	if buildErr != nil {
		t.Fatalf("building rhomark: %v", buildErr)
	}
	return binPath
}

// waitFor polls until path exists.
func waitFor(t *testing.T, path string, limit time.Duration) {
	t.Helper()
	deadline := time.Now().Add(limit)
	for time.Now().Before(deadline) {
		if _, err := os.Stat(path); err == nil {
			return
		}
		time.Sleep(5 * time.Millisecond)
	}
	t.Fatalf("%s did not appear within %v", path, limit)
}

// killedRunArgs is a run long enough to be interrupted part-way.
// About 3 s on a 2-core machine, against a first checkpoint after 50 ms
// and a kill within a few ms of it: a machine would need to be some 50
// times faster for the run to finish first.
var killedRunArgs = []string{"run", "clean-normal", "--replicates", "20000", "--workers", "2", "--checkpoint-every", "50ms", "--quiet"}

// TestKillAndResume kills a run with SIGKILL after its first checkpoint,
// resumes it, and checks the results are byte-identical (CSV) to an
// uninterrupted run's.
func TestKillAndResume(t *testing.T) {
	bin := binary(t)
	dir := t.TempDir()
	full := filepath.Join(dir, "full")
	if out, err := exec.Command(bin, append(killedRunArgs, "--out", full)...).CombinedOutput(); err != nil {
		t.Fatalf("uninterrupted run: %v\n%s", err, out)
	}
	part := filepath.Join(dir, "part")
	cmd := exec.Command(bin, append(killedRunArgs, "--out", part)...)
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	waitFor(t, filepath.Join(part, "clean-normal.checkpoint"), 60*time.Second)
	cmd.Process.Signal(syscall.SIGKILL)
	cmd.Wait()
	if _, err := os.Stat(filepath.Join(part, "clean-normal.csv")); err == nil {
		t.Skip("the run finished before it could be killed; the machine is faster than this test assumes")
	}
	out, err := exec.Command(bin, "run", "--resume", part, "--quiet").CombinedOutput()
	if err != nil {
		t.Fatalf("resume: %v\n%s", err, out)
	}
	a, _ := os.ReadFile(filepath.Join(full, "clean-normal.csv"))
	b, _ := os.ReadFile(filepath.Join(part, "clean-normal.csv"))
	if len(a) == 0 || !bytes.Equal(a, b) {
		t.Error("the resumed run's CSV differs from the uninterrupted run's")
	}
	if _, err := os.Stat(filepath.Join(part, "clean-normal.checkpoint")); err == nil {
		t.Error("the checkpoint was left behind after the run completed")
	}
}

// TestInterruptStopsCleanly sends SIGINT (and SIGTERM) to a run: it must
// write what is finished, marked incomplete, say how to resume, exit 1, and
// be resumable to the full results.
func TestInterruptStopsCleanly(t *testing.T) {
	bin := binary(t)
	for _, sig := range []syscall.Signal{syscall.SIGINT, syscall.SIGTERM} {
		dir := t.TempDir()
		cmd := exec.Command(bin, append(killedRunArgs, "--out", dir)...)
		var stderr bytes.Buffer
		cmd.Stderr = &stderr
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		waitFor(t, filepath.Join(dir, "clean-normal.checkpoint"), 60*time.Second)
		cmd.Process.Signal(sig)
		err := cmd.Wait()
		if cmd.ProcessState.ExitCode() == 0 {
			t.Skipf("the run finished before %v arrived", sig)
		}
		if ee, ok := err.(*exec.ExitError); !ok || ee.ExitCode() != exitFailure {
			t.Errorf("%v: exit %v, want %d", sig, err, exitFailure)
		}
		if !strings.Contains(stderr.String(), "rhomark run --resume") {
			t.Errorf("%v: stderr does not say how to resume: %s", sig, stderr.String())
		}
		data, err := os.ReadFile(filepath.Join(dir, "clean-normal.json"))
		if err != nil || !bytes.Contains(data, []byte(`"complete": false`)) {
			t.Errorf("%v: results not written or not marked incomplete (%v)", sig, err)
		}
		if out, err := exec.Command(bin, "run", "--resume", dir, "--quiet").CombinedOutput(); err != nil {
			t.Errorf("%v: resume: %v\n%s", sig, err, out)
		}
	}
}

// TestInterruptedShardSaysHowToResume: a shard stopped by SIGINT keeps its
// finished work and prints a resume command that works.
func TestInterruptedShardSaysHowToResume(t *testing.T) {
	bin := binary(t)
	dir := t.TempDir()
	cmd := exec.Command(bin, append(killedRunArgs, "--shard", "1/2", "--out", dir)...)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	waitFor(t, filepath.Join(dir, "clean-normal.shard-1-of-2.partial"), 60*time.Second)
	cmd.Process.Signal(syscall.SIGINT)
	cmd.Wait()
	if cmd.ProcessState.ExitCode() == 0 {
		t.Skip("the shard finished before SIGINT arrived")
	}
	want := "rhomark run --resume " + dir + " --shard 1/2"
	if !strings.Contains(stderr.String(), want) {
		t.Fatalf("stderr does not give %q: %s", want, stderr.String())
	}
	if out, err := exec.Command(bin, "run", "--resume", dir, "--shard", "1/2", "--quiet").CombinedOutput(); err != nil {
		t.Errorf("the printed resume command failed: %v\n%s", err, out)
	}
}

// TestWriteFailureKeepsOldResults: when a write fails the run reports a
// clear error, exits 1 (a failure, not bad input) and leaves the previous
// results file intact. The failure is a file-size limit on the process
// (RLIMIT_FSIZE, set by the shell's ulimit): writes past it fail with
// "file too large", as they would on a full disk, for root and other users
// alike and without touching the machine's file systems.
func TestWriteFailureKeepsOldResults(t *testing.T) {
	bin := binary(t)
	out := filepath.Join(t.TempDir(), "out")
	if o, err := exec.Command(bin, "run", "flow-meter", "--replicates", "16", "--out", out, "--quiet").CombinedOutput(); err != nil {
		t.Fatalf("first run: %v\n%s", err, o)
	}
	before, _ := os.ReadFile(filepath.Join(out, "flow-meter.json"))
	// 8 blocks of 512 bytes: far less than the results file.
	cmd := exec.Command("/bin/sh", "-c", `ulimit -f 8 && exec "$0" "$@"`,
		bin, "run", "flow-meter", "--replicates", "16", "--seed", "7", "--out", out, "--quiet")
	o, err := cmd.CombinedOutput()
	if ee, ok := err.(*exec.ExitError); !ok || ee.ExitCode() != exitFailure {
		t.Fatalf("exit %v, want %d (failure); output:\n%s", err, exitFailure, o)
	}
	if !strings.Contains(string(o), "cannot write") || !strings.Contains(string(o), "file too large") {
		t.Errorf("unclear error: %s", o)
	}
	after, _ := os.ReadFile(filepath.Join(out, "flow-meter.json"))
	if len(before) == 0 || !bytes.Equal(before, after) {
		t.Error("the previous results file was changed by the failed write")
	}
	if tmps, _ := filepath.Glob(filepath.Join(out, ".*tmp-*")); len(tmps) > 0 {
		t.Errorf("temporary files left behind: %v", tmps)
	}
}
