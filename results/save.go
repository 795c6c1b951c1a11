package results

import (
	"bufio"
	"bytes"
	"encoding/json"
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
		{".json", func(w io.Writer) error { return writeJSONByCell(w, r) }},
		{".csv", func(w io.Writer) error { return WriteCSV(w, r) }},
		{".txt", func(w io.Writer) error { return WriteTable(w, r, 100) }},
	}
	if r.Breakdown != nil {
		outputs = append(outputs, struct {
			ext   string
			write func(io.Writer) error
		}{"-bias.csv", func(w io.Writer) error { _, err := WriteBiasCSV(w, r); return err }})
	}
	var paths []string
	for _, o := range outputs {
		p := filepath.Join(dir, base+o.ext)
		if err := WriteAtomic(p, o.write); err != nil {
			return paths, err
		}
		paths = append(paths, p)
	}
	return paths, nil
}

// WriteAtomic streams what write produces into a temporary file beside
// path, then commits it (see CommitTemp). Streaming rather than buffering
// keeps large results (hundreds of MB of JSON at 10,000 cells) out of
// memory. A failure of the file is a *WriteError; an error of write itself
// is returned as it is. Either way path is untouched.
func WriteAtomic(path string, write func(io.Writer) error) error {
	tmp, err := CreateTemp(path)
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
			return &WriteError{Path: path, Err: fw.err}
		}
		return err
	}
	return CommitTemp(tmp, path)
}

// fileWriter writes to a file and keeps its first error, to tell a failed
// write from a failed encoding.
type fileWriter struct {
	f   *os.File
	err error
}

func (w *fileWriter) Write(p []byte) (int, error) {
	n, err := w.f.Write(p)
	if err != nil && w.err == nil {
		w.err = err
	}
	return n, err
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

// writeJSONByCell writes exactly what WriteJSON writes, but encodes the
// cells one at a time: encoding/json holds the whole document twice
// (compact, then indented), which at 10,000 cells is over 400 MB.
func writeJSONByCell(w io.Writer, r *Results) error {
	if len(r.Cells) == 0 {
		return WriteJSON(w, r)
	}
	shell := *r
	shell.Cells = []Cell{}
	head, err := json.MarshalIndent(&shell, "", "  ")
	if err != nil {
		return err
	}
	// The top-level key is the only one indented by exactly two spaces
	// after a newline (a quote inside a string is escaped).
	const marker = "\n  \"cells\": []"
	at := bytes.Index(head, []byte(marker))
	if at < 0 || bytes.Contains(head[at+len(marker):], []byte(marker)) {
		return WriteJSON(w, r) // not the expected shape: the plain way
	}
	cut := at + len(marker) - 1 // before the closing bracket
	if _, err := w.Write(head[:cut]); err != nil {
		return err
	}
	for i := range r.Cells {
		b, err := json.MarshalIndent(&r.Cells[i], "    ", "  ")
		if err != nil {
			return err
		}
		sep := ",\n    "
		if i == 0 {
			sep = "\n    "
		}
		if _, err := io.WriteString(w, sep); err != nil {
			return err
		}
		if _, err := w.Write(b); err != nil {
			return err
		}
	}
	if _, err := io.WriteString(w, "\n  "); err != nil {
		return err
	}
	if _, err := w.Write(head[cut:]); err != nil {
		return err
	}
	_, err = io.WriteString(w, "\n")
	return err
}
