//go:build unix

package results

import (
	"errors"
	"strings"
	"testing"
)

// TestLockOutputs: a second locker of the same outputs fails at once,
// naming the lock file; other outputs in the directory are free; Unlock
// frees the lock.
func TestLockOutputs(t *testing.T) {
	dir := t.TempDir()
	a, err := LockOutputs(dir, "bench")
	if err != nil {
		t.Fatal(err)
	}
	_, err = LockOutputs(dir, "bench")
	if !errors.Is(err, ErrLocked) || !strings.Contains(err.Error(), ".bench.lock") {
		t.Errorf("second locker: %v, want ErrLocked naming .bench.lock", err)
	}
	c, err := LockOutputs(dir, "bench.shard-0-of-2")
	if err != nil {
		t.Errorf("a shard's outputs: %v", err)
	}
	c.Unlock()
	if err := a.Unlock(); err != nil {
		t.Fatal(err)
	}
	b, err := LockOutputs(dir, "bench")
	if err != nil {
		t.Fatalf("after Unlock: %v", err)
	}
	b.Unlock()
	if _, err := LockOutputs(dir, "../x"); err == nil {
		t.Error("a name leaving the directory was accepted")
	}
}
