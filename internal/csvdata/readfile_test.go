package csvdata

import (
	"math"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"testing"
	"time"
)

// readBoth reads data as a file with ReadFile and from memory with Read.
func readBoth(t *testing.T, data string) (mapped, read *Table, merr, rerr error) {
	t.Helper()
	path := filepath.Join(t.TempDir(), "data.csv")
	if err := os.WriteFile(path, []byte(data), 0o644); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	mapped, merr = ReadFile("data.csv", f)
	read, rerr = Read("data.csv", strings.NewReader(data))
	return mapped, read, merr, rerr
}

// TestReadFileMatchesRead: a file read by ReadFile (mapped where the
// system allows) gives Read's table or error: plain files, files with
// blank lines, quotes and CRs (read by encoding/csv), and bad files.
func TestReadFileMatchesRead(t *testing.T) {
	for _, data := range []string{
		"meter,flow,ref\nA,1.5,2\nB, 2.5,3e-2\nA,x,4\n",
		"meter,flow\n\nA,1\n\n\nB,2\n",
		"meter,flow\r\nA,1\r\n\"B,C\",2\r\n",
		"meter,flow\n\"A\nB\",1\nC,oops\n",
		"meter,flow\nA,1\nB\n",
		"meter,flow\n",
		"",
		"a,a\n1,2\n",
	} {
		m, r, merr, rerr := readBoth(t, data)
		if (merr == nil) != (rerr == nil) || (merr != nil && merr.Error() != rerr.Error()) {
			t.Errorf("%q: ReadFile error %v, Read error %v", data, merr, rerr)
			continue
		}
		if merr != nil {
			continue
		}
		if !slices.Equal(m.Names, r.Names) || m.Rows() != r.Rows() {
			t.Errorf("%q: ReadFile %q, %d rows; Read %q, %d rows", data, m.Names, m.Rows(), r.Names, r.Rows())
			continue
		}
		for i := 0; i < m.Rows(); i++ {
			for j := range m.Names {
				mv, merr := m.Float(i, j)
				rv, rerr := r.Float(i, j)
				if m.cell(i, j) != r.cell(i, j) || m.Line(i) != r.Line(i) || math.Float64bits(mv) != math.Float64bits(rv) ||
					(merr == nil) != (rerr == nil) || (merr != nil && merr.Error() != rerr.Error()) {
					t.Errorf("%q row %d column %d: ReadFile %q line %d %v %v; Read %q line %d %v %v", data, i, j,
						m.cell(i, j), m.Line(i), mv, merr, r.cell(i, j), r.Line(i), rv, rerr)
				}
			}
		}
		mg, merr := m.Groups(0)
		rg, rerr := r.Groups(0)
		if err := m.Close(); err != nil {
			t.Errorf("%q: Close: %v", data, err)
		}
		// Compared after Close: the names are copies that outlive the
		// mapping.
		if merr != nil || rerr != nil || !slices.EqualFunc(mg, rg, func(a, b Group) bool { return a.Name == b.Name && slices.Equal(a.Rows, b.Rows) }) {
			t.Errorf("%q: groups %v %v, %v %v", data, mg, merr, rg, rerr)
		}
	}
}

// TestGroups: rows are grouped by their text in the column, the groups in
// the order of first appearance and each group's rows in file order,
// whether or not a group's rows come together.
func TestGroups(t *testing.T) {
	tab, err := Read("data.csv", strings.NewReader("meter,flow\nB,1\nB,2\n A,3\nB,4\nC,5\nA ,6\nA,7\n"))
	if err != nil {
		t.Fatal(err)
	}
	got, err := tab.Groups(0)
	if err != nil {
		t.Fatal(err)
	}
	// The leading space goes (as encoding/csv's TrimLeadingSpace has it),
	// a trailing one stays.
	want := []Group{{"B", []int{0, 1, 3}}, {"A", []int{2, 6}}, {"C", []int{4}}, {"A ", []int{5}}}
	if !slices.EqualFunc(got, want, func(a, b Group) bool { return a.Name == b.Name && slices.Equal(a.Rows, b.Rows) }) {
		t.Errorf("groups %v, want %v", got, want)
	}
	flows, err := tab.Groups(1)
	if err != nil || len(flows) != 7 || flows[6].Name != "7" {
		t.Errorf("groups of a numeric column: %v, %v", flows, err)
	}
}

// TestReadFileCutShort: a mapped file cut short after it was read gives
// an error naming the file when its text is asked for, not a crash.
func TestReadFileCutShort(t *testing.T) {
	if runtime.GOOS != "linux" {
		t.Skip("the fault of a cut mapped file is checked on Linux")
	}
	var b strings.Builder
	b.WriteString("meter,flow\n")
	for i := 0; i < 20000; i++ {
		b.WriteString("meter-on-bench-three,oops\n")
	}
	path := filepath.Join(t.TempDir(), "data.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	tab, err := ReadFile("data.csv", f)
	if err != nil {
		t.Fatal(err)
	}
	defer tab.Close()
	if tab.unmap == nil {
		t.Skip("the file was read, not mapped")
	}
	if err := os.Truncate(path, 0); err != nil {
		t.Fatal(err)
	}
	const want = "data.csv: the file changed while it was read"
	if _, err := tab.Groups(0); err == nil || !strings.HasPrefix(err.Error(), want) {
		t.Errorf("groups of a cut file: %v, want %q", err, want)
	}
	if _, err := tab.Float(19999, 1); err == nil || !strings.HasPrefix(err.Error(), want) {
		t.Errorf("a cell of a cut file: %v, want %q", err, want)
	}
}

// TestReadFileChangedInPlace: a file rewritten while its table is in use,
// whether to another length or in place to the same length, makes Close
// report it, since names read from it may now come from another version;
// a file left alone closes cleanly.
func TestReadFileChangedInPlace(t *testing.T) {
	const text = "meter,flow\nA,1\nB,2\n"
	for _, tc := range []struct {
		name    string
		rewrite string // "" leaves the file alone
	}{
		{"left alone", ""},
		{"same length", "meter,flow\nZ,1\nY,2\n"},
		{"longer", "meter,flow\nA,1\nB,2\nC,3\n"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), "bench.csv")
			if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
				t.Fatal(err)
			}
			old := time.Now().Add(-time.Hour) // so a rewrite's time differs
			if err := os.Chtimes(path, old, old); err != nil {
				t.Fatal(err)
			}
			f, err := os.Open(path)
			if err != nil {
				t.Fatal(err)
			}
			defer f.Close()
			tab, err := ReadFile("bench.csv", f)
			if err != nil {
				t.Fatal(err)
			}
			if tab.unmap == nil {
				t.Skip("the file was read, not mapped")
			}
			if tc.rewrite != "" {
				if err := os.WriteFile(path, []byte(tc.rewrite), 0o644); err != nil {
					t.Fatal(err)
				}
			}
			err = tab.Close()
			const want = "bench.csv: the file changed while it was read"
			switch {
			case tc.rewrite == "" && err != nil:
				t.Errorf("unchanged file: Close %v", err)
			case tc.rewrite != "" && (err == nil || !strings.HasPrefix(err.Error(), want)):
				t.Errorf("rewritten file: Close %v, want %q", err, want)
			}
		})
	}
}
