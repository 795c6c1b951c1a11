package results

import (
	"bytes"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
)

// Save writes r into dir as NAME.json, NAME.csv and NAME.txt (the terminal
// table), and NAME-bias.csv (the bias curves) when the scenario asks for
// them, NAME being the scenario's name, and returns the paths written.
// Each file is written atomically: to a temporary file in dir, synced, then
// renamed over the old one, so a failed write leaves any previous file
// intact.
func Save(dir string, r *Results) ([]string, error) {
	base, err := SafeName(r.Scenario.Name)
	if err != nil {
		return nil, err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("cannot create output directory: %w", err)
	}
	outputs := []struct {
		ext   string
		write func(io.Writer) error
	}{
		{".json", func(w io.Writer) error { return WriteJSON(w, r) }},
		{".csv", func(w io.Writer) error { return WriteCSV(w, r) }},
		{".txt", func(w io.Writer) error { return WriteTable(w, r, 80) }},
	}
	if r.Breakdown != nil {
		outputs = append(outputs, struct {
			ext   string
			write func(io.Writer) error
		}{"-bias.csv", func(w io.Writer) error { _, err := WriteBiasCSV(w, r); return err }})
	}
	var paths []string
	for _, o := range outputs {
		var buf bytes.Buffer
		if err := o.write(&buf); err != nil {
			return paths, err
		}
		p := filepath.Join(dir, base+o.ext)
		if err := WriteFileAtomic(p, buf.Bytes()); err != nil {
			return paths, err
		}
		paths = append(paths, p)
	}
	return paths, nil
}

// SafeName checks that name can be used as a file name inside an output
// directory: no path separators, no leading dot, not empty.
func SafeName(name string) (string, error) {
	if name == "" || strings.ContainsAny(name, `/\:`) || strings.HasPrefix(name, ".") || name != filepath.Base(name) || strings.ContainsRune(name, 0) {
		return "", fmt.Errorf("scenario name %q cannot be used as a file name (letters, digits, '.', '_', '-', not starting with '.')", name)
	}
	return name, nil
}

// WriteError is the error of a failed write of an output file (disk full,
// no permission): a failure of the machine, not of the user's input.
type WriteError struct {
	// Path is the file that could not be written.
	Path string
	// Err is the underlying error.
	Err error
}

func (e *WriteError) Error() string { return fmt.Sprintf("cannot write %s: %v", e.Path, e.Err) }

// Unwrap returns the underlying error.
func (e *WriteError) Unwrap() error { return e.Err }

// CreateTemp creates the temporary file that CommitTemp later renames to
// path, in path's directory.
func CreateTemp(path string) (*os.File, error) {
	tmp, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".tmp-*")
	if err != nil {
		return nil, &WriteError{Path: path, Err: err}
	}
	return tmp, nil
}

// CommitTemp makes the temporary file tmp (from CreateTemp) the file path:
// it syncs, closes and renames tmp, then syncs the directory, so path holds
// either its old content or all of tmp's. On failure tmp is removed and
// path is untouched.
func CommitTemp(tmp *os.File, path string) error {
	name := tmp.Name()
	fail := func(err error) error {
		tmp.Close()
		os.Remove(name)
		return &WriteError{Path: path, Err: err}
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

// WriteFileAtomic writes data to path through a temporary file in the same
// directory, synced and renamed, so path holds either its old content or
// all of data.
func WriteFileAtomic(path string, data []byte) error {
	tmp, err := CreateTemp(path)
	if err != nil {
		return err
	}
	if _, err := tmp.Write(data); err != nil {
		tmp.Close()
		os.Remove(tmp.Name())
		return &WriteError{Path: path, Err: err}
	}
	return CommitTemp(tmp, path)
}
