package csvdata

import (
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

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

// TestReadCopiesFile: Read keeps its own copy of the file's text, so a
// file cut short or rewritten in place after it was read changes nothing
// of the table: its groups and numbers are the file's as it was read.
func TestReadCopiesFile(t *testing.T) {
	var b strings.Builder
	b.WriteString("meter,flow\n")
	for i := 0; i < 20000; i++ {
		fmt.Fprintf(&b, "meter-%d,%d.5\n", i%3, i)
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
	tab, err := Read("data.csv", f)
	if err != nil {
		t.Fatal(err)
	}
	for _, change := range []struct {
		name  string
		apply func() error
	}{
		{"cut", func() error { return os.Truncate(path, 100) }},
		{"rewritten", func() error {
			return os.WriteFile(path, []byte(strings.Repeat("X", b.Len())), 0o644)
		}},
	} {
		if err := change.apply(); err != nil {
			t.Fatal(err)
		}
		groups, err := tab.Groups(0)
		if err != nil {
			t.Fatalf("%s: %v", change.name, err)
		}
		if len(groups) != 3 || groups[0].Name != "meter-0" || groups[2].Name != "meter-2" || len(groups[1].Rows) != 6667 {
			t.Errorf("%s: %d groups, first %q", change.name, len(groups), groups[0].Name)
		}
		if v, err := tab.Float(19999, 1); err != nil || v != 19999.5 {
			t.Errorf("%s: last flow %v, %v; want 19999.5", change.name, v, err)
		}
	}
}
