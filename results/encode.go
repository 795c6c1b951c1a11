package results

import (
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// WriteJSON writes r as indented JSON.
func WriteJSON(w io.Writer, r *Results) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(r)
}

// ReadJSON reads results written by WriteJSON. It refuses files of another
// schema version.
func ReadJSON(rd io.Reader) (*Results, error) {
	var r Results
	dec := json.NewDecoder(rd)
	if err := dec.Decode(&r); err != nil {
		return nil, fmt.Errorf("not a results file: %w", err)
	}
	if r.Schema != SchemaVersion {
		return nil, fmt.Errorf("results schema version %d; this build reads version %d", r.Schema, SchemaVersion)
	}
	return &r, nil
}

// csvFloat formats a number for CSV: the shortest text that reads back as
// the same float64, or NA for NaN and infinities (as R and pandas expect).
func csvFloat(f float64) string {
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return "NA"
	}
	return strconv.FormatFloat(f, 'g', -1, 64)
}

// WriteCSV writes r as tidy CSV: one row per cell × estimator ×
// coefficient, with one column per swept field. Provenance and timing are
// left out, so two runs of the same scenario and seed give identical files.
func WriteCSV(w io.Writer, r *Results) error {
	cw := csv.NewWriter(w)
	var paths []string
	if len(r.Cells) > 0 {
		for _, s := range r.Cells[0].Settings {
			paths = append(paths, s.Path)
		}
	}
	header := []string{"scenario", "cell"}
	header = append(header, paths...)
	header = append(header,
		"estimator", "method", "psi", "tuning", "coefficient", "true", "replicates", "used",
		"mean", "mean_mcse", "bias", "bias_mcse", "emp_se", "emp_se_mcse", "mse", "mse_mcse",
		"rel_eff", "rel_eff_mcse", "paired", "theory_efficiency", "theory_gap_mcse",
		"failure_rate", "failure_low", "failure_high", "mean_iterations", "mean_iterations_mcse", "median_iterations", "max_iterations")
	if err := cw.Write(header); err != nil {
		return err
	}
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			tuning := make([]string, len(e.Tuning))
			for i, t := range e.Tuning {
				tuning[i] = csvFloat(t)
			}
			cv := e.Convergence
			for _, k := range e.Coefficients {
				row := []string{r.Scenario.Name, strconv.Itoa(c.Index)}
				for _, s := range c.Settings {
					row = append(row, s.Value)
				}
				row = append(row, e.Label, e.Method, e.Psi, strings.Join(tuning, ";"), k.Name,
					csvFloat(k.True), strconv.FormatInt(c.Replicates, 10), strconv.FormatInt(k.Used, 10),
					csvFloat(float64(k.Mean.Value)), csvFloat(float64(k.Mean.MCSE)),
					csvFloat(float64(k.Bias.Value)), csvFloat(float64(k.Bias.MCSE)),
					csvFloat(float64(k.EmpSE.Value)), csvFloat(float64(k.EmpSE.MCSE)),
					csvFloat(float64(k.MSE.Value)), csvFloat(float64(k.MSE.MCSE)),
					csvFloat(float64(k.RelEff.Value)), csvFloat(float64(k.RelEff.MCSE)),
					strconv.FormatInt(k.Paired, 10), csvFloat(float64(e.TheoryEfficiency)), csvFloat(float64(k.TheoryGap)),
					csvFloat(float64(cv.FailureRate.Value)), csvFloat(float64(cv.FailureRate.Low)), csvFloat(float64(cv.FailureRate.High)),
					csvFloat(float64(cv.MeanIterations.Value)), csvFloat(float64(cv.MeanIterations.MCSE)), csvFloat(float64(cv.MedianIterations)), strconv.FormatInt(cv.MaxIterations, 10))
				if err := cw.Write(row); err != nil {
					return err
				}
			}
		}
	}
	cw.Flush()
	return cw.Error()
}
