// Package refdata finds and reads the reference datasets used by tests: the
// small published datasets copied into testdata/refdata, and the NIST StRD
// linear-regression files, which are read in place.
package refdata

import (
	"bufio"
	"encoding/csv"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

// NISTEnv is the environment variable that may name the folder holding the
// NIST StRD .dat files and certified_values.csv.
const NISTEnv = "RHOMARK_NIST_DIR"

// ModuleRoot returns the directory holding go.mod, searching upward from the
// working directory (a test's working directory is its package folder).
func ModuleRoot() (string, error) {
	dir, err := os.Getwd()
	if err != nil {
		return "", err
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			return dir, nil
		}
		parent := filepath.Dir(dir)
		if parent == dir {
			return "", errors.New("go.mod not found above the working directory")
		}
		dir = parent
	}
}

// NISTDir returns the folder of the NIST StRD files: $RHOMARK_NIST_DIR if
// set, else ../shared/refdata/nist beside the module root. It returns an
// error saying where to get the files when neither exists.
func NISTDir() (string, error) {
	if d := os.Getenv(NISTEnv); d != "" {
		if _, err := os.Stat(filepath.Join(d, "Norris.dat")); err != nil {
			return "", fmt.Errorf("%s=%s does not hold the NIST StRD files: %v", NISTEnv, d, err)
		}
		return d, nil
	}
	root, err := ModuleRoot()
	if err != nil {
		return "", err
	}
	d := filepath.Join(filepath.Dir(root), "shared", "refdata", "nist")
	if _, err := os.Stat(filepath.Join(d, "Norris.dat")); err != nil {
		return "", fmt.Errorf("NIST StRD files not found (set %s to their folder; NIST publishes them "+
			"as the Statistical Reference Datasets, Linear Least Squares Regression)", NISTEnv)
	}
	return d, nil
}

// Table is a numeric table read from a CSV file with a header row.
type Table struct {
	Names []string    // column names from the header row, in file order
	Rows  [][]float64 // Rows[i][j] is data row i (0-based, header excluded) of column Names[j]
}

// Column returns the values of the named column.
func (t Table) Column(name string) ([]float64, error) {
	for j, n := range t.Names {
		if n == name {
			out := make([]float64, len(t.Rows))
			for i, r := range t.Rows {
				out[i] = r[j]
			}
			return out, nil
		}
	}
	return nil, fmt.Errorf("no column %q (have %s)", name, strings.Join(t.Names, ", "))
}

// ReadCSV reads a numeric CSV file from testdata/refdata.
func ReadCSV(name string) (Table, error) {
	root, err := ModuleRoot()
	if err != nil {
		return Table{}, err
	}
	f, err := os.Open(filepath.Join(root, "testdata", "refdata", name))
	if err != nil {
		return Table{}, err
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		return Table{}, fmt.Errorf("%s: %w", name, err)
	}
	if len(recs) < 2 {
		return Table{}, fmt.Errorf("%s: no data rows", name)
	}
	t := Table{Names: recs[0]}
	for i, rec := range recs[1:] {
		row := make([]float64, len(rec))
		for j, s := range rec {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				return Table{}, fmt.Errorf("%s:%d: column %s: %w", name, i+2, t.Names[j], err)
			}
			row[j] = v
		}
		t.Rows = append(t.Rows, row)
	}
	return t, nil
}

// NISTData is one NIST StRD linear-regression dataset with its certified
// parameter estimates.
type NISTData struct {
	Name string // dataset name, as in the file name Name.dat
	// Y and X hold the response and the predictor columns as NIST prints
	// them (one x for the polynomial datasets).
	Y []float64
	X [][]float64 // X[i] holds the predictor values of observation i, in file order
	// Certified maps a parameter name (B0, B1, ...) to its certified value
	// as NIST prints it, and parsed.
	Certified       map[string]float64
	CertifiedString map[string]string // the certified values as printed, keyed like Certified
	// StdDev maps a parameter name to the certified standard deviation of
	// its estimate.
	StdDev map[string]float64
}

// ReadNIST reads dataset name (for example "Longley") from dir.
func ReadNIST(dir, name string) (NISTData, error) {
	d := NISTData{Name: name, Certified: map[string]float64{}, CertifiedString: map[string]string{}, StdDev: map[string]float64{}}
	cert, err := os.Open(filepath.Join(dir, "certified_values.csv"))
	if err != nil {
		return d, err
	}
	defer cert.Close()
	recs, err := csv.NewReader(cert).ReadAll()
	if err != nil {
		return d, err
	}
	if len(recs) < 2 {
		return d, fmt.Errorf("%s: no certified values", cert.Name())
	}
	var first, last int
	for _, r := range recs[1:] {
		if len(r) != 4 || r[0] != name {
			continue
		}
		switch r[1] {
		case "data_lines":
			if _, err := fmt.Sscanf(r[3], "%d-%d", &first, &last); err != nil {
				return d, fmt.Errorf("%s data_lines %q: %v", name, r[3], err)
			}
		case "estimate":
			v, err := strconv.ParseFloat(r[3], 64)
			if err != nil {
				return d, err
			}
			d.Certified[r[2]] = v
			d.CertifiedString[r[2]] = r[3]
		case "std_dev":
			v, err := strconv.ParseFloat(r[3], 64)
			if err != nil {
				return d, err
			}
			d.StdDev[r[2]] = v
		}
	}
	if first == 0 {
		return d, fmt.Errorf("dataset %s not in certified_values.csv", name)
	}
	f, err := os.Open(filepath.Join(dir, name+".dat"))
	if err != nil {
		return d, err
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for line := 1; sc.Scan(); line++ {
		if line < first || line > last {
			continue
		}
		fields := strings.Fields(sc.Text())
		vals := make([]float64, len(fields))
		for j, s := range fields {
			if vals[j], err = strconv.ParseFloat(s, 64); err != nil {
				return d, fmt.Errorf("%s.dat:%d: %v", name, line, err)
			}
		}
		if len(vals) < 2 {
			return d, fmt.Errorf("%s.dat:%d: want y and at least one x", name, line)
		}
		d.Y = append(d.Y, vals[0])
		d.X = append(d.X, vals[1:])
	}
	return d, sc.Err()
}
