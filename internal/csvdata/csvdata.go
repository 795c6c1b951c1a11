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
	"os"
	"runtime/debug"
	"strconv"
	"strings"
	"sync"
	"unicode"
	"unicode/utf8"
)

// Limits on what a data file may hold.
const (
	maxColumns = 10_000
	maxRows    = 10_000_000
)

// Table is a CSV file: its column names, and its cells as text and as
// numbers.
type Table struct {
	// File names the source in errors.
	File string
	// Names are the header's column names.
	Names []string
	// rows is the number of data rows.
	rows int
	// data is the file's text, from which a table read directly
	// (readPlain) cuts its cells when their text is asked for; it is
	// empty for a table read by encoding/csv.
	data string
	// records holds the cells of a table read by encoding/csv, row by row.
	records [][]string
	// lines holds the file line on which each row starts (a quoted field
	// may span lines, so it is not simply the row index plus two). It is
	// nil when row i is on line i+2, every line after the header a row.
	lines []int
	// nums holds, row by row, each cell's number read as the file is
	// split, while its text is in cache, or NaN where the cell is not a
	// finite decimal (Float then reads the text again to word the error).
	// It is nil when the table was read by encoding/csv.
	nums []float64
	// unmap releases data when it is the file mapped into memory; nil
	// otherwise.
	unmap func() error
}

// Rows returns the number of data rows.
func (t *Table) Rows() int { return t.rows }

// ReadFile reads the open file f as Read does; file names it in errors.
// Where the system allows, the table maps the file into memory rather
// than copying it, so that a large file costs no memory of the process's
// own (only its numbers are kept, and a cell's text is read from the file
// when asked for): Close releases the mapping, after which the table must
// not be used. The file must not change until Close. A file cut short
// while it is mapped makes the table's methods return an error saying so;
// a file changed in any other way (its size or modification time) makes
// Close, called while f is still open, return that error, so a caller
// that checks it knows that names and numbers it read may come from
// different versions of the file.
func ReadFile(file string, f *os.File) (*Table, error) {
	data, unmap := mapFile(f)
	if unmap == nil {
		return Read(file, f)
	}
	if before, err := f.Stat(); err == nil {
		release := unmap
		unmap = func() error {
			err := release()
			if after, serr := f.Stat(); serr == nil && (after.Size() != before.Size() || !after.ModTime().Equal(before.ModTime())) {
				return errChanged(file)
			}
			return err
		}
	}
	t := &Table{File: file, unmap: unmap}
	var err error
	var r *Table
	if ferr := t.guard(func() { r, err = readData(file, data) }); ferr != nil {
		unmap()
		return nil, ferr
	}
	if err != nil || r.data == "" {
		// encoding/csv copied what it kept: the mapping is not needed.
		unmap()
		return r, err
	}
	r.unmap = unmap
	return r, nil
}

// Close releases the memory a table of ReadFile maps; the table must not
// be used after it. It does nothing for other tables.
func (t *Table) Close() error {
	if t.unmap == nil {
		return nil
	}
	err := t.unmap()
	t.unmap, t.data = nil, ""
	return err
}

// guard runs f, turning a fault in reading a mapped file (the file cut
// short while it is read) into an error naming the file.
func (t *Table) guard(f func()) error {
	if t.unmap == nil {
		f()
		return nil
	}
	return guarded(t.File, f)
}

// guarded runs f, turning a memory fault into an error naming file.
func guarded(file string, f func()) (err error) {
	defer debug.SetPanicOnFault(debug.SetPanicOnFault(true))
	defer func() {
		if r := recover(); r != nil {
			if _, ok := r.(interface{ Addr() uintptr }); !ok {
				panic(r)
			}
			err = errChanged(file)
		}
	}()
	f()
	return nil
}

// errChanged is the error of a file that changed while it was read.
func errChanged(file string) error {
	return fmt.Errorf("%s: the file changed while it was read; read it again when nothing writes to it", file)
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
	return readData(file, data)
}

// readData reads a table from the whole text of a file.
func readData(file, data string) (*Table, error) {
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
		if pe := (*csv.ParseError)(nil); errors.As(err, &pe) && errors.Is(err, csv.ErrFieldCount) {
			return nil, fmt.Errorf("%s:%d: row has %s; the header has %d (check quoting and the commas on that row)", file, pe.StartLine, plural(len(rec), "field"), len(header))
		}
		if err != nil {
			return nil, csvError(file, err)
		}
		if len(t.records) >= maxRows {
			return nil, errTooLong(file)
		}
		line, _ := cr.FieldPos(0)
		t.records = append(t.records, rec)
		t.lines = append(t.lines, line)
	}
	t.rows = len(t.records)
	if t.rows == 0 {
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
		t.Names = append(t.Names, strings.Clone(h)) // not in a mapped file
	}
	return t, nil
}

// readPlain reads a file that holds no quote and no CR as encoding/csv
// (with TrimLeadingSpace) reads it: records are the non-empty lines, fields
// are split at commas and lose their leading white space. It keeps data
// and each cell's number, not the cells' text, which cell cuts from data
// when it is asked for; the table costs a few allocations rather than two
// per row. It reports false, to leave the file to encoding/csv, when a
// row's number of fields differs from the header's or there are too many
// rows: errors are encoding/csv's to word.
func readPlain(file, data string) (*Table, bool, error) {
	return readPlainSplit(file, data, parallelBytes)
}

// readPlainSplit is readPlain with the rows read in two halves at once
// when they hold split bytes or more.
func readPlainSplit(file, data string, split int) (*Table, bool, error) {
	sc := lineScanner{data: data}
	text, headerLine, ok := sc.next()
	if !ok {
		return nil, true, errEmpty(file)
	}
	t, err := newTable(file, splitPlain(nil, text))
	if err != nil {
		return nil, true, err
	}
	t.data = data
	width := len(t.Names)
	// The rows are read in parts, each into its own stretch of nums, a
	// large file's two halves at once on two cores.
	rest := sc.data
	parts := []plainPart{{data: rest, line: headerLine + 1}}
	if len(rest) >= split {
		mid := len(rest) / 2
		if i := strings.IndexByte(rest[mid:], '\n'); i >= 0 {
			mid += i + 1
			parts = []plainPart{{data: rest[:mid], line: headerLine + 1}, {data: rest[mid:]}}
			parts[1].line = parts[0].line + strings.Count(parts[0].data, "\n")
		}
	}
	// The most rows each part may have: its lines, and no more than its
	// bytes allow, a row of width fields taking at least width bytes
	// (its commas and its line end; two for one field), less one for a
	// last row without a line end. The second bound keeps a file of many
	// columns and many blank lines from reserving room for rows it does
	// not have.
	lines := 0
	for k := range parts {
		p := &parts[k]
		p.start = lines * width
		p.most = min(strings.Count(p.data, "\n")+1, len(p.data)/max(width, 2)+1)
		lines += p.most
	}
	nums := make([]float64, lines*width)
	var wg sync.WaitGroup
	for k := range parts {
		p := &parts[k]
		p.nums = nums[p.start:p.start:min(p.start+p.most*width, len(nums))]
		if k == 0 {
			continue // read below, by this goroutine
		}
		wg.Go(func() { p.err = guarded(file, func() { p.read(width) }) })
	}
	parts[0].read(width)
	wg.Wait()
	for _, p := range parts {
		if p.err != nil {
			return nil, true, p.err // the file was cut short while read
		}
		if !p.ok {
			return nil, false, nil
		}
	}
	// Join the parts: their numbers close up, and their lines are kept
	// unless every line after a header on line 1 is a row (row i on line
	// i+2).
	blank, next := false, 2
	for _, p := range parts {
		t.rows += p.rows
		blank = blank || p.lines != nil || p.line != next
		next = p.line + p.rows
	}
	if t.rows > maxRows {
		return nil, false, nil
	}
	if t.rows == 0 {
		return nil, true, errNoRows(file)
	}
	end := 0
	for _, p := range parts {
		end += copy(nums[end:], p.nums[:p.rows*width])
		if blank {
			for i := range p.rows {
				if p.lines != nil {
					t.lines = append(t.lines, p.lines[i])
				} else {
					t.lines = append(t.lines, p.line+i)
				}
			}
		}
	}
	t.nums = nums[:end:end]
	return t, true, nil
}

// parallelBytes is the size from which readPlain reads a file's halves
// at once.
const parallelBytes = 1 << 20

// plainPart is a run of whole lines of a plain file and what reading it
// found.
type plainPart struct {
	data string
	line int // the file line data starts on
	// start and most place the part's numbers in the table's: from
	// index start, for at most most rows.
	start, most int
	nums        []float64
	rows        int
	lines       []int // the line of each row; nil while each line is a row
	ok          bool  // false: a row's fields do not match the header's
	err         error
}

// read reads the part's rows of width cells each.
func (p *plainPart) read(width int) {
	prefault(p.nums[:cap(p.nums)])
	sc := lineScanner{data: p.data, line: p.line - 1}
	for {
		text, line, ok := sc.next()
		if !ok {
			break
		}
		if p.rows >= maxRows {
			return
		}
		fields := 0
		for {
			if fields++; fields > width {
				return
			}
			// The usual cell, a plain decimal that ends at the comma or
			// the line's end, is read as it is found; any other is cut
			// out and read by number, which trims white space.
			d, n, ok := scanDecimalPrefix(text)
			end := -1 // the comma after the field; -1 for the line's last
			known := ok && (n == len(text) || text[n] == ',')
			if known && n < len(text) {
				end = n
			} else if !known {
				end = strings.IndexByte(text, ',')
			}
			var v float64
			if known {
				v, ok = d.float()
			}
			if !known || !ok {
				field := text
				if end >= 0 {
					field = text[:end]
				}
				if v, ok = number(field); !ok {
					v = math.NaN()
				}
			}
			p.nums = append(p.nums, v)
			if end < 0 {
				break
			}
			text = text[end+1:]
		}
		if fields != width {
			return
		}
		if p.lines == nil && line != p.line+p.rows {
			// A blank line came before: record every row's line.
			p.lines = make([]int, p.rows, p.most)
			for i := range p.lines {
				p.lines[i] = p.line + i
			}
		}
		if p.lines != nil {
			p.lines = append(p.lines, line)
		}
		p.rows++
	}
	p.ok = true
}

// lineScanner yields the non-empty lines of a text without quotes or CRs,
// the records of readPlain, with their line numbers.
type lineScanner struct {
	data string
	line int
}

// next returns the next non-empty line and its number, or false at the
// end.
func (s *lineScanner) next() (string, int, bool) {
	for len(s.data) > 0 {
		s.line++
		text := s.data
		if i := strings.IndexByte(s.data, '\n'); i >= 0 {
			text, s.data = s.data[:i], s.data[i+1:]
		} else {
			s.data = ""
		}
		if text != "" {
			return text, s.line, true
		}
	}
	return "", 0, false
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
		dst = append(dst, trimLeft(field))
		if i < 0 {
			return dst
		}
		text = text[i+1:]
	}
}

// plainField returns field j of an unquoted line, without its leading
// white space.
func plainField(text string, j int) string {
	for ; j > 0; j-- {
		text = text[strings.IndexByte(text, ',')+1:]
	}
	if i := strings.IndexByte(text, ','); i >= 0 {
		text = text[:i]
	}
	return trimLeft(text)
}

// trimLeft removes a field's leading white space, as encoding/csv's
// TrimLeadingSpace does.
func trimLeft(field string) string {
	if field != "" && (field[0] <= ' ' || field[0] >= utf8.RuneSelf) {
		return strings.TrimLeftFunc(field, unicode.IsSpace)
	}
	return field
}

// rowText returns the line of data row i of a table read by readPlain.
// It walks the file from the start: it serves error messages, not loops.
func (t *Table) rowText(i int) string {
	sc := lineScanner{data: t.data}
	sc.next() // the header
	for ; i > 0; i-- {
		sc.next()
	}
	text, _, _ := sc.next()
	return text
}

// cell returns the text of row i, column j. For a table of ReadFile it
// may lie in the mapped file: callers copy what they keep.
func (t *Table) cell(i, j int) string {
	if t.records != nil {
		return t.records[i][j]
	}
	return plainField(t.rowText(i), j)
}

// plural returns n and noun, with an s unless n is 1.
func plural(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
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
	for i := 0; i < t.rows; i++ {
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
	for i := 0; i < t.rows; i++ {
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
	_, ok := number(t.records[i][j])
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
	if t.lines != nil {
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
	var v float64
	var err error
	if ferr := t.guard(func() { v, err = parse(t.cell(i, j)) }); ferr != nil {
		return 0, ferr
	}
	if err != nil {
		return 0, fmt.Errorf("%s:%d: column %s: %v", t.File, t.Line(i), cutName(t.Names[j]), err)
	}
	return v, nil
}

// Group is the rows of a table that share one text in a column.
type Group struct {
	// Name is the text.
	Name string
	// Rows are the data rows (0-based) that hold it, in file order.
	Rows []int
}

// Groups splits the rows by the text of column j: one group per distinct
// text, in the order of first appearance. The groups' Rows share one
// array; their names are copies, valid after Close.
func (t *Table) Groups(j int) ([]Group, error) {
	// rows holds each row's group while the rows are read; when every
	// group's rows come together (the usual layout) it then becomes the
	// rows in order, each group a stretch of it, and no other array is
	// needed.
	rows := make([]int, t.rows)
	prefault(rows)
	var groups []Group
	var counts []int
	together := true
	err := t.guard(func() {
		index := map[string]int{}
		var sc lineScanner
		if t.records == nil {
			sc.data = t.data
			sc.next() // the header
		}
		prev, k := "", -1
		for i := range rows {
			var s string
			if t.records != nil {
				s = t.records[i][j]
			} else {
				text, _, _ := sc.next()
				s = plainField(text, j)
			}
			// The previous row's group is tried before the index.
			if k < 0 || s != prev {
				var ok bool
				if k, ok = index[s]; ok {
					together = false // a group met again after another
				} else {
					k = len(groups)
					s = strings.Clone(s)
					index[s] = k
					groups = append(groups, Group{Name: s})
					counts = append(counts, 0)
				}
				prev = s
			}
			rows[i] = k
			counts[k]++
		}
	})
	if err != nil {
		return nil, err
	}
	// Lay the groups' rows out in one array, in group order. When the
	// groups came together, row i goes to index i, the index just read:
	// the array can be rewritten in place.
	of := rows
	if !together {
		rows = make([]int, t.rows)
	}
	start := 0
	for k, n := range counts {
		groups[k].Rows = rows[start : start : start+n]
		start += n
	}
	for i, k := range of {
		groups[k].Rows = append(groups[k].Rows, i)
	}
	return groups, nil
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
	// number refuses a decimal number only when it is too large for a
	// float64 (strconv rounds one too small to zero, or to a subnormal).
	return 0, fmt.Errorf("%s is beyond the range of a float64 (magnitudes up to about 1.8e308; rescale the column)", quote(s))
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
