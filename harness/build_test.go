package harness

import (
	"context"
	"strings"
	"testing"
)

// TestBuildIDOfThisProcess: the identity is the hash of the executable
// (the test binary here), stable within the process.
func TestBuildIDOfThisProcess(t *testing.T) {
	id := BuildID()
	if !strings.HasPrefix(id, "exe-") || len(id) != len("exe-")+16 {
		t.Errorf("BuildID() = %q, want exe- and 16 hex digits", id)
	}
	if BuildID() != id {
		t.Error("BuildID changed within one process")
	}
}

// TestOtherBuildRefused: a checkpoint or shard written by another build
// (crafted by setting Options.Build, as another executable would) is
// refused by resume and by merge, and both messages name both builds.
func TestOtherBuildRefused(t *testing.T) {
	st := parse(t, flowMeterLike)
	const other = "exe-0123456789abcdef"
	_, theirs, err := RunPartial(context.Background(), st, Options{Replicates: 40, Shard: 0, Shards: 2, Build: other})
	if err != nil {
		t.Fatal(err)
	}
	theirs = roundTripPartial(t, theirs)
	if theirs.Build != other {
		t.Fatalf("the partial recorded build %q, want %q", theirs.Build, other)
	}
	_, mine, err := RunPartial(context.Background(), st, Options{Replicates: 40, Shard: 1, Shards: 2})
	if err != nil {
		t.Fatal(err)
	}
	mine = roundTripPartial(t, mine)
	if mine.Build != BuildID() {
		t.Fatalf("the partial recorded build %q, want this process's %q", mine.Build, BuildID())
	}

	_, _, err = RunPartial(context.Background(), st, Options{Replicates: 40, Shard: 0, Shards: 2, Resume: theirs})
	if err == nil || !strings.Contains(err.Error(), other) || !strings.Contains(err.Error(), BuildID()) {
		t.Errorf("resuming another build's checkpoint: got %v, want a refusal naming %s and %s", err, other, BuildID())
	}
	mine.Path, theirs.Path = "dir/s1.partial", "dir/s0.partial"
	_, _, err = MergePartials([]*Partial{mine, theirs}, scenariosLimits())
	if err == nil || !strings.Contains(err.Error(), other) || !strings.Contains(err.Error(), BuildID()) ||
		!strings.Contains(err.Error(), "dir/s0.partial") || !strings.Contains(err.Error(), "dir/s1.partial") {
		t.Errorf("merging shards of two builds: got %v, want a refusal naming both builds and both files", err)
	}
	// The same build resumes and merges.
	_, same, err := RunPartial(context.Background(), st, Options{Replicates: 40, Shard: 0, Shards: 2})
	if err != nil {
		t.Fatal(err)
	}
	if _, _, err := MergePartials([]*Partial{mine, roundTripPartial(t, same)}, scenariosLimits()); err != nil {
		t.Errorf("merging shards of one build: %v", err)
	}
}
