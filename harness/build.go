package harness

import (
	"crypto/sha256"
	"encoding/hex"
	"io"
	"os"
	"runtime/debug"
	"sync"
)

// BuildID identifies the running build of the program, so that work done by
// one build is never resumed or merged by another whose numerics may
// differ (every development build reports the same version). It is
// "exe-" and the first 16 hex digits of the SHA-256 of the executable
// file, which changes with any change to the code or the toolchain. When
// the executable cannot be read (a library user on a system without
// /proc, a deleted binary), it is "info-" and the hash of the build
// information the Go toolchain embeds (module versions and checksums, build
// settings, VCS revision), which changes with dependencies and settings but
// not with uncommitted edits; "unknown" if neither exists. It is computed
// once per process.
func BuildID() string { return buildID() }

// buildID memoises BuildID: a property of the process, computed on first
// use and never changed.
var buildID = sync.OnceValue(func() string {
	if exe, err := os.Executable(); err == nil {
		if id, err := hashFile(exe); err == nil {
			return "exe-" + id
		}
	}
	if bi, ok := debug.ReadBuildInfo(); ok {
		sum := sha256.Sum256([]byte(bi.String()))
		return "info-" + hex.EncodeToString(sum[:8])
	}
	return "unknown"
})

// hashFile returns the first 16 hex digits of the SHA-256 of a file.
func hashFile(path string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", err
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", err
	}
	return hex.EncodeToString(h.Sum(nil)[:8]), nil
}

// buildID returns the build identity a run records: Options.Build, or
// BuildID when it is empty.
func (o Options) buildID() string {
	if o.Build != "" {
		return o.Build
	}
	return BuildID()
}
