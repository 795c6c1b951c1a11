package results

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
)

// ErrLocked is the error (wrapped) of LockOutputs when another process
// holds the lock.
var ErrLocked = errors.New("the outputs are locked by another process")

// OutputLock is an exclusive lock on the outputs of one run in a
// directory. The operating system releases it when the process ends, even
// when it is killed, so a crashed run never leaves it held.
type OutputLock struct {
	f    *os.File
	path string
}

// LockOutputs takes the lock on the files of name in dir (NAME.json,
// NAME.checkpoint, ...): a lock file .NAME.lock in dir, held until Unlock or
// the end of the process. If another process (or another OutputLock of
// this one) holds it, LockOutputs fails at once with an error wrapping
// ErrLocked that names the directory and the lock file.
func LockOutputs(dir, name string) (*OutputLock, error) {
	base, err := SafeName(name)
	if err != nil {
		return nil, err
	}
	path := filepath.Join(dir, "."+base+".lock")
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o644)
	if err != nil {
		return nil, &WriteError{Path: path, Err: err}
	}
	if err := lockFile(f); err != nil {
		f.Close()
		if errors.Is(err, ErrLocked) {
			return nil, fmt.Errorf("another rhomark process is writing %s's outputs into %s (it holds the lock %s): %w; wait for it to finish, or write elsewhere", name, dir, path, ErrLocked)
		}
		return nil, &WriteError{Path: path, Err: err}
	}
	return &OutputLock{f: f, path: path}, nil
}

// Unlock releases the lock. The lock file stays; it holds nothing.
func (l *OutputLock) Unlock() error {
	if l == nil || l.f == nil {
		return nil
	}
	err := l.f.Close() // closing the last descriptor releases the lock
	l.f = nil
	return err
}
