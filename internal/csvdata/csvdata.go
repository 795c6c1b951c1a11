// Package csvdata reads a user's regression data from a CSV file: a header
// row of column names, then one row per observation. Every problem is an
// error naming the file, the line and the column, and what would be valid.
package csvdata

import (
	"bufio"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
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
	// nums holds, row by row, each cell's number read as the file is
	// split, while its text is in cache, or NaN where the cell is not a
	// finite decimal (Float then reads the text again to word the error).
	// It is nil when the table was read by encoding/csv.
	nums []float64
}

// Read reads a CSV table from r; file names it in errors. Lines may end in
// LF, CRLF or a lone CR (as some spreadsheets write); a lone CR, also one
// inside a quoted field, is read as LF.
//
// A file without quotes or CRs, the usual export of numbers, is split
// directly (readPlain), its cells cut from one string; any other file, or
// one that readPlain finds malformed, is read by encoding/csv (readCSV),
// whose errors are the ones reported. Both give the same table.
func Read(file string, r io.Reader) (*Table, error) {
	data, err := readAll(r)
	if err != nil {
		// Let encoding/csv meet the error where it happened in the stream.
		return readCSV(file, io.MultiReader(strings.NewReader(data), errReader{err}))
	}
	if strings.IndexByte(data, '"') < 0 && strings.IndexByte(data, '\r') < 0 {
		if t, ok, err := readPlain(file, data); ok {
			return t, err
		}
	}
	return readCSV(file, strings.NewReader(data))
}

// readAll reads r whole into a string, which readPlain's cells share:
// the file is held once, not as bytes and again as a string. A file of
// known size is read into one buffer of that size rather than a growing
// one.
func readAll(r io.Reader) (string, error) {
	var sb strings.Builder
	st, ok := r.(interface{ Stat() (fs.FileInfo, error) })
	if !ok {
		_, err := io.Copy(&sb, r)
		return sb.String(), err
	}
	if info, err := st.Stat(); err == nil && info.Mode().IsRegular() && info.Size() > 0 &&
		info.Size() <= 1<<40 && int64(int(info.Size())) == info.Size() {
		sb.Grow(int(info.Size()))
	}
	buf := make([]byte, 64<<10)
	for {
		n, err := r.Read(buf)
		sb.Write(buf[:n])
		if err != nil {
			if errors.Is(err, io.EOF) {
				return sb.String(), nil
			}
			return sb.String(), err
		}
	}
}

// errReader returns its error.
type errReader struct{ err error }

func (e errReader) Read([]byte) (int, error) { return 0, e.err }

// readCSV reads a table with encoding/csv.
func readCSV(file string, r io.Reader) (*Table, error) {
	cr := csv.NewReader(&crReader{r: bufio.NewReader(r)})
	cr.ReuseRecord = false
	cr.TrimLeadingSpace = true
	header, err := cr.Read()
	if errors.Is(err, io.EOF) {
		return nil, errEmpty(file)
	}
	if err != nil {
		return nil, csvError(file, err)
	}
	t, err := newTable(file, header)
	if err != nil {
		return nil, err
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
			return nil, errTooLong(file)
		}
		line, _ := cr.FieldPos(0)
		t.Cells = append(t.Cells, rec)
		t.lines = append(t.lines, line)
	}
	if len(t.Cells) == 0 {
		return nil, errNoRows(file)
	}
	return t, nil
}

func errEmpty(file string) error {
	return fmt.Errorf("%s: the file is empty; want a header row of column names, then data rows", file)
}

func errTooLong(file string) error {
	return fmt.Errorf("%s: more than %d rows; split the file", file, maxRows)
}

func errNoRows(file string) error { return fmt.Errorf("%s: no data rows after the header", file) }

// newTable checks the header's column names and returns a table with
// them and no rows.
func newTable(file string, header []string) (*Table, error) {
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
			return nil, fmt.Errorf("%s:1: column name %s is used by columns %d and %d; names must be unique", file, quote(h), k+1, j+1)
		}
		seen[h] = j
		t.Names = append(t.Names, h)
	}
	return t, nil
}

// readPlain reads a file that holds no quote and no CR as encoding/csv
// (with TrimLeadingSpace) reads it: records are the non-empty lines, fields
// are split at commas and lose their leading white space. Every cell is a
// substring of data, and the rows share one backing array, so the table
// costs a few allocations rather than two per row. It reports false, to
// leave the file to encoding/csv, when a row's number of fields differs
// from the header's or there are too many rows: errors are encoding/csv's
// to word.
func readPlain(file, data string) (*Table, bool, error) {
	var header []string
	line := 0
	rows := strings.Count(data, "\n") + 1
	var flat []string
	var t *Table
	width := 0
	for len(data) > 0 {
		line++
		text := data
		if i := strings.IndexByte(data, '\n'); i >= 0 {
			text, data = data[:i], data[i+1:]
		} else {
			data = ""
		}
		if text == "" {
			continue // encoding/csv skips empty lines
		}
		if t == nil {
			header = splitPlain(nil, text)
			var err error
			if t, err = newTable(file, header); err != nil {
				return nil, true, err
			}
			width = len(header)
			flat = make([]string, 0, width*rows)
			t.nums = make([]float64, 0, width*rows)
			t.Cells = make([][]string, 0, rows)
			t.lines = make([]int, 0, rows)
			continue
		}
		start := len(flat)
		flat = splitPlain(flat, text)
		if len(flat)-start != width || len(t.Cells) >= maxRows {
			return nil, false, nil
		}
		for _, f := range flat[start:] {
			v, ok := number(f)
			if !ok {
				v = math.NaN()
			}
			t.nums = append(t.nums, v)
		}
		t.Cells = append(t.Cells, flat[start:len(flat):len(flat)])
		t.lines = append(t.lines, line)
	}
	if t == nil {
		return nil, true, errEmpty(file)
	}
	if len(t.Cells) == 0 {
		return nil, true, errNoRows(file)
	}
	return t, true, nil
}

// splitPlain appends the fields of one unquoted line to dst, each without
// its leading white space (as unicode.IsSpace has it).
func splitPlain(dst []string, text string) []string {
	for {
		i := strings.IndexByte(text, ',')
		field := text
		if i >= 0 {
			field = text[:i]
		}
		if field != "" && (field[0] <= ' ' || field[0] >= utf8.RuneSelf) {
			field = strings.TrimLeftFunc(field, unicode.IsSpace)
		}
		dst = append(dst, field)
		if i < 0 {
			return dst
		}
		text = text[i+1:]
	}
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
	var names []string
	for _, n := range t.Names[:min(len(t.Names), 20)] {
		names = append(names, cutName(n))
	}
	if len(t.Names) > 20 {
		names = append(names, fmt.Sprintf("… (%d in all)", len(t.Names)))
	}
	return 0, fmt.Errorf("%s: no column %s; columns: %s", t.File, quote(name), strings.Join(names, ", "))
}

// Numeric reports whether every cell of column j parses as a finite number.
func (t *Table) Numeric(j int) bool {
	for i := range t.Cells {
		if !t.isNumber(i, j) {
			return false
		}
	}
	return true
}

// HasNumber reports whether any cell of column j parses as a finite number:
// a column meant to be numeric, in which a bad cell is an error to report
// rather than a reason to drop the column.
func (t *Table) HasNumber(j int) bool {
	for i := range t.Cells {
		if t.isNumber(i, j) {
			return true
		}
	}
	return false
}

// isNumber reports whether the cell at row i, column j is a finite number.
func (t *Table) isNumber(i, j int) bool {
	if t.nums != nil {
		return !math.IsNaN(t.nums[i*len(t.Names)+j])
	}
	_, ok := number(t.Cells[i][j])
	return ok
}

// cutName returns a column name for an error message, cut like quote's
// fields but unquoted.
func cutName(s string) string {
	if len(s) <= maxQuoted {
		return s
	}
	return quote(s)
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
	if t.nums != nil {
		if v := t.nums[i*len(t.Names)+j]; !math.IsNaN(v) {
			return v, nil
		}
	}
	v, err := parse(t.Cells[i][j])
	if err != nil {
		return 0, fmt.Errorf("%s:%d: column %s: %v", t.File, t.Line(i), cutName(t.Names[j]), err)
	}
	return v, nil
}

// parse reads one numeric cell: a decimal number, such as 12, -0.5, 3.1e-4
// or .5. Go's other literal forms (1_000, 0x1p-2), which strconv accepts,
// are refused: in a data file they are typing slips or other encodings.
func parse(s string) (float64, error) {
	if v, ok := number(s); ok {
		return v, nil
	}
	s = strings.TrimSpace(s)
	if s == "" || s == "NA" || s == "NaN" || s == "nan" || s == "." {
		return 0, fmt.Errorf("%s is a missing value; rhomark fit needs complete numeric data (remove or impute the row)", quote(s))
	}
	if !isDecimal(s) {
		if l := strings.ToLower(strings.TrimLeft(s, "+-")); l == "inf" || l == "infinity" {
			return 0, fmt.Errorf("%s is not a finite number", quote(s))
		}
		return 0, fmt.Errorf("%s is not a number (want a decimal number such as 12, -0.5 or 3.1e-4)", quote(s))
	}
	v, err := strconv.ParseFloat(s, 64)
	if errors.Is(err, strconv.ErrRange) {
		return 0, fmt.Errorf("%s is beyond the range of a float64 (about ±1.8e308, smallest 4.9e-324)", quote(s))
	}
	if err != nil {
		return 0, fmt.Errorf("%s is not a number (want a decimal number such as 12, -0.5 or 3.1e-4)", quote(s))
	}
	if math.IsInf(v, 0) || math.IsNaN(v) {
		return 0, fmt.Errorf("%s is not a finite number", quote(s))
	}
	return v, nil
}

// number reads one cell as parse does, without wording an error: the
// value and true when s (less surrounding white space) is a decimal
// number that is finite as a float64.
func number(s string) (float64, bool) {
	s = strings.TrimSpace(s)
	d, ok := scanDecimal(s)
	if !ok {
		return 0, false
	}
	if v, ok := d.float(); ok {
		return v, true
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
		return 0, false
	}
	return v, true
}

// maxQuoted is the most bytes of a cell or name an error message repeats.
const maxQuoted = 40

// quote quotes s for an error message, cut to maxQuoted bytes (on a rune
// boundary) with its full length said, so that a huge field is not echoed
// whole.
func quote(s string) string {
	if len(s) <= maxQuoted {
		return strconv.Quote(s)
	}
	cut := maxQuoted
	for cut > 0 && !utf8.RuneStart(s[cut]) {
		cut--
	}
	return fmt.Sprintf("%s… (%d bytes)", strconv.Quote(s[:cut]), len(s))
}

// crReader reads lone CR line ends as LF, leaving CRLF as it is, so that
// files with old Mac line ends read as rows rather than as one long line.
type crReader struct {
	r *bufio.Reader
}

// Read reads from the underlying reader, turning each CR not followed by
// LF into LF.
func (c *crReader) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	for i := 0; i < n; i++ {
		if p[i] != '\r' {
			continue
		}
		if i+1 < n {
			if p[i+1] != '\n' {
				p[i] = '\n'
			}
			continue
		}
		// The last byte read: look at the next one without taking it.
		if next, perr := c.r.Peek(1); perr != nil || next[0] != '\n' {
			p[i] = '\n'
		}
	}
	return n, err
}
