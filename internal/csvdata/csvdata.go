// Package csvdata reads a user's regression data from a CSV file: a header
// row of column names, then one row per observation. Every problem is an
// error naming the file, the line and the column, and what would be valid.
package csvdata

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// Limits on what a data file may hold.
const (
	maxColumns = 10_000
	maxRows    = 10_000_000
)

// Table is a CSV file with its raw text cells.
type Table struct {
	// File names the source in errors.
	File string
	// Names are the header's column names.
	Names []string
	// Cells holds the rows' text, row by row.
	Cells [][]string
	// lines holds the file line on which each row starts (a quoted field
	// may span lines, so it is not simply the row index plus two).
	lines []int
}

// Read reads a CSV table from r; file names it in errors.
func Read(file string, r io.Reader) (*Table, error) {
	cr := csv.NewReader(r)
	cr.ReuseRecord = false
	cr.TrimLeadingSpace = true
	header, err := cr.Read()
	if errors.Is(err, io.EOF) {
		return nil, fmt.Errorf("%s: the file is empty; want a header row of column names, then data rows", file)
	}
	if err != nil {
		return nil, csvError(file, err)
	}
	if len(header) > maxColumns {
		return nil, fmt.Errorf("%s:1: %d columns; at most %d are supported", file, len(header), maxColumns)
	}
	t := &Table{File: file}
	seen := map[string]int{}
	for j, h := range header {
		h = strings.TrimSpace(strings.TrimPrefix(h, "\ufeff"))
		if h == "" {
			return nil, fmt.Errorf("%s:1: column %d has no name; every column needs a header", file, j+1)
		}
		if k, ok := seen[h]; ok {
			return nil, fmt.Errorf("%s:1: column name %q is used by columns %d and %d; names must be unique", file, h, k+1, j+1)
		}
		seen[h] = j
		t.Names = append(t.Names, h)
	}
	for {
		rec, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, csvError(file, err)
		}
		if len(t.Cells) >= maxRows {
			return nil, fmt.Errorf("%s: more than %d rows; split the file", file, maxRows)
		}
		line, _ := cr.FieldPos(0)
		t.Cells = append(t.Cells, rec)
		t.lines = append(t.lines, line)
	}
	if len(t.Cells) == 0 {
		return nil, fmt.Errorf("%s: no data rows after the header", file)
	}
	return t, nil
}

// csvError reformats an encoding/csv error as file:line: message.
func csvError(file string, err error) error {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return fmt.Errorf("%s:%d: column %d: %v (check quoting and the number of fields on that row)", file, pe.Line, pe.Column, pe.Err)
	}
	return fmt.Errorf("%s: %v", file, err)
}

// Column returns the index of the named column.
func (t *Table) Column(name string) (int, error) {
	for j, n := range t.Names {
		if n == name {
			return j, nil
		}
	}
	return 0, fmt.Errorf("%s: no column %q; columns: %s", t.File, name, strings.Join(t.Names, ", "))
}

// Numeric reports whether every cell of column j parses as a finite number.
func (t *Table) Numeric(j int) bool {
	for _, rec := range t.Cells {
		if _, err := parse(rec[j]); err != nil {
			return false
		}
	}
	return true
}

// HasNumber reports whether any cell of column j parses as a finite number:
// a column meant to be numeric, in which a bad cell is an error to report
// rather than a reason to drop the column.
func (t *Table) HasNumber(j int) bool {
	for _, rec := range t.Cells {
		if _, err := parse(rec[j]); err == nil {
			return true
		}
	}
	return false
}

// Line returns the file line on which data row i (0-based) starts.
func (t *Table) Line(i int) int {
	if i < len(t.lines) {
		return t.lines[i]
	}
	return i + 2
}

// Float returns the value of row i (0-based data row), column j, or an
// error naming the file line and column.
func (t *Table) Float(i, j int) (float64, error) {
	v, err := parse(t.Cells[i][j])
	if err != nil {
		return 0, fmt.Errorf("%s:%d: column %s: %v", t.File, t.Line(i), t.Names[j], err)
	}
	return v, nil
}

// parse reads one numeric cell.
func parse(s string) (float64, error) {
	s = strings.TrimSpace(s)
	if s == "" || s == "NA" || s == "NaN" || s == "nan" || s == "." {
		return 0, fmt.Errorf("%q is a missing value; rhomark fit needs complete numeric data (remove or impute the row)", s)
	}
	v, err := strconv.ParseFloat(s, 64)
	if errors.Is(err, strconv.ErrRange) {
		return 0, fmt.Errorf("%q is beyond the range of a float64 (about ±1.8e308, smallest 4.9e-324)", s)
	}
	if err != nil {
		return 0, fmt.Errorf("%q is not a number", s)
	}
	if math.IsInf(v, 0) || math.IsNaN(v) {
		return 0, fmt.Errorf("%q is not a finite number", s)
	}
	return v, nil
}
