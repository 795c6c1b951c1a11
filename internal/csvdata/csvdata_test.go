package csvdata

import (
	"strings"
	"testing"
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
		tab, err := Read("fuzz.csv", strings.NewReader(string(data)))
		if err != nil {
			if !strings.HasPrefix(err.Error(), "fuzz.csv") {
				t.Fatalf("error does not name the file: %v", err)
			}
			return
		}
		for i := range tab.Cells {
			for j := range tab.Names {
				if j < len(tab.Cells[i]) {
					tab.Float(i, j)
				}
			}
		}
	})
}
