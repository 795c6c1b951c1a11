package atomicfile

import (
	"errors"
	"os"
	"path/filepath"
	"testing"
)

// TestWriteFileKeepsOldOnFailure: a failed commit leaves the old file and no temporary one.
func TestWriteFileKeepsOldOnFailure(t *testing.T) {
	dir := t.TempDir()
	path := dir + "/r.json"
	if err := WriteFile(path, []byte("old")); err != nil {
		t.Fatal(err)
	}
	// A commit that fails at its last step (the rename, here onto a
	// non-empty directory) reports an *Error naming its target, removes
	// its temporary file and touches no other file. (A write failing for
	// lack of space, with the old file kept, is tested on the command in
	// cmd/rhomark's TestWriteFailureKeepsOldResults.)
	tmp, err := Create(path)
	if err != nil {
		t.Fatal(err)
	}
	tmp.Write([]byte("new"))
	blocker := dir + "/blocker"
	os.MkdirAll(blocker+"/inside", 0o755)
	var we *Error
	if err := Commit(tmp, blocker); !errors.As(err, &we) || we.Path != blocker {
		t.Errorf("commit onto a directory: %v, want an *Error naming %s", err, blocker)
	}
	if got, _ := os.ReadFile(path); string(got) != "old" {
		t.Errorf("old content %q changed", got)
	}
	if tmps, _ := filepath.Glob(dir + "/.*tmp-*"); len(tmps) != 0 {
		t.Errorf("temporary files left: %v", tmps)
	}
	// Writing into a directory that does not exist fails cleanly.
	if err := WriteFile(dir+"/missing/r.json", []byte("new")); !errors.As(err, &we) {
		t.Errorf("write into a missing directory: %v, want an *Error", err)
	}
	if err := WriteFile(path, []byte("new")); err != nil {
		t.Fatal(err)
	}
	if got, _ := os.ReadFile(path); string(got) != "new" {
		t.Errorf("content %q after a successful write", got)
	}
}
