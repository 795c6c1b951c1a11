package results

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"github.com/rhomark/rhomark/internal/atomicfile"
)

// Save writes r into dir as NAME.json, NAME.csv and NAME.txt (the terminal
// table), NAME-bias.csv (the bias curves) when the scenario asks for
// them, and NAME-tolerances.csv (the solver audit's change tolerances)
// when some estimator was audited, NAME being the scenario's name, and
// returns the paths written.
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
	if HasToleranceStudy(r) {
		outputs = append(outputs, struct {
			ext   string
			write func(io.Writer) error
		}{"-tolerances.csv", func(w io.Writer) error { _, err := WriteTolerancesCSV(w, r); return err }})
	}
	var paths []string
	for _, o := range outputs {
		p := filepath.Join(dir, base+o.ext)
		if err := atomicfile.Write(p, o.write); err != nil {
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

// WriteError is the error of a failed write of an output file (disk full,
// no permission): a failure of the machine, not of the user's input.
type WriteError = atomicfile.Error
