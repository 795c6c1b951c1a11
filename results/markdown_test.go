package results

import (
	"bytes"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// readFixture reads testdata/NAME.json. The fixtures are results files
// written by `rhomark run FILE --replicates 16` (then compacted) for three
// small flow-meter bench scenarios (see package report's tests).
func readFixture(t testing.TB, name string) *Results {
	t.Helper()
	f, err := os.Open(filepath.Join("testdata", name+".json"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	r, err := ReadJSON(f)
	if err != nil {
		t.Fatalf("%s: %v", name, err)
	}
	return r
}

func TestWriteMarkdownSummary(t *testing.T) {
	cases := []struct {
		fixture  string
		headings []string
		mentions []string
	}{
		{"bench-faults", []string{"# rhomark summary: bench-faults", "## What did best", "## Convergence problems"},
			[]string{"None: every fit ended with a usable solution."}},
		{"bench-breakdown", []string{"# rhomark summary: bench-breakdown", "## What did best", "## Convergence problems", "## Simulation against theory"},
			[]string{"iteration-limit", "Largest |theory gap|"}},
		{"bench-tuning", []string{"# rhomark summary: bench-tuning", "## Tuning study: `huber`, `estimators.huber.tuning`", "## What did best", "## Convergence problems", "## Simulation against theory"},
			[]string{"None: every fit ended with a usable solution.", "Largest |theory gap|"}},
	}
	for _, c := range cases {
		t.Run(c.fixture, func(t *testing.T) {
			r := readFixture(t, c.fixture)
			var buf bytes.Buffer
			if err := WriteMarkdownSummary(&buf, r); err != nil {
				t.Fatal(err)
			}
			md := buf.String()
			var heads []string
			for _, line := range strings.Split(md, "\n") {
				if strings.HasPrefix(line, "#") {
					heads = append(heads, line)
				}
			}
			if !slices.Equal(heads, c.headings) {
				t.Errorf("headings %q, want %q", heads, c.headings)
			}
			for _, m := range append(c.mentions, cautionSentence, "seed "+strconv.FormatUint(r.Seed, 10), "16 replicates per cell", "complete") {
				if !strings.Contains(md, m) {
					t.Errorf("summary lacks %q", m)
				}
			}
			if n := strings.Count(md, "**Cell "); n != min(len(r.Cells), markdownMaxCells) {
				t.Errorf("%d cell blocks, want %d", n, min(len(r.Cells), markdownMaxCells))
			}
		})
	}
}

func TestMarkdownEscaping(t *testing.T) {
	cases := []struct{ in, want string }{
		{"a_b*c", `a\_b\*c`},
		{"x|y", `x\|y`},
		{"two\nlines", "two lines"},
	}
	for _, c := range cases {
		if got := mdText(c.in); got != c.want {
			t.Errorf("mdText(%q) = %q, want %q", c.in, got, c.want)
		}
	}
	codes := []struct{ in, want string }{
		{"huber", "`huber`"},
		{"a`b", "`` a`b ``"},
	}
	for _, c := range codes {
		if got := mdCode(c.in); got != c.want {
			t.Errorf("mdCode(%q) = %q, want %q", c.in, got, c.want)
		}
	}
}

// TestSummaryOfEmptyResults: a results value with no cells (a run stopped
// before any replicate) still gives a summary.
func TestSummaryOfEmptyResults(t *testing.T) {
	r := &Results{Schema: SchemaVersion, Scenario: ScenarioInfo{Name: "bench-empty"}, Replicates: 10}
	var md bytes.Buffer
	if err := WriteMarkdownSummary(&md, r); err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(md.String(), "# rhomark summary: bench-empty\n") || !strings.Contains(md.String(), "incomplete") {
		t.Errorf("summary of empty results:\n%s", md.String())
	}
	if err := WriteMarkdownSummary(&md, nil); err == nil {
		t.Error("WriteMarkdownSummary(nil) gave no error")
	}
}

// TestTheoryGapCellNumber: the largest theory gap is located by the cell's
// own number, the one --cell takes.
func TestTheoryGapCellNumber(t *testing.T) {
	coef := func(gap float64) Coefficient { return Coefficient{Name: "x", TheoryGap: Num(gap)} }
	r := &Results{Reference: "ls", Cells: []Cell{
		{Index: 0, Estimators: []Estimator{{Label: "huber", TheoryEfficiency: 0.95, Coefficients: []Coefficient{coef(-3.9)}}}},
		{Index: 1, Estimators: []Estimator{{Label: "huber", TheoryEfficiency: 0.95, Coefficients: []Coefficient{coef(1.2)}}}},
	}}
	g, ok := largestTheoryGap(r)
	if !ok || !strings.HasPrefix(g.where(r), "cell 0, huber, x") {
		t.Errorf("largest gap at %q, want cell 0", g.where(r))
	}
}
