package results

import (
	"encoding/json"
	"math"
	"time"
)

// SchemaVersion is the version of the JSON layout written by this package.
// It changes whenever a field is renamed, its meaning changes, or a measure
// is added that compare must not read as zero in older files. Version 2
// added rmse, mse_ratio, the verdict and the heavy-tail flags.
const SchemaVersion = 2

// Results is the outcome of one run of a scenario.
type Results struct {
	// Schema is SchemaVersion at the time of writing.
	Schema int `json:"schema"`
	// Tool identifies the program that wrote the results.
	Tool Tool `json:"tool"`
	// Scenario identifies what was simulated.
	Scenario ScenarioInfo `json:"scenario"`
	// Seed is the root seed of every random stream.
	Seed uint64 `json:"seed"`
	// Replicates is the number of replicates asked for per cell.
	Replicates int `json:"replicates"`
	// Complete is false when the run stopped early (cancelled); each cell's
	// Replicates then says how many finished.
	Complete bool `json:"complete"`
	// Reference is the label of the estimator efficiencies are relative to.
	Reference string `json:"reference"`
	// Cells holds one entry per cell of the scenario, in order.
	Cells []Cell `json:"cells"`
	// ReplicateFile names the replicate file kept beside the results (in the
	// same directory), or is empty.
	ReplicateFile string `json:"replicate_file,omitempty"`
	// Functions holds the psi, rho and weight functions of the run's
	// M-estimators (as configured in the first cell), for figures.
	Functions []FunctionCurve `json:"functions,omitempty"`
	// TuningTheory holds asymptotic efficiency curves for estimators whose
	// tuning constant is swept, to draw beside the simulated points.
	TuningTheory []TuningCurve `json:"tuning_theory,omitempty"`
	// Recommendation holds the tuning studies (see Recommend) when an
	// estimator's tuning constant is swept: which constant to choose and
	// how sure that is.
	Recommendation *Recommendation `json:"recommendation,omitempty"`
	// Breakdown holds the bias curves and empirical breakdown points when
	// the scenario asks for them.
	Breakdown *Breakdown `json:"breakdown,omitempty"`
	// Provenance records when, where and how fast the run happened. It is
	// the only part of Results that differs between two runs of the same
	// scenario and seed.
	Provenance Provenance `json:"provenance"`
}

// Tool identifies the program and its build.
type Tool struct {
	Name    string `json:"name"`    // program name, "rhomark"
	Version string `json:"version"` // program version, with the VCS revision appended when the build recorded one
}

// ScenarioInfo identifies a scenario.
type ScenarioInfo struct {
	// Name is the scenario's name.
	Name string `json:"name"`
	// File is the file it was loaded from.
	File string `json:"file"`
	// Hash is the SHA-256 of the normalised scenario without seed,
	// replicates and description.
	Hash string `json:"hash"`
	// Normalised is the scenario with every default filled in.
	Normalised json.RawMessage `json:"normalised"`
}

// Setting is the value of one swept field in a cell.
type Setting struct {
	Path  string `json:"path"`  // dotted path of the swept field, as written under vary
	Value string `json:"value"` // the field's value in this cell, as YAML text
}

// Cell is the outcome of one cell: one combination of swept values.
type Cell struct {
	// Index is the cell's position in the scenario's grid.
	Index int `json:"index"`
	// Settings are the swept values of the cell.
	Settings []Setting `json:"settings"`
	// Replicates is the number of replicates that finished.
	Replicates int64 `json:"replicates"`
	// Estimators holds one entry per estimator, in scenario order.
	Estimators []Estimator `json:"estimators"`
	// Verdict says which estimator to choose in this cell and how sure
	// that choice is (see Decide); absent in files written before it
	// existed, where VerdictOf computes it.
	Verdict *Verdict `json:"verdict,omitempty"`
}

// Estimator is the outcome of one estimator in one cell.
type Estimator struct {
	// Label names the estimator.
	Label string `json:"label"`
	// Method is the estimation method as named in scenario files: ls, irls,
	// newton, s-estimate, mm-estimate, lts or lad.
	Method string `json:"method"`
	// Psi is the psi family ("" for least squares).
	Psi string `json:"psi,omitempty"`
	// Tuning holds the tuning constants.
	Tuning []float64 `json:"tuning,omitempty"`
	// TheoryEfficiency is the asymptotic efficiency against the reference
	// estimator, where the cell's noise is normal, homoscedastic and
	// uncontaminated so that the theory at the normal model applies; null
	// otherwise.
	TheoryEfficiency Num `json:"theory_efficiency"`
	// Coefficients holds the performance of each coefficient.
	Coefficients []Coefficient `json:"coefficients"`
	// SlopeBias is the Euclidean norm of the bias of the slopes (every
	// coefficient but the intercept), debiased for the noise in the mean
	// (√max(0, ‖b̂‖² − tr Σ̂/n)), with a delta-method MCSE.
	SlopeBias Measure `json:"slope_bias"`
	// PastThreshold is the rate of replicates whose slope error norm
	// exceeds the scenario's breakdown threshold, counting failed fits as
	// past it (absent without a threshold).
	PastThreshold *Rate `json:"past_threshold,omitempty"`
	// Convergence summarises how the fits ended.
	Convergence Convergence `json:"convergence"`
}

// Coefficient is the performance of one estimated coefficient over the
// replicates whose fit converged.
type Coefficient struct {
	// Name is the coefficient's name ("intercept" or a column name).
	Name string `json:"name"`
	// True is the coefficient's true value.
	True float64 `json:"true"`
	// Used is the number of replicates the measures are computed from.
	Used int64 `json:"used"`
	// Mean is the mean estimate.
	Mean Measure `json:"mean"`
	// Bias is mean estimate minus true value.
	Bias Measure `json:"bias"`
	// EmpSE is the empirical standard error: the standard deviation of the
	// estimates.
	EmpSE Measure `json:"emp_se"`
	// MSE is the mean squared error about the true value.
	MSE Measure `json:"mse"`
	// RMSE is the root mean squared error √MSE, in the coefficient's units:
	// it counts bias and spread together, so it is what the verdict ranks
	// by. Its MCSE is MCSE(MSE)/(2·RMSE) (see Moments.RootMeanSquaredError);
	// null under heavy tails.
	RMSE Measure `json:"rmse"`
	// MSERatio is MSE(reference)/MSE(this estimator) over the replicates
	// where both converged: above 1 this estimator is the more accurate.
	// Its MCSE is paired (see PairedSquares.MSERatio). For the reference
	// itself it is exactly 1 with a null MCSE; its MCSE is also null when
	// RelEffHeavyTails is set.
	MSERatio Measure `json:"mse_ratio"`
	// RelEff is the variance efficiency against the reference estimator,
	// EmpSE_ref² / EmpSE², over the replicates where both converged. It
	// ignores bias: a biased estimator can have a high one.
	RelEff Measure `json:"rel_eff"`
	// Paired is the number of replicates RelEff and MSERatio are computed
	// from.
	Paired int64 `json:"paired"`
	// Intervals is the number of replicates with a 95% interval (fits that
	// converged, by a method with standard errors).
	Intervals int64 `json:"intervals"`
	// Coverage is the fraction of those intervals that contain the true
	// value, and Width their mean width, each with its MCSE.
	Coverage Measure `json:"coverage"`
	Width    Measure `json:"width"` // mean width of the 95% intervals, with its MCSE
	// TailRatio is Σ(e−ē)⁴/(Σ(e−ē)²)², the sample kurtosis over Used: how
	// far the sum of squares rests on a few replicates (1/TailRatio
	// replicates carry it, in effect); see TailRatio.
	TailRatio Num `json:"tail_ratio"`
	// HeavyTails is set when TailRatio exceeds 2/√Used: the estimates
	// behave as if they had no finite variance, so the empirical SE and
	// the MSE, and the MCSEs of the mean, bias, SE and MSE (null then), are
	// not meaningful.
	HeavyTails bool `json:"heavy_tails"`
	// RelEffHeavyTails is the same check on the paired errors of this
	// estimator or of the reference: the relative efficiency and the MSE
	// ratio, and their MCSEs (null then), are not meaningful.
	RelEffHeavyTails bool `json:"rel_eff_heavy_tails"`
	// TheoryGap is (RelEff − TheoryEfficiency) / MCSE of RelEff: how far,
	// in Monte Carlo standard errors, the simulation lies from the
	// asymptotic theory; null where there is no theory.
	TheoryGap Num `json:"theory_gap_mcse"`
}

// Convergence summarises how the fits of one estimator in one cell ended.
type Convergence struct {
	// Fits is the number of fits made.
	Fits int64 `json:"fits"`
	// Converged is the number that ended with a usable solution.
	Converged int64 `json:"converged"`
	// FailureRate is the fraction of fits that did not converge, with its
	// Wilson 95% interval.
	FailureRate Rate `json:"failure_rate"`
	// Statuses counts the fits by final status, with each status's rate and
	// Wilson 95% interval; statuses that never occurred are left out.
	Statuses []StatusCount `json:"statuses"`
	// MeanIterations (with its MCSE), MedianIterations and MaxIterations
	// describe the iterations of all fits.
	MeanIterations   Measure `json:"mean_iterations"`
	MedianIterations Num     `json:"median_iterations"` // median iterations of all fits; null when there are none
	// IterationHistogram counts the fits by iterations taken: entry k is the
	// number of fits that took k iterations, except that entry 1,000,000
	// (the last possible, the largest iteration cap a scenario accepts)
	// counts every fit that took that many or more.
	IterationHistogram []int64 `json:"iteration_histogram,omitempty"`
	MaxIterations      int64   `json:"max_iterations"` // most iterations of any fit; 0 when there are none
	// Halvings, Fallbacks and QRSolves total the safeguards fired: Newton
	// step halvings, IRLS steps taken in place of Newton steps, and weighted
	// solves that fell back from Cholesky to QR.
	Halvings  int64 `json:"halvings"`
	Fallbacks int64 `json:"fallbacks"` // iterations that took an IRLS step instead of a Newton step
	QRSolves  int64 `json:"qr_solves"` // weighted solves that fell back from Cholesky to QR
	// StopError, Rate and Tolerances are the solver audit (absent unless
	// the estimator was audited); Roots the root search (absent unless
	// asked for). See convergence.go.
	StopError  *StopError      `json:"stop_error,omitempty"`
	Rate       *ObservedRate   `json:"rate,omitempty"`
	Tolerances []ToleranceCost `json:"tolerances,omitempty"`
	Roots      *RootStudy      `json:"roots,omitempty"`
}

// StatusCount is how many fits ended with one status.
type StatusCount struct {
	Status string `json:"status"` // name of the final status
	// Converged is set when the status is a usable solution (solved, an
	// exact fit, or converged by a stopping rule); the others are failures.
	Converged bool  `json:"converged"`
	Count     int64 `json:"count"` // number of fits that ended with it
	Rate      Rate  `json:"rate"`  // Count over all fits, with its Wilson 95% interval
}

// Rate is a proportion with its Wilson score 95% interval.
type Rate struct {
	Value Num `json:"value"` // the proportion k/n; null (as are Low and High) when n = 0
	Low   Num `json:"low"`   // lower end of the interval, in [0, 1]
	High  Num `json:"high"`  // upper end of the interval, in [0, 1]
}

// Measure is a performance measure with its Monte Carlo standard error.
type Measure struct {
	Value Num `json:"value"` // the estimate; null when it is undefined
	MCSE  Num `json:"mcse"`  // its Monte Carlo standard error; null when undefined
}

// Num is a float64 that encodes NaN and infinities as JSON null (JSON has
// no such numbers) and decodes null as NaN.
type Num float64

// MarshalJSON encodes finite values as numbers and others as null.
func (n Num) MarshalJSON() ([]byte, error) {
	f := float64(n)
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return []byte("null"), nil
	}
	return json.Marshal(f)
}

// UnmarshalJSON decodes a number, or null as NaN.
func (n *Num) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*n = Num(math.NaN())
		return nil
	}
	var f float64
	if err := json.Unmarshal(b, &f); err != nil {
		return err
	}
	*n = Num(f)
	return nil
}

// Provenance records the circumstances of a run. Nothing here enters the
// CSV, so two runs of the same scenario and seed give identical CSV files.
type Provenance struct {
	GoVersion string    `json:"go_version"` // runtime.Version() of the binary
	OS        string    `json:"os"`         // runtime.GOOS
	Arch      string    `json:"arch"`       // runtime.GOARCH
	Workers   int       `json:"workers"`    // goroutines fitting in parallel; 0 for results summarised from merged partials
	Started   time.Time `json:"started"`    // start of the run, in UTC; for merged partials, the time of the merge
	Finished  time.Time `json:"finished"`   // end of the run, in UTC; for merged partials, the time of the merge
	// Build holds build information of the binary (module version, VCS
	// revision and time) where Go recorded it.
	Build map[string]string `json:"build,omitempty"`
	// Timing is the mean wall time per fit of each estimator in each cell.
	Timing []Timing `json:"timing"`
}

// WithoutRunDetails returns the provenance without what differs between two
// runs of the same work on different machines or at different times: the
// times, the worker count and the timings. What is left identifies the
// software.
func (p Provenance) WithoutRunDetails() Provenance {
	return Provenance{GoVersion: p.GoVersion, OS: p.OS, Arch: p.Arch, Build: p.Build}
}

// Timing is the mean time per fit of one estimator in one cell, in seconds.
type Timing struct {
	Cell       int     `json:"cell"`            // index of the cell (Cell.Index), from 0
	Estimator  string  `json:"estimator"`       // the estimator's label
	SecondsPer float64 `json:"seconds_per_fit"` // wall time spent fitting divided by the number of fits
}

// Breakdown is the bias-curve view of a run: the norm of the slope bias
// against the contamination fraction, the worst case over the swept
// positions, and the smallest fraction at which each estimator breaks down.
type Breakdown struct {
	// Fraction is the swept path of the contamination fraction.
	Fraction string `json:"fraction"`
	// WorstOver lists the swept paths the worst case is taken over.
	WorstOver []string `json:"worst_over,omitempty"`
	// Threshold is the slope-bias norm that counts as breakdown (0: none).
	Threshold float64 `json:"threshold,omitempty"`
	// Curve holds one point per group of cells (cells that differ only in
	// the worst-over paths) and estimator.
	Curve []BiasPoint `json:"curve"`
	// Points holds, per estimator and group of the other sweeps, the
	// smallest fraction whose worst bias exceeds the threshold.
	Points []BreakdownPoint `json:"points,omitempty"`
}

// BiasPoint is one point of a bias curve.
type BiasPoint struct {
	// Settings are the group's swept values other than the worst-over
	// paths (the fraction among them).
	Settings []Setting `json:"settings"`
	// Fraction is the nominal contamination fraction f as written in the
	// scenario. The rows replaced are round(f·n), so the realised fraction
	// round(f·n)/n can differ from f at small n.
	Fraction  float64 `json:"fraction"`
	Estimator string  `json:"estimator"` // the estimator's label
	// Bias is the mean, over the group's positions, of the slope-bias
	// norm; Worst the largest, at WorstAt (the worst-over values), with
	// that cell's MCSE. Being the largest of noisy estimates, Worst is
	// biased upward, by up to about its MCSE when positions are alike.
	Bias    Measure   `json:"bias"`
	Worst   Measure   `json:"worst"`              // largest slope-bias norm over the positions, with that cell's MCSE
	WorstAt []Setting `json:"worst_at,omitempty"` // the worst-over settings of the cell where Worst occurred
	// PastThreshold is the rate of replicates past the threshold in the
	// worst cell.
	PastThreshold *Rate `json:"past_threshold,omitempty"`
}

// BreakdownPoint is the empirical breakdown of one estimator.
type BreakdownPoint struct {
	// Settings are the swept values other than the fraction and the
	// worst-over paths.
	Settings  []Setting `json:"settings,omitempty"`
	Estimator string    `json:"estimator"` // the estimator's label
	// Fraction is the smallest swept fraction whose worst slope-bias norm
	// exceeds the threshold; null if none does.
	Fraction Num `json:"fraction"`
	// PastThreshold is the rate of replicates past the threshold there.
	PastThreshold *Rate `json:"past_threshold,omitempty"`
}

// FunctionCurve is a psi function of one estimator sampled on a grid of
// standardised residuals u ≥ 0 (psi is odd, rho and the weight even).
type FunctionCurve struct {
	Estimator string    `json:"estimator"`  // the estimator's label
	Psi       string    `json:"psi"`        // the psi drawn: its family name followed by any tuning constants
	U         []float64 `json:"u"`          // the grid of residuals: 401 points equally spaced from 0 to 8, plus the kinks of psi, increasing
	PsiValues []Num     `json:"psi_values"` // psi(U[i]) at each grid point
	Rho       []Num     `json:"rho"`        // rho(U[i]) at each grid point
	Weight    []Num     `json:"weight"`     // Weight(U[i]), the IRLS weight psi(u)/u, at each grid point
}

// TuningCurve is the asymptotic efficiency (against the reference, at the
// normal model) of one estimator as its first tuning constant varies.
type TuningCurve struct {
	// Path is the swept path of the constant.
	Path       string    `json:"path"`
	Estimator  string    `json:"estimator"`  // the estimator's label
	Constants  []float64 `json:"constants"`  // values of the first tuning constant, geometrically spaced, increasing
	Efficiency []Num     `json:"efficiency"` // efficiency at Constants[i], against the reference estimator
}
