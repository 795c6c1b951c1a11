package main

import (
	"bytes"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/rhomark/rhomark/harness"
)

// slurmEnv, when set, makes the Slurm tests required: .ci/run sets it after
// installing Slurm and starting a single-node cluster.
const slurmEnv = "RHOMARK_REQUIRE_SLURM"

// needSlurm skips the test when no Slurm cluster answers, or fails it when
// slurmEnv says one must.
func needSlurm(t *testing.T) {
	t.Helper()
	_, err := exec.LookPath("sbatch")
	ready := err == nil && exec.Command("sinfo", "-h", "-o", "%T").Run() == nil
	if !ready {
		if os.Getenv(slurmEnv) != "" {
			t.Fatalf("%s is set but no Slurm cluster answers (sinfo, sbatch)", slurmEnv)
		}
		t.Skip("no Slurm cluster here; .ci/run installs slurm-wlm and munge and starts one with deploy/slurm/start-local-cluster.sh")
	}
}

// slurmTask is what scontrol says of one task of a job array.
type slurmTask struct {
	state, reason, exit string
	restarts            string
}

var (
	taskField = regexp.MustCompile(`(?:^| )(ArrayTaskId|JobState|Reason|ExitCode|Restarts)=(\S*)`)
	finished  = map[string]bool{"COMPLETED": true, "FAILED": true, "CANCELLED": true, "TIMEOUT": true,
		"NODE_FAIL": true, "OUT_OF_MEMORY": true, "BOOT_FAIL": true, "DEADLINE": true, "PREEMPTED": true}
)

// arrayTasks returns the tasks of job array job by task id. Tasks not yet
// split from the array's pending record appear under their range ("0-1").
func arrayTasks(t *testing.T, job string) map[string]slurmTask {
	t.Helper()
	out, err := exec.Command("scontrol", "show", "job", "-o", job).CombinedOutput()
	if err != nil {
		t.Fatalf("scontrol show job %s: %v\n%s", job, err, out)
	}
	tasks := map[string]slurmTask{}
	for _, line := range strings.Split(strings.TrimSpace(string(out)), "\n") {
		var id string
		var task slurmTask
		for _, m := range taskField.FindAllStringSubmatch(line, -1) {
			switch m[1] {
			case "ArrayTaskId":
				id = m[2]
			case "JobState":
				task.state = m[2]
			case "Reason":
				task.reason = m[2]
			case "ExitCode":
				task.exit = m[2]
			case "Restarts":
				task.restarts = m[2]
			}
		}
		tasks[id] = task
	}
	return tasks
}

// waitUntil polls cond every 50 ms until it holds, and fails the test if it
// does not within limit.
func waitUntil(t *testing.T, limit time.Duration, what string, cond func() bool) {
	t.Helper()
	deadline := time.Now().Add(limit)
	start := time.Now()
	for !cond() {
		if time.Now().After(deadline) {
			t.Fatalf("%s: not within %v", what, limit)
		}
		time.Sleep(50 * time.Millisecond)
	}
	t.Logf("%s after %v", what, time.Since(start).Round(time.Millisecond))
}

// submitArray submits the shipped job-array script as an array of n tasks,
// one CPU each, with the test's rhomark binary, and returns the job id.
// The job is cancelled when the test ends, if it still runs.
func submitArray(t *testing.T, dir string, n int, args ...string) string {
	t.Helper()
	script, _ := filepath.Abs("../../deploy/slurm/rhomark-array.sbatch")
	cmd := exec.Command("sbatch", append([]string{"--parsable", fmt.Sprintf("--array=0-%d", n-1), "--cpus-per-task=1",
		"--output=" + filepath.Join(dir, "task-%a.out"), script}, args...)...)
	// The tasks inherit sbatch's environment. (An explicit --export makes
	// slurmd build the job's environment anew, which costs seconds a task.)
	cmd.Env = append(os.Environ(), "RHOMARK="+binary(t))
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("sbatch: %v\n%s", err, out)
	}
	job, _, _ := strings.Cut(strings.TrimSpace(string(out)), ";")
	t.Cleanup(func() {
		// Cancel what still runs, and let it go before its directory is
		// removed.
		deadline := time.Now().Add(10 * time.Second)
		for time.Now().Before(deadline) {
			out, err := exec.Command("squeue", "-h", "-j", job).Output() // unfinished tasks
			if err != nil || len(bytes.TrimSpace(out)) == 0 {
				return
			}
			exec.Command("scancel", job).Run()
			time.Sleep(50 * time.Millisecond)
		}
	})
	return job
}

// waitArray waits for every task of an n-task job array to end, and fails
// the test, with the tasks' logs, unless all completed with exit status 0.
func waitArray(t *testing.T, dir, job string, n int, limit time.Duration) map[string]slurmTask {
	t.Helper()
	var tasks map[string]slurmTask
	waitUntil(t, limit, "job "+job+" ending", func() bool {
		tasks = arrayTasks(t, job)
		if len(tasks) != n {
			return false
		}
		for _, task := range tasks {
			if !finished[task.state] {
				return false
			}
		}
		return true
	})
	for id, task := range tasks {
		if task.state != "COMPLETED" || task.exit != "0:0" {
			t.Errorf("task %s: %s, exit %s, reason %s", id, task.state, task.exit, task.reason)
		}
	}
	if t.Failed() {
		t.Fatalf("task logs:\n%s", taskLogs(dir))
	}
	return tasks
}

// taskLogs returns the job's task logs, each under its name.
func taskLogs(dir string) string {
	logs, _ := filepath.Glob(filepath.Join(dir, "task-*.out"))
	var b strings.Builder
	for _, l := range logs {
		data, _ := os.ReadFile(l)
		fmt.Fprintf(&b, "== %s\n%s", filepath.Base(l), data)
	}
	return b.String()
}

// sameAsSingleRun merges the shards in dir/shards and checks the merged
// results are byte-identical (CSV) to a single in-process run's.
func sameAsSingleRun(t *testing.T, dir string, runArgs ...string) {
	t.Helper()
	merged := filepath.Join(dir, "merged")
	if code, _, errs := rhomark(t, "merge", filepath.Join(dir, "shards"), "--out", merged); code != exitOK {
		t.Fatalf("merge: %s", errs)
	}
	single := filepath.Join(dir, "single")
	start := time.Now()
	if code, _, errs := rhomark(t, append(append([]string{"run"}, runArgs...), "--out", single)...); code != exitOK {
		t.Fatal(errs)
	}
	t.Logf("the single run took %v", time.Since(start).Round(time.Millisecond))
	a, _ := os.ReadFile(filepath.Join(merged, "flow-meter.csv"))
	b, _ := os.ReadFile(filepath.Join(single, "flow-meter.csv"))
	if len(a) == 0 || !bytes.Equal(a, b) {
		t.Error("the merged Slurm shards differ from a single-machine run")
	}
}

// TestSlurmJobArray submits a sharded run to a real Slurm cluster as a job
// array of 4 tasks with the shipped job-array script, merges the shards, and
// checks the merged results equal a single-machine run's.
func TestSlurmJobArray(t *testing.T) {
	needSlurm(t)
	dir := t.TempDir()
	os.Chmod(dir, 0o755)
	job := submitArray(t, dir, 4, "flow-meter", filepath.Join(dir, "shards"), "--replicates", "100")
	waitArray(t, dir, job, 4, 2*time.Minute)
	parts, _ := filepath.Glob(filepath.Join(dir, "shards", "*.partial"))
	if len(parts) != 4 {
		t.Fatalf("%d partial files, want 4: %v", len(parts), parts)
	}
	sameAsSingleRun(t, dir, "flow-meter", "--replicates", "100")
}

// requeueReplicates gives each of the 2 tasks of TestSlurmRequeue about
// 2 s of work on one idle CPU (flow-meter at 20000 replicates is 4.2 s of
// work in all). The requeue comes at the task's first checkpoint (50 ms)
// plus polling and scontrol: on a loaded 2-core machine it landed after
// 9-30% of the task's 1250 units, so it lands mid-run unless the machine is
// some 3 times faster than this one idle. The test checks that it did.
const requeueReplicates = "20000"

// TestSlurmRequeue requeues a running task of a job array with scontrol
// requeue after it has checkpointed, as preemption or a node failure would:
// Slurm stops it (SIGTERM), runs the job-array script again, and the script
// must resume the task from its partial file. The job must complete, and
// the merged shards must equal a single run's, byte for byte.
func TestSlurmRequeue(t *testing.T) {
	needSlurm(t)
	dir := t.TempDir()
	os.Chmod(dir, 0o755)
	shards := filepath.Join(dir, "shards")
	runArgs := []string{"flow-meter", "--replicates", requeueReplicates, "--seed", "20261202"}
	job := submitArray(t, dir, 2, append([]string{"flow-meter", shards}, append(runArgs[1:], "--checkpoint-every", "50ms")...)...)
	partial := filepath.Join(shards, "flow-meter.shard-0-of-2.partial")
	waitUntil(t, time.Minute, "task 0 running with a checkpoint", func() bool {
		_, err := os.Stat(partial)
		return arrayTasks(t, job)["0"].state == "RUNNING" && err == nil
	})
	if out, err := exec.Command("scontrol", "requeue", job+"_0").CombinedOutput(); err != nil {
		t.Fatalf("scontrol requeue %s_0: %v\n%s", job, err, out)
	}
	waitUntil(t, time.Minute, "task 0 pending again after the requeue", func() bool {
		st := arrayTasks(t, job)["0"].state
		if finished[st] {
			t.Fatalf("task 0 ended (%s) instead of being requeued\n%s", st, taskLogs(dir))
		}
		return st == "PENDING"
	})

	// The stopped task's partial holds some of its units, not all.
	f, err := os.Open(partial)
	if err != nil {
		t.Fatal(err)
	}
	p, err := harness.ReadPartial(f)
	f.Close()
	if err != nil {
		t.Fatalf("the partial left by the requeued task: %v", err)
	}
	share := (p.Units - p.Shard + p.Shards - 1) / p.Shards
	if done := p.DoneUnits(); done == 0 || done >= share {
		t.Fatalf("the requeued task had finished %d of its %d units: the requeue did not land mid-run (raise requeueReplicates)", done, share)
	} else {
		t.Logf("the requeued task had finished %d of its %d units", done, share)
	}

	// Slurm holds a requeued job back for the credential lifetime
	// (AuthInfo cred_expire, 120 s by default; slurm.conf(5)): slurmd
	// refuses to launch it again with a credential issued, to the second,
	// no later than it revoked the old one ("Job credential revoked").
	// Let it start again 2 s from now, past that second.
	waitUntil(t, 30*time.Second, "task 0 allowed to start again", func() bool {
		return exec.Command("scontrol", "update", "jobid="+job+"_0", "StartTime=now+2").Run() == nil
	})
	tasks := waitArray(t, dir, job, 2, 2*time.Minute)
	if r := tasks["0"].restarts; r != "1" {
		t.Errorf("task 0 restarted %s times, want 1", r)
	}
	if log, _ := os.ReadFile(filepath.Join(dir, "task-0.out")); !bytes.Contains(log, []byte("(restart 1) resumes from")) {
		t.Errorf("task 0 did not resume from its partial file when requeued:\n%s", log)
	}
	sameAsSingleRun(t, dir, runArgs...)
}
