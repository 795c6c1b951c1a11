package csvdata

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"strings"
	"testing"
	"testing/iotest"
)

func TestReadErrors(t *testing.T) {
	cases := []struct {
		name, data, want string
	}{
		{"empty", "", "the file is empty"},
		{"header only", "a,b\n", "no data rows"},
		{"no name", "a,,c\n1,2,3\n", "column 2 has no name"},
		{"duplicate", "a,b,a\n1,2,3\n", `"a" is used by columns 1 and 3`},
		{"ragged", "a,b\n1,2\n3\n", "data.csv:3"},
		{"quote", "a,b\n1,\"2\n", "data.csv:2"},
	}
	for _, c := range cases {
		_, err := Read("data.csv", strings.NewReader(c.data))
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want %q", c.name, err, c.want)
		}
	}
	tab, err := Read("data.csv", strings.NewReader("volume,reading,run\n5,5.1,A\n10,NA,B\n"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := tab.Float(1, 1); err == nil || !strings.Contains(err.Error(), "data.csv:3: column reading") {
		t.Errorf("missing value: %v", err)
	}
	if tab.Numeric(2) || !tab.Numeric(0) || tab.Numeric(1) || !tab.HasNumber(1) || tab.HasNumber(2) {
		t.Error("numeric column detection")
	}
	// A quoted field spanning lines moves later rows down the file; the
	// error names the line the bad row starts on.
	tab, err = Read("data.csv", strings.NewReader("note,volume\n\"line one\nline two\",5\nok,oops\n"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := tab.Float(1, 1); err == nil || !strings.Contains(err.Error(), "data.csv:4: column volume") {
		t.Errorf("line after a multi-line field: %v", err)
	}
}

// FuzzRead: any bytes give a table or an error naming the file, never a
// panic; every cell of a table can be asked for as a number.
func FuzzRead(f *testing.F) {
	for _, s := range []string{"a,b\n1,2\n", "x,y,z\n1,2,3\n4,5,6\n", "\ufeffa,b\n1,\"2\"\n", "a\n\n", "a,b\n1,2\n3,4,5\n"} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		if !strings.ContainsAny(string(data), "\"\r") {
			samePlain(t, string(data))
		}
		tab, err := Read("fuzz.csv", strings.NewReader(string(data)))
		if err != nil {
			if !strings.HasPrefix(err.Error(), "fuzz.csv") {
				t.Fatalf("error does not name the file: %v", err)
			}
			return
		}
		for i := 0; i < tab.Rows(); i++ {
			for j := range tab.Names {
				tab.Float(i, j)
			}
		}
	})
}

// TestNumberSyntax: only decimal numbers are numbers; Go's other literal
// forms, which strconv.ParseFloat accepts, are refused.
func TestNumberSyntax(t *testing.T) {
	good := map[string]float64{"12": 12, "-0.5": -0.5, "+3": 3, ".5": 0.5, "5.": 5, "3.1e-4": 3.1e-4, "1E3": 1000, " 7 ": 7}
	for s, want := range good {
		if v, err := parse(s); err != nil || v != want {
			t.Errorf("parse(%q) = %v, %v; want %v", s, v, err, want)
		}
	}
	for _, s := range []string{"1_000", "0x1p-2", "0X10", "0b101", "1e", "e5", "--1", "1.2.3", "Inf", "-infinity", "1,5", "½"} {
		if v, err := parse(s); err == nil {
			t.Errorf("parse(%q) = %v, want an error", s, v)
		}
	}
}

// TestHugeFieldIsCut: an error about a 20 MB field repeats only its start
// and says how long it is.
func TestHugeFieldIsCut(t *testing.T) {
	huge := strings.Repeat("x", 20<<20)
	tab, err := Read("data.csv", strings.NewReader("a,b\n1,"+huge+"\n"))
	if err != nil {
		t.Fatal(err)
	}
	_, err = tab.Float(0, 1)
	if err == nil || len(err.Error()) > 300 || !strings.Contains(err.Error(), "data.csv:2: column b") || !strings.Contains(err.Error(), "(20971520 bytes)") {
		t.Errorf("error of %d bytes: %.300v", len(err.Error()), err)
	}
	_, err = tab.Column(huge)
	if err == nil || len(err.Error()) > 300 {
		t.Errorf("unknown column: error of %d bytes", len(err.Error()))
	}
}

// TestLineEndings: LF, CRLF and lone CR line ends all read as rows, with
// the right line numbers in errors.
func TestLineEndings(t *testing.T) {
	for name, nl := range map[string]string{"LF": "\n", "CRLF": "\r\n", "CR": "\r"} {
		data := "volume" + nl + "5" + nl + "10" + nl + "x" + nl
		tab, err := Read("data.csv", strings.NewReader(data))
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if tab.Rows() != 3 {
			t.Errorf("%s: %d rows, want 3", name, tab.Rows())
		}
		if v, err := tab.Float(1, 0); err != nil || v != 10 {
			t.Errorf("%s: row 2 = %v, %v", name, v, err)
		}
		if _, err := tab.Float(2, 0); err == nil || !strings.Contains(err.Error(), "data.csv:4: column volume") {
			t.Errorf("%s: %v, want an error on line 4", name, err)
		}
	}
	// A CR at the end of one read and LF at the start of the next is CRLF.
	r := &crReader{r: bufio.NewReaderSize(iotest.OneByteReader(strings.NewReader("a\r\nb\rc")), 16)}
	got, _ := io.ReadAll(r)
	if string(got) != "a\r\nb\nc" {
		t.Errorf("crReader gave %q", got)
	}
}

// samePlain fails unless readPlain reads data as encoding/csv does: the
// same cells, lines and error, or a refusal that leaves it to
// encoding/csv.
func samePlain(t *testing.T, data string) {
	t.Helper()
	for _, split := range []int{parallelBytes, 1} {
		samePlainSplit(t, data, split)
	}
}

// samePlainSplit is samePlain with the rows read in two halves when they
// hold split bytes or more.
func samePlainSplit(t *testing.T, data string, split int) {
	t.Helper()
	got, ok, gerr := readPlainSplit("p.csv", data, split)
	if !ok {
		if _, ok1, _ := readPlain("p.csv", data); ok1 {
			t.Fatalf("%q: read in halves from %d bytes, left to encoding/csv; read whole, not", data, split)
		}
		return
	}
	want, werr := readCSV("p.csv", strings.NewReader(data))
	if (gerr == nil) != (werr == nil) || (gerr != nil && gerr.Error() != werr.Error()) {
		t.Fatalf("%q: plain error %v, csv error %v", data, gerr, werr)
	}
	if gerr != nil {
		return
	}
	if !slices.Equal(got.Names, want.Names) || got.Rows() != want.Rows() {
		t.Fatalf("%q: plain %q, %d rows; csv %q, %d rows", data, got.Names, got.Rows(), want.Names, want.Rows())
	}
	for i := 0; i < got.Rows(); i++ {
		if got.Line(i) != want.Line(i) {
			t.Fatalf("%q row %d: plain on line %d, csv on line %d", data, i, got.Line(i), want.Line(i))
		}
		for j := range got.Names {
			if g, w := got.cell(i, j), want.cell(i, j); g != w {
				t.Fatalf("%q row %d column %d: plain %q, csv %q", data, i, j, g, w)
			}
		}
		// The numbers read as the file was split are the ones read from
		// the text on demand, with the same errors.
		for j := range got.Names {
			gv, gerr := got.Float(i, j)
			wv, werr := want.Float(i, j)
			if math.Float64bits(gv) != math.Float64bits(wv) || (gerr == nil) != (werr == nil) ||
				(gerr != nil && gerr.Error() != werr.Error()) || got.isNumber(i, j) != (gerr == nil) {
				t.Fatalf("%q row %d column %d: plain %v, %v; csv %v, %v", data, i, j, gv, gerr, wv, werr)
			}
		}
	}
}

// TestPlainMatchesCSV: the direct reading of files without quotes or CRs
// gives encoding/csv's table, on fixed tricky inputs and on random ones
// drawn from commas, line ends, ASCII and Unicode white space, letters,
// digits and invalid UTF-8.
func TestPlainMatchesCSV(t *testing.T) {
	for _, s := range []string{"", "\n", "\n\n", "a\n", "a,b\n1,2", "a,b\n\n1,2\n\n", " a , b\n 1,\t2\n", "a,b\n1,2\n3\n", "a\n \n", "a,b\n1,\u00a02\n", "a,b\n1,\u00852\n", "\ufeffa,b\n1,2\n", "a,a\n1,2\n", "a,,b\n1,2,3\n", "a,b\n1, \n"} {
		samePlain(t, s)
	}
	pieces := []string{"a", "b", "1", "-2.5", ",", ",", "\n", "\n", " ", "\t", "\v", "\u00a0", "\u0085", "\u2003", "é", "\xff", "x"}
	rng := rand.New(rand.NewPCG(3, 4))
	for k := 0; k < 20000; k++ {
		var b strings.Builder
		for n := rng.IntN(30); n > 0; n-- {
			b.WriteString(pieces[rng.IntN(len(pieces))])
		}
		samePlain(t, b.String())
	}
	// Rectangular files, which readPlain does not leave to encoding/csv.
	cells := []string{"", "a", "1", "-2.5", "NA", "1e400", "1e-400", "0x1p-2", "Inf", " 9007199254740993", "0.1e-30", " ", "\t", "\v", "\u00a0", "\u0085", "\u2003", "é", "\xff", "x y"}
	for k := 0; k < 5000; k++ {
		var b strings.Builder
		w := 1 + rng.IntN(4)
		for r := rng.IntN(6); r >= 0; r-- {
			for j := 0; j < w; j++ {
				if j > 0 {
					b.WriteByte(',')
				}
				b.WriteString(cells[rng.IntN(len(cells))] + cells[rng.IntN(len(cells))])
			}
			b.WriteString([]string{"\n", "\n", "\n\n", ""}[rng.IntN(4)])
		}
		samePlain(t, b.String())
	}
}

// TestReadWideHeaderBlankLines: a file of many columns and many blank
// lines reserves room for the rows its bytes can hold, not for one row
// per line: 1.5 million blank lines under a 3,000-column header once
// asked for 36 GB. The file (a little over 1.5 MB, read in two halves)
// must give its one row, or no rows, allocating no more than 16 bytes
// for each of its bytes and 4 MB besides: the numbers of the rows its
// bytes allow take at most 8 bytes for each byte, the text read from a
// reader of unknown size up to about 3 more (the buffer doubles as it
// grows), the header's names and index the rest.
func TestReadWideHeaderBlankLines(t *testing.T) {
	const width, blank = 3000, 1_500_000
	var b strings.Builder
	for j := range width {
		if j > 0 {
			b.WriteByte(',')
		}
		fmt.Fprintf(&b, "c%d", j)
	}
	b.WriteString(strings.Repeat("\n", blank+1))
	header := b.String()
	row := strings.Repeat("1,", width-1) + "2\n"
	for _, c := range []struct {
		name, data string
		rows       int
	}{
		{"blank lines only", header, 0},
		{"one row at the end", header + row, 1},
	} {
		var before, after runtime.MemStats
		runtime.ReadMemStats(&before)
		tab, err := Read("wide.csv", strings.NewReader(c.data))
		runtime.ReadMemStats(&after)
		if c.rows == 0 {
			if err == nil || !strings.Contains(err.Error(), "wide.csv: no data rows") {
				t.Errorf("%s: error %v, want no data rows", c.name, err)
			}
		} else if err != nil || tab.Rows() != c.rows || tab.Line(0) != blank+2 {
			t.Errorf("%s: %v", c.name, err)
		} else if v, err := tab.Float(0, width-1); err != nil || v != 2 {
			t.Errorf("%s: last cell %v, %v", c.name, v, err)
		}
		if got, most := after.TotalAlloc-before.TotalAlloc, uint64(16*len(c.data)+4<<20); got > most {
			t.Errorf("%s: allocated %d bytes reading %d; want at most %d", c.name, got, len(c.data), most)
		}
	}
}

// TestFieldCountError: a row of more or fewer fields than the header is
// reported with both counts and the line the row starts on, whether the
// file is split directly or read by encoding/csv (quotes, CRs).
func TestFieldCountError(t *testing.T) {
	for _, c := range []struct{ data, want string }{
		{"volume,reading\n5,5.2\n10\n", "data.csv:3: row has 1 field; the header has 2"},
		{"volume,reading\n5,5.2\n\n10,1,2\n", "data.csv:4: row has 3 fields; the header has 2"},
		{"volume,reading\r\n5,5.2\r\n10,1,2\r\n", "data.csv:3: row has 3 fields; the header has 2"},
		{"note,volume\n\"a\nb\",1\n\"c\nd\",2,3\n", "data.csv:4: row has 3 fields; the header has 2"},
	} {
		_, err := Read("data.csv", strings.NewReader(c.data))
		if err == nil || !strings.HasPrefix(err.Error(), c.want) {
			t.Errorf("%q: error %v, want %q", c.data, err, c.want)
		}
	}
}
