package main

import (
	"bytes"
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/rhomark/rhomark/results"
)

// TestRunTolerances runs the shipped stopping-rules scenario (audit on)
// on 1 and 2 workers: NAME-tolerances.csv is the same bytes, reads back
// the JSON's tolerance rows exactly, and marks, as the terminal table
// does, the cheapest tolerance at which every settled fit was within
// 0.01 SE. A run without the audit writes no such file.
func TestRunTolerances(t *testing.T) {
	var files [2][]byte
	var out [2]string
	dirs := [2]string{t.TempDir(), t.TempDir()}
	for i, workers := range []string{"1", "2"} {
		code, stdout, errs := rhomark(t, "run", "stopping-rules", "--replicates", "16", "--workers", workers, "--quiet", "--out", dirs[i])
		if code != exitOK {
			t.Fatalf("workers %s: exit %d: %s", workers, code, errs)
		}
		b, err := os.ReadFile(filepath.Join(dirs[i], "stopping-rules-tolerances.csv"))
		if err != nil {
			t.Fatal(err)
		}
		files[i], out[i] = b, stdout
	}
	if !bytes.Equal(files[0], files[1]) {
		t.Error("stopping-rules-tolerances.csv differs between 1 and 2 workers")
	}
	f, err := os.Open(filepath.Join(dirs[0], "stopping-rules.json"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	r, err := results.ReadJSON(f)
	if err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(bytes.NewReader(files[0])).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}
	num := func(s string) float64 {
		if s == "NA" {
			return math.NaN()
		}
		v, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatalf("%q: %v", s, err)
		}
		return v
	}
	same := func(a, b float64) bool { return a == b || (math.IsNaN(a) && math.IsNaN(b)) }
	n, marked := 1, 0
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			rows := e.Convergence.Tolerances
			if len(rows) == 0 {
				continue
			}
			// The cheapest tolerance, found here without AdviseStop: the
			// fewest median iterations among the tolerances that every
			// settled fit reached with none over 0.01 SE.
			best, bestIter := math.NaN(), math.Inf(1)
			for _, row := range rows {
				if row.Reached > 0 && row.Reached >= rows[0].Reached && float64(row.Over) == 0 && float64(row.MedianIterations) < bestIter {
					best, bestIter = row.Tolerance, float64(row.MedianIterations)
				}
			}
			for _, row := range rows {
				rec := recs[n]
				n++
				if rec[col["cell"]] != strconv.Itoa(c.Index) || rec[col["estimator"]] != e.Label {
					t.Fatalf("CSV row %d is %v, want cell %d %s", n-1, rec, c.Index, e.Label)
				}
				for name, want := range map[string]float64{"tolerance": row.Tolerance, "reached": float64(row.Reached),
					"median_iterations": float64(row.MedianIterations), "median_error_se": float64(row.MedianErrorSE),
					"max_error_se": float64(row.MaxErrorSE), "over_0.01_se": float64(row.Over)} {
					if got := num(rec[col[name]]); !same(got, want) {
						t.Errorf("cell %d %s %v: %s %v in the CSV, %v in the JSON", c.Index, e.Label, row.Tolerance, name, got, want)
					}
				}
				if want := strconv.FormatBool(row.Tolerance == best); rec[col["cheapest"]] != want {
					t.Errorf("cell %d %s %v: cheapest %s, want %s", c.Index, e.Label, row.Tolerance, rec[col["cheapest"]], want)
				}
				if row.Tolerance == best {
					marked++
				}
			}
		}
	}
	if n != len(recs) {
		t.Errorf("the CSV has %d rows, the JSON %d tolerance rows", len(recs)-1, n-1)
	}
	if got := strings.Count(out[0], "◂ cheapest with every fit within 0.01 SE"); got == 0 || got > marked {
		t.Errorf("the table marks %d rows; the CSV %d (shared tables mark once)", got, marked)
	}
	if out[0] != out[1] {
		t.Error("the terminal output differs between 1 and 2 workers")
	}

	dir := t.TempDir()
	path := filepath.Join(dir, "plain.yaml")
	if err := os.WriteFile(path, []byte(`name: plain
seed: 3
model: {n: 40, intercept: 20, columns: [{name: volume, slope: 0.98, dist: levels, levels: [5, 10, 20, 50, 100]}]}
noise: {dist: normal, scale: 0.5}
estimators:
  - {label: huber, method: irls, psi: huber, stop: {change: 1e-3}}
`), 0o644); err != nil {
		t.Fatal(err)
	}
	code, stdout, errs := rhomark(t, "run", path, "--replicates", "5", "--quiet", "--out", dir)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if _, err := os.Stat(filepath.Join(dir, "plain-tolerances.csv")); err == nil {
		t.Error("a run without the audit wrote plain-tolerances.csv")
	}
	if strings.Contains(stdout, "by change tolerance") {
		t.Error("a run without the audit prints a tolerance table")
	}
}
