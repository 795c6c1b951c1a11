package results

import (
	"bytes"
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// tolRow builds one ToleranceCost.
func tolRow(tol float64, reached int64, iter, med, maxErr, over float64) ToleranceCost {
	return ToleranceCost{Tolerance: tol, Reached: reached, MedianIterations: Num(iter),
		MedianErrorSE: Num(med), MaxErrorSE: Num(maxErr), Over: Num(over)}
}

// auditedEstimator builds an audited iterative estimator with the given
// tolerance rows over audited fits.
func auditedEstimator(label string, audited int64, rows ...ToleranceCost) Estimator {
	e := Estimator{Label: label, Method: "irls", Psi: "huber"}
	e.Convergence.MedianIterations = 12
	e.Convergence.StopError = &StopError{Audited: audited, Median: 1e-8, Max: 1e-6}
	e.Convergence.Tolerances = rows
	return e
}

// bruteCheapest finds, by looking at every row, the tolerance with the
// fewest median iterations among those at which every settled fit (the
// number that reached the loosest tolerance) was within 0.01 SE; ties go
// to the looser tolerance. ok is false when there is none.
func bruteCheapest(e Estimator) (float64, bool) {
	rows := e.Convergence.Tolerances
	if len(rows) == 0 {
		return 0, false
	}
	settled := rows[0].Reached
	best, ok := 0.0, false
	bestIter := math.Inf(1)
	for _, row := range rows {
		if row.Reached == 0 || row.Reached < settled || float64(row.Over) != 0 {
			continue
		}
		if it := float64(row.MedianIterations); it < bestIter || (it == bestIter && row.Tolerance > best) {
			best, bestIter, ok = row.Tolerance, it, true
		}
	}
	return best, ok
}

func TestToleranceTable(t *testing.T) {
	cases := []struct {
		name     string
		e        Estimator
		shown    []string // tolerances shown, in order
		marked   string   // "" when no row is marked
		contains []string
	}{
		{
			name: "loose rule, 1e-5 is the cheapest within 0.01 SE",
			e: auditedEstimator("huber-loose", 200,
				tolRow(1e-2, 200, 4, 0.03, 1.1, 0.735), tolRow(1e-3, 200, 5, 0.004, 0.61, 0.32),
				tolRow(1e-4, 200, 6, 5e-4, 0.056, 0.05), tolRow(1e-5, 200, 8, 5e-5, 0.004, 0),
				tolRow(1e-6, 200, 9, 5e-6, 4e-4, 0), tolRow(1e-7, 200, 11, 5e-7, 4e-5, 0),
				tolRow(1e-8, 200, 12, 6e-8, 2e-6, 0), tolRow(1e-9, 200, 14, 6e-9, 2e-7, 0)),
			shown:  []string{"1e-2", "1e-3", "1e-4", "1e-5", "1e-6", "1e-7"},
			marked: "1e-5",
		},
		{
			// From 1e-4 on no fit that reached the tolerance is over
			// 0.01 SE, but 10 and then 20 of the 200 never got a change
			// that small: no tolerance is known to keep every fit
			// within 0.01 SE.
			name: "a tolerance not every fit reached is not marked",
			e: auditedEstimator("newton", 200,
				tolRow(1e-2, 200, 2, 1e-5, 0.3, 0.065), tolRow(1e-3, 200, 2, 4e-8, 0.02, 0.005),
				tolRow(1e-4, 190, 3, 2e-11, 2e-4, 0), tolRow(1e-5, 180, 3, 1e-13, 4e-7, 0)),
			shown:    []string{"1e-2", "1e-3", "1e-4", "1e-5"},
			contains: []string{"no change tolerance down to 1e-14 keeps every fit within 0.01 SE"},
		},
		{
			name: "a cheap tolerance among many",
			e: auditedEstimator("bisquare-newton", 200,
				tolRow(1e-2, 200, 2, 1e-5, 0.3, 0.065), tolRow(1e-3, 200, 2, 4e-8, 5e-4, 0),
				tolRow(1e-4, 200, 3, 2e-11, 2e-4, 0), tolRow(1e-5, 200, 3, 1e-13, 4e-7, 0),
				tolRow(1e-6, 200, 3, 1e-13, 1e-10, 0), tolRow(1e-7, 200, 4, 3e-14, 3e-12, 0)),
			shown:  []string{"1e-2", "1e-3", "1e-4", "1e-5"},
			marked: "1e-3",
		},
		{
			name: "none keeps every fit within 0.01 SE: every reached row, no mark",
			e: auditedEstimator("stuck", 10,
				tolRow(1e-2, 10, 3, 0.5, 2, 0.9), tolRow(1e-3, 10, 5, 0.2, 1, 0.5),
				tolRow(1e-4, 4, 9, 0.1, 0.5, 0.25), tolRow(1e-5, 0, math.NaN(), math.NaN(), math.NaN(), math.NaN())),
			shown:    []string{"1e-2", "1e-3", "1e-4"},
			contains: []string{"no change tolerance down to 1e-14 keeps every fit within 0.01 SE"},
		},
		{
			name: "unsettled fits are said",
			e: auditedEstimator("bisquare", 200,
				tolRow(1e-2, 199, 3, 0.03, 3.6, 0.87), tolRow(1e-3, 199, 5, 0.006, 3.4, 0.27),
				tolRow(1e-4, 199, 7, 3e-4, 0.004, 0)),
			shown:    []string{"1e-2", "1e-3", "1e-4"},
			marked:   "1e-4",
			contains: []string{"1 fit never settled below 1e-2"},
		},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var b strings.Builder
			writeToleranceTables(&b, Cell{Estimators: []Estimator{c.e}}, 100)
			out := b.String()
			var shown []string
			marked := ""
			for _, l := range strings.Split(out, "\n") {
				f := strings.Fields(l)
				if len(f) < 6 || !strings.HasPrefix(f[0], "1e-") {
					continue
				}
				shown = append(shown, f[0])
				if strings.Contains(l, "◂ cheapest with every fit within 0.01 SE") {
					if marked != "" {
						t.Errorf("two rows marked: %s and %s", marked, f[0])
					}
					marked = f[0]
				}
			}
			if strings.Join(shown, " ") != strings.Join(c.shown, " ") {
				t.Errorf("rows shown %v, want %v\n%s", shown, c.shown, out)
			}
			if marked != c.marked {
				t.Errorf("marked %q, want %q\n%s", marked, c.marked, out)
			}
			want, ok := bruteCheapest(c.e)
			if ok != (marked != "") || (ok && formatTol(want) != marked) {
				t.Errorf("marked %q, but the cheapest tolerance keeping every fit within 0.01 SE is %v (exists: %v)", marked, want, ok)
			}
			for _, s := range c.contains {
				if !strings.Contains(out, s) {
					t.Errorf("output lacks %q:\n%s", s, out)
				}
			}
		})
	}
}

// TestToleranceTablesShared: estimators that iterate alike share a table;
// estimators without an audit or with a direct method get none.
func TestToleranceTablesShared(t *testing.T) {
	rows := []ToleranceCost{tolRow(1e-2, 20, 4, 0.03, 1.1, 0.5), tolRow(1e-3, 20, 6, 1e-3, 5e-3, 0)}
	direct := Estimator{Label: "ls", Method: "ls"}
	direct.Convergence.StopError = &StopError{Audited: 20, Direct: true}
	other := auditedEstimator("newton", 20, tolRow(1e-2, 20, 2, 1e-3, 4e-3, 0))
	cell := Cell{Estimators: []Estimator{direct, auditedEstimator("a", 20, rows...), {Label: "plain", Method: "irls"},
		auditedEstimator("b", 20, rows...), other}}
	var b strings.Builder
	writeToleranceTables(&b, cell, 100)
	out := b.String()
	for _, s := range []string{"a, b: by change tolerance", "newton: by change tolerance"} {
		if strings.Count(out, s) != 1 {
			t.Errorf("want %q once:\n%s", s, out)
		}
	}
	if strings.Contains(out, "ls:") || strings.Contains(out, "plain") {
		t.Errorf("a table for an estimator without tolerances:\n%s", out)
	}
}

// tolResults is a two-cell run with a swept field, an audited iterative
// estimator, a direct one, and a failed cell whose values are null.
func tolResults() *Results {
	r := &Results{Schema: SchemaVersion}
	r.Scenario.Name = "bench"
	direct := Estimator{Label: "ls", Method: "ls"}
	direct.Convergence.StopError = &StopError{Audited: 20, Direct: true}
	r.Cells = []Cell{
		{Index: 0, Settings: []Setting{{Path: "noise.scale", Value: "0.5"}}, Replicates: 20, Estimators: []Estimator{direct,
			auditedEstimator("huber", 20, tolRow(1e-2, 20, 4, 0.031531849482238, 1.0762244125330644, 0.735),
				tolRow(1e-3, 20, 5.5, 0.004263546930977616, 0.6138380196628138, 0.05), tolRow(1e-4, 20, 7, 5.149221105440525e-05, 0.004097342896581252, 0),
				tolRow(1e-14, 18, 22, 9.163778390795838e-14, 2.9434003541238374e-12, 0))}},
		{Index: 1, Settings: []Setting{{Path: "noise.scale", Value: "2"}}, Replicates: 20, Estimators: []Estimator{direct,
			auditedEstimator("huber", 0, tolRow(1e-2, 0, math.NaN(), math.NaN(), math.NaN(), math.NaN()))}},
	}
	return r
}

// TestTolerancesCSV: one row per cell × audited iterative estimator ×
// tolerance, whose numbers read back exactly as in the results, and
// cheapest set on the row the table marks.
func TestTolerancesCSV(t *testing.T) {
	r := tolResults()
	var buf bytes.Buffer
	ok, err := WriteTolerancesCSV(&buf, r)
	if err != nil || !ok {
		t.Fatalf("WriteTolerancesCSV = %v, %v", ok, err)
	}
	recs, err := csv.NewReader(&buf).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	head := strings.Join(recs[0], ",")
	if want := "scenario,cell,noise.scale,estimator,stopping_rule,audited,tolerance,reached,median_iterations,median_error_se,max_error_se,over_0.01_se,cheapest"; head != want {
		t.Fatalf("header %s, want %s", head, want)
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}
	readNum := func(s string) float64 {
		if s == "NA" {
			return math.NaN()
		}
		f, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatalf("%q: %v", s, err)
		}
		return f
	}
	same := func(a, b float64) bool { return a == b || (math.IsNaN(a) && math.IsNaN(b)) }
	n := 1
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			tol, hasTol := bruteCheapest(e)
			for _, row := range e.Convergence.Tolerances {
				if n >= len(recs) {
					t.Fatalf("only %d rows", len(recs)-1)
				}
				rec := recs[n]
				n++
				if rec[col["cell"]] != strconv.Itoa(c.Index) || rec[col["estimator"]] != e.Label || rec[col["noise.scale"]] != c.Settings[0].Value {
					t.Errorf("row %d is %v, want cell %d %s", n-1, rec, c.Index, e.Label)
				}
				pairs := []struct {
					name string
					want float64
				}{
					{"tolerance", row.Tolerance}, {"reached", float64(row.Reached)}, {"median_iterations", float64(row.MedianIterations)},
					{"median_error_se", float64(row.MedianErrorSE)}, {"max_error_se", float64(row.MaxErrorSE)}, {"over_0.01_se", float64(row.Over)},
				}
				for _, p := range pairs {
					if got := readNum(rec[col[p.name]]); !same(got, p.want) {
						t.Errorf("cell %d %s %v: %s reads back %v, want %v", c.Index, e.Label, row.Tolerance, p.name, got, p.want)
					}
				}
				if want := strconv.FormatBool(hasTol && row.Tolerance == tol); rec[col["cheapest"]] != want {
					t.Errorf("cell %d %s %v: cheapest %s, want %s", c.Index, e.Label, row.Tolerance, rec[col["cheapest"]], want)
				}
			}
		}
	}
	if n != len(recs) {
		t.Errorf("%d rows, want %d", len(recs)-1, n-1)
	}
}

// TestSaveTolerancesCSV: Save writes NAME-tolerances.csv only when some
// estimator has a tolerance table.
func TestSaveTolerancesCSV(t *testing.T) {
	plain := tolResults()
	for i := range plain.Cells {
		for j := range plain.Cells[i].Estimators {
			plain.Cells[i].Estimators[j].Convergence = Convergence{}
		}
	}
	cases := []struct {
		name string
		r    *Results
		want bool
	}{
		{"audited", tolResults(), true},
		{"not audited", plain, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			paths, err := Save(dir, c.r)
			if err != nil {
				t.Fatal(err)
			}
			p := filepath.Join(dir, "bench-tolerances.csv")
			listed := strings.Contains(strings.Join(paths, "\n"), p)
			_, statErr := os.Stat(p)
			if listed != c.want || (statErr == nil) != c.want {
				t.Errorf("tolerances file listed %v, exists %v; want %v", listed, statErr == nil, c.want)
			}
		})
	}
}
