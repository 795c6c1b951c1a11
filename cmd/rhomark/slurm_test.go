package main

import (
	"bytes"
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
	"time"
)

// slurmEnv, when set, makes the Slurm test required: .ci/run sets it after
// installing Slurm and starting a single-node cluster.
const slurmEnv = "RHOMARK_REQUIRE_SLURM"

// TestSlurmJobArray submits a sharded run to a real Slurm cluster as a job
// array of 4 tasks with the shipped job-array script, merges the shards, and
// checks the merged results equal a single-machine run's.
func TestSlurmJobArray(t *testing.T) {
	ready := exec.Command("sinfo", "-h", "-o", "%T").Run() == nil
	if _, err := exec.LookPath("sbatch"); err != nil || !ready {
		if os.Getenv(slurmEnv) != "" {
			t.Fatalf("%s is set but no Slurm cluster answers (sinfo, sbatch)", slurmEnv)
		}
		t.Skip("no Slurm cluster here; .ci/run installs slurm-wlm and munge and starts one with deploy/slurm/start-local-cluster.sh")
	}
	bin := binary(t)
	dir := t.TempDir()
	os.Chmod(dir, 0o755)
	script, _ := filepath.Abs("../../deploy/slurm/rhomark-array.sbatch")
	shards := filepath.Join(dir, "shards")
	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Minute)
	defer cancel()
	cmd := exec.CommandContext(ctx, "sbatch", "--wait", "--array=0-3", "--cpus-per-task=1",
		"--output="+filepath.Join(dir, "task-%a.out"), "--export=ALL,RHOMARK="+bin,
		script, "flow-meter", shards, "--replicates", "100")
	if out, err := cmd.CombinedOutput(); err != nil {
		logs, _ := filepath.Glob(filepath.Join(dir, "task-*.out"))
		var b bytes.Buffer
		for _, l := range logs {
			data, _ := os.ReadFile(l)
			b.Write(data)
		}
		t.Fatalf("sbatch: %v\n%s\ntask logs:\n%s", err, out, b.String())
	}
	parts, _ := filepath.Glob(filepath.Join(shards, "*.partial"))
	if len(parts) != 4 {
		t.Fatalf("%d partial files, want 4: %v", len(parts), parts)
	}
	merged := filepath.Join(dir, "merged")
	if code, _, errs := rhomark(t, "merge", shards, "--out", merged); code != exitOK {
		t.Fatalf("merge: %s", errs)
	}
	single := filepath.Join(dir, "single")
	if code, _, errs := rhomark(t, "run", "flow-meter", "--replicates", "100", "--out", single); code != exitOK {
		t.Fatal(errs)
	}
	a, _ := os.ReadFile(filepath.Join(merged, "flow-meter.csv"))
	b, _ := os.ReadFile(filepath.Join(single, "flow-meter.csv"))
	if len(a) == 0 || !bytes.Equal(a, b) {
		t.Error("the merged Slurm shards differ from a single-machine run")
	}
}
