// Package atomicfile writes files so that a reader, or a crash, never sees
// half of one: the content goes to a temporary file beside the target,
// which is synced and renamed over it, and the directory synced. A failure
// of the file system is an *Error naming the target; the target is then
// untouched.
package atomicfile

import (
	"bufio"
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// Write streams what write produces into a temporary file beside
// path, then commits it (see Commit). Streaming rather than buffering
// keeps large results (hundreds of MB of JSON at 10,000 cells) out of
// memory. A failure of the file is a *Error; an error of write itself
// is returned as it is. Either way path is untouched.
func Write(path string, write func(io.Writer) error) error {
	tmp, err := Create(path)
	if err != nil {
		return err
	}
	fw := &fileWriter{f: tmp}
	bw := bufio.NewWriterSize(fw, 1<<16)
	err = write(bw)
	if err == nil {
		err = bw.Flush()
	}
	if err != nil {
		tmp.Close()
		os.Remove(tmp.Name())
		if fw.err != nil {
			return &Error{Path: path, Err: fw.err}
		}
		return err
	}
	return Commit(tmp, path)
}

// fileWriter writes to a file and keeps its first error, to tell a failed
// write from a failed encoding.
type fileWriter struct {
	f   *os.File
	err error
}

// Write writes p to the file, keeping the first error.
func (w *fileWriter) Write(p []byte) (int, error) {
	n, err := w.f.Write(p)
	if err != nil && w.err == nil {
		w.err = err
	}
	return n, err
}

// Error is the error of a failed write of an output file (disk full,
// no permission): a failure of the machine, not of the user's input.
type Error struct {
	// Path is the file that could not be written.
	Path string
	// Err is the underlying error.
	Err error
}

func (e *Error) Error() string { return fmt.Sprintf("cannot write %s: %v", e.Path, e.Err) }

// Unwrap returns the underlying error.
func (e *Error) Unwrap() error { return e.Err }

// Create creates the temporary file that Commit later renames to
// path, in path's directory.
func Create(path string) (*os.File, error) {
	tmp, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".tmp-*")
	if err != nil {
		return nil, &Error{Path: path, Err: err}
	}
	return tmp, nil
}

// Commit makes the temporary file tmp (from Create) the file path:
// it syncs, closes and renames tmp, then syncs the directory, so path holds
// either its old content or all of tmp's. On failure tmp is removed and
// path is untouched.
func Commit(tmp *os.File, path string) error {
	name := tmp.Name()
	fail := func(err error) error {
		tmp.Close()
		os.Remove(name)
		return &Error{Path: path, Err: err}
	}
	if err := tmp.Chmod(0o644); err != nil {
		return fail(err)
	}
	if err := tmp.Sync(); err != nil {
		return fail(err)
	}
	if err := tmp.Close(); err != nil {
		return fail(err)
	}
	if err := os.Rename(name, path); err != nil {
		return fail(err)
	}
	if d, err := os.Open(filepath.Dir(path)); err == nil {
		d.Sync() // best effort: make the rename durable
		d.Close()
	}
	return nil
}

// WriteFile writes data to path through a temporary file in the same
// directory, synced and renamed, so path holds either its old content or
// all of data.
func WriteFile(path string, data []byte) error {
	tmp, err := Create(path)
	if err != nil {
		return err
	}
	if _, err := tmp.Write(data); err != nil {
		tmp.Close()
		os.Remove(tmp.Name())
		return &Error{Path: path, Err: err}
	}
	return Commit(tmp, path)
}
