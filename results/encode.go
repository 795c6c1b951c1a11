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

// ReadJSON reads results written by WriteJSON. It reads files of this
// schema version and of version 1, which lacks only measures added since
// (compare leaves those out), and refuses any other.
func ReadJSON(rd io.Reader) (*Results, error) {
	var r Results
	dec := json.NewDecoder(rd)
	if err := dec.Decode(&r); err != nil {
		return nil, fmt.Errorf("not a results file: %w", err)
	}
	if r.Schema < 1 || r.Schema > SchemaVersion {
		return nil, fmt.Errorf("results schema version %d; this build reads versions 1 to %d", r.Schema, SchemaVersion)
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
// coefficient, with one column per swept field. heavy_tails and
// rel_eff_heavy_tails are true or false (see Coefficient); where they are
// true the MCSEs they cover are NA. A run with a solver study (solver
// audit or root search) adds its columns (solverCSVHeader), NA where an
// estimator has none. Provenance and timing are left out, so two runs of
// the same scenario and seed give identical files.
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
		"rmse", "rmse_mcse", "mse_ratio", "mse_ratio_mcse",
		"rel_eff", "rel_eff_mcse", "paired", "theory_efficiency", "theory_gap_mcse",
		"heavy_tails", "rel_eff_heavy_tails", "intervals", "coverage", "coverage_mcse", "width", "width_mcse", "slope_bias", "slope_bias_mcse",
		"failure_rate", "failure_low", "failure_high", "mean_iterations", "mean_iterations_mcse", "median_iterations", "max_iterations")
	solver := solverCSVHeader(r)
	header = append(header, solver...)
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
			for ki, k := range e.Coefficients {
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
					csvFloat(float64(k.RMSE.Value)), csvFloat(float64(k.RMSE.MCSE)),
					csvFloat(float64(k.MSERatio.Value)), csvFloat(float64(k.MSERatio.MCSE)),
					csvFloat(float64(k.RelEff.Value)), csvFloat(float64(k.RelEff.MCSE)),
					strconv.FormatInt(k.Paired, 10), csvFloat(float64(e.TheoryEfficiency)), csvFloat(float64(k.TheoryGap)),
					strconv.FormatBool(k.HeavyTails), strconv.FormatBool(k.RelEffHeavyTails), strconv.FormatInt(k.Intervals, 10), csvFloat(float64(k.Coverage.Value)), csvFloat(float64(k.Coverage.MCSE)),
					csvFloat(float64(k.Width.Value)), csvFloat(float64(k.Width.MCSE)),
					csvFloat(float64(e.SlopeBias.Value)), csvFloat(float64(e.SlopeBias.MCSE)),
					csvFloat(float64(cv.FailureRate.Value)), csvFloat(float64(cv.FailureRate.Low)), csvFloat(float64(cv.FailureRate.High)),
					csvFloat(float64(cv.MeanIterations.Value)), csvFloat(float64(cv.MeanIterations.MCSE)), csvFloat(float64(cv.MedianIterations)), strconv.FormatInt(cv.MaxIterations, 10))
				if solver != nil {
					row = append(row, solverCSVRow(e, ki)...)
				}
				if err := cw.Write(row); err != nil {
					return err
				}
			}
		}
	}
	cw.Flush()
	return cw.Error()
}

// WriteBiasCSV writes the figure-ready bias-curve table of r: one row per
// group of cells and estimator, with the fraction, the mean and worst
// slope-bias norm over the swept positions and their MCSEs, where the worst
// case sits, and the rate of replicates past the breakdown threshold. It
// writes nothing and reports false when r has no breakdown view.
func WriteBiasCSV(w io.Writer, r *Results) (bool, error) {
	b := r.Breakdown
	if b == nil {
		return false, nil
	}
	cw := csv.NewWriter(w)
	var paths []string
	if len(b.Curve) > 0 {
		for _, s := range b.Curve[0].Settings {
			if s.Path != b.Fraction {
				paths = append(paths, s.Path)
			}
		}
	}
	header := append([]string{"scenario"}, paths...)
	header = append(header, "fraction", "estimator", "bias", "bias_mcse", "worst_bias", "worst_bias_mcse", "worst_at", "past_threshold", "past_low", "past_high")
	if err := cw.Write(header); err != nil {
		return true, err
	}
	for _, pt := range b.Curve {
		row := []string{r.Scenario.Name}
		for _, s := range pt.Settings {
			if s.Path != b.Fraction {
				row = append(row, s.Value)
			}
		}
		var at []string
		for _, s := range pt.WorstAt {
			at = append(at, s.Path+"="+s.Value)
		}
		past := []string{"NA", "NA", "NA"}
		if pt.PastThreshold != nil {
			past = []string{csvFloat(float64(pt.PastThreshold.Value)), csvFloat(float64(pt.PastThreshold.Low)), csvFloat(float64(pt.PastThreshold.High))}
		}
		row = append(row, csvFloat(pt.Fraction), pt.Estimator,
			csvFloat(float64(pt.Bias.Value)), csvFloat(float64(pt.Bias.MCSE)),
			csvFloat(float64(pt.Worst.Value)), csvFloat(float64(pt.Worst.MCSE)), strings.Join(at, ";"))
		row = append(row, past...)
		if err := cw.Write(row); err != nil {
			return true, err
		}
	}
	cw.Flush()
	return true, cw.Error()
}
