package results

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"strings"
)

// CompareSchemaVersion is the version of the JSON layout of a Comparison
// (WriteComparisonJSON). It changes whenever a field is renamed or its
// meaning changes.
const CompareSchemaVersion = 1

// CompareOptions control a comparison. Zero values mean the defaults.
type CompareOptions struct {
	// Threshold is the |z| beyond which a summary difference is flagged
	// before the multiplicity correction; it sets the family-wise level
	// α = P(|Z| > Threshold) of Holm's procedure. Default 4.
	Threshold float64
	// FailureAlpha is the family-wise level at which a change of the
	// failure rate is flagged (an exact test per cell × estimator, Holm's
	// procedure across them). Default 0.05.
	FailureAlpha float64
	// Tolerance is the largest absolute change of an estimate that paired
	// mode accepts; zero demands bit-identical estimates. The command line
	// defaults it to 1e-9.
	Tolerance float64
	// List is how many status changes, and how many of the largest moves,
	// the paired report keeps for listing; 0 means 20, negative none.
	List int
	// AnyScenario allows comparing runs whose scenarios differ in more
	// than solver settings. With the same data settings and seed the
	// comparison is still paired; otherwise cells are matched by their
	// swept settings and only summaries are compared.
	AnyScenario bool
}

func (o CompareOptions) withDefaults() CompareOptions {
	if o.Threshold == 0 {
		o.Threshold = 4
	}
	if o.FailureAlpha == 0 {
		o.FailureAlpha = 0.05
	}
	switch {
	case o.List == 0:
		o.List = 20
	case o.List < 0:
		o.List = 0
	}
	return o
}

// ErrDifferentScenarios is wrapped by Compare's error when the runs'
// scenarios differ in more than solver settings and AnyScenario is not
// set; the error is a *ScenarioMismatch.
var ErrDifferentScenarios = errors.New("the runs simulate different scenarios")

// ScenarioMismatch is the error of Compare for runs that are not one
// study: their scenarios differ in a setting that is not a solver setting.
type ScenarioMismatch struct {
	Baseline, Candidate string          // the scenarios' names
	Changes             []SettingChange // every setting that differs, solver settings included
}

// Error names the settings that are not solver settings.
func (e *ScenarioMismatch) Error() string {
	var parts []string
	for _, s := range e.Changes {
		if s.Kind != SettingSolver && s.Kind != SettingName {
			parts = append(parts, fmt.Sprintf("%s (%s setting: %s → %s)", s.Path, s.Kind, s.Baseline, s.Candidate))
		}
	}
	if len(parts) > 6 {
		parts = append(parts[:6], fmt.Sprintf("and %d more", len(parts)-6))
	}
	return fmt.Sprintf("%v (%s vs %s): they differ in %s", ErrDifferentScenarios, e.Baseline, e.Candidate, strings.Join(parts, "; "))
}

// Is makes errors.Is(err, ErrDifferentScenarios) hold.
func (e *ScenarioMismatch) Is(target error) bool { return target == ErrDifferentScenarios }

// Float is a float64 whose JSON form keeps every value: a number, null for
// NaN, or the string "+Inf" or "-Inf".
type Float float64

// MarshalJSON encodes the value.
func (f Float) MarshalJSON() ([]byte, error) {
	v := float64(f)
	switch {
	case math.IsNaN(v):
		return []byte("null"), nil
	case math.IsInf(v, 1):
		return []byte(`"+Inf"`), nil
	case math.IsInf(v, -1):
		return []byte(`"-Inf"`), nil
	}
	return json.Marshal(v)
}

// UnmarshalJSON decodes what MarshalJSON writes.
func (f *Float) UnmarshalJSON(b []byte) error {
	switch string(b) {
	case "null":
		*f = Float(math.NaN())
		return nil
	case `"+Inf"`:
		*f = Float(math.Inf(1))
		return nil
	case `"-Inf"`:
		*f = Float(math.Inf(-1))
		return nil
	}
	var v float64
	if err := json.Unmarshal(b, &v); err != nil {
		return fmt.Errorf("want a number, null, \"+Inf\" or \"-Inf\": %w", err)
	}
	*f = Float(v)
	return nil
}

// RunInfo identifies one of the compared runs.
type RunInfo struct {
	Path          string `json:"path,omitempty"`           // the results file as named on the command line; Compare leaves it empty
	Scenario      string `json:"scenario"`                 // the scenario's name
	File          string `json:"file"`                     // the scenario file the run loaded
	Hash          string `json:"hash"`                     // the scenario's hash
	Seed          uint64 `json:"seed"`                     // the run's root seed
	Replicates    int    `json:"replicates"`               // replicates per cell
	ReplicateFile string `json:"replicate_file,omitempty"` // the kept replicate file, if any
}

func runInfo(r *Results) RunInfo {
	return RunInfo{Scenario: r.Scenario.Name, File: r.Scenario.File, Hash: r.Scenario.Hash, Seed: r.Seed, Replicates: r.Replicates, ReplicateFile: r.ReplicateFile}
}

// Difference is one compared summary measure.
type Difference struct {
	Cell        int       `json:"cell"`                  // the baseline cell's index, from 0
	Settings    []Setting `json:"settings,omitempty"`    // the baseline cell's swept values
	Estimator   string    `json:"estimator"`             // the estimator's label
	Coefficient string    `json:"coefficient,omitempty"` // coefficient name; empty for per-estimator measures
	Measure     string    `json:"measure"`               // the measure's name (see Compare)
	Baseline    Float     `json:"baseline"`              // the measure in the baseline run
	Candidate   Float     `json:"candidate"`             // the measure in the candidate run
	Diff        Float     `json:"diff"`                  // Candidate − Baseline
	MCSE        Float     `json:"mcse"`                  // √(MCSE_b² + MCSE_c²), the MCSE of Diff
	Z           Float     `json:"z"`                     // Diff/MCSE; 0 when Diff is 0, +Inf when one value is NaN, NaN when untestable
	Flagged     bool      `json:"flagged"`               // rejected by Holm's procedure at level Comparison.Alpha
}

// FailureTestKind names the exact test of a change of failures.
type FailureTestKind int

const (
	// FailurePaired is the exact McNemar test on the fits whose outcome
	// (converged or failed) differs between two runs of the same
	// datasets (PairedExactP).
	FailurePaired FailureTestKind = iota
	// FailureFisher is Fisher's exact test of two independent failure
	// rates (FisherExactP), used when no replicates were kept.
	FailureFisher
)

// String returns the test's name as written in JSON.
func (k FailureTestKind) String() string {
	switch k {
	case FailurePaired:
		return "paired-exact-mcnemar"
	case FailureFisher:
		return "fisher-exact"
	}
	return fmt.Sprintf("FailureTestKind(%d)", int(k))
}

// MarshalText encodes the kind by name.
func (k FailureTestKind) MarshalText() ([]byte, error) { return []byte(k.String()), nil }

// UnmarshalText decodes a kind's name.
func (k *FailureTestKind) UnmarshalText(b []byte) error {
	for _, c := range []FailureTestKind{FailurePaired, FailureFisher} {
		if c.String() == string(b) {
			*k = c
			return nil
		}
	}
	return fmt.Errorf("unknown failure test %q (want paired-exact-mcnemar or fisher-exact)", b)
}

// FailureTest compares the failures of one estimator in one cell.
type FailureTest struct {
	Cell            int       `json:"cell"`               // the baseline cell's index, from 0
	Settings        []Setting `json:"settings,omitempty"` // the cell's swept values
	Estimator       string    `json:"estimator"`          // the estimator's label
	BaselineFits    int64     `json:"baseline_fits"`      // fits compared in the baseline
	BaselineFailed  int64     `json:"baseline_failed"`    // of which failed
	CandidateFits   int64     `json:"candidate_fits"`     // fits compared in the candidate
	CandidateFailed int64     `json:"candidate_failed"`   // of which failed
	// NewFailures and Recovered are, in paired mode, the fits that
	// converged in the baseline and failed in the candidate, and the
	// reverse; zero in summary mode.
	NewFailures int64 `json:"new_failures"`
	Recovered   int64 `json:"recovered"`
	// P is the exact test's two-sided p-value.
	P Float `json:"p"`
	// Flagged is set when Holm's procedure rejects at FailureReport.Alpha.
	Flagged bool `json:"flagged"`
}

// Rise reports whether the candidate fails more often than the baseline.
func (f FailureTest) Rise() bool {
	return f.CandidateFailed*f.BaselineFits > f.BaselineFailed*f.CandidateFits
}

// informative reports whether the test could reject: in paired mode a fit
// whose outcome changed, otherwise two failure rates that can differ
// (canDiffer).
func (f FailureTest) informative(kind FailureTestKind) bool {
	if kind == FailurePaired {
		return f.NewFailures+f.Recovered > 0
	}
	return canDiffer(f.BaselineFailed, f.BaselineFits, f.CandidateFailed, f.CandidateFits)
}

// canDiffer reports whether Fisher's exact test of k1 of n1 against k2 of
// n2 can give a p-value below 1: both runs have fits, and some but not all
// of them are counted. Otherwise every table with those margins is the
// observed one, and p is 1 by construction.
func canDiffer(k1, n1, k2, n2 int64) bool {
	k := k1 + k2
	return n1 > 0 && n2 > 0 && k > 0 && k < n1+n2
}

// FailureReport tests every cell × estimator for a change of its failure
// rate, apart from the other measures.
type FailureReport struct {
	Test FailureTestKind `json:"test"`
	// Alpha is the family-wise level of Holm's procedure over the tests.
	Alpha float64 `json:"alpha"`
	// Tested counts the tests that could reject: in paired mode those with
	// a fit whose outcome changed, in summary mode those with fits in both
	// runs, some but not all of them failed (a test that cannot reject
	// does not dilute the others; Tarone (1990), Biometrics 46:515-522,
	// from memory).
	Tested int `json:"tested"`
	// Tests holds every cell × estimator: flagged rises first, then other
	// flagged changes, then by p-value.
	Tests []FailureTest `json:"tests"`
}

// PairedEstimator summarises paired differences of one estimator in one
// cell.
type PairedEstimator struct {
	Cell             int     `json:"cell"`                 // cell index, from 0
	Estimator        string  `json:"estimator"`            // the estimator's label
	Fits             int     `json:"fits"`                 // replicates present in both files
	MaxAbsDiff       Float   `json:"max_abs_diff"`         // largest |candidate − baseline| over coefficients and replicates
	Moved            int     `json:"moved"`                // replicates whose largest coefficient change exceeds the tolerance
	StatusChanged    int     `json:"status_changed"`       // replicates whose final status differs
	NewFailures      int     `json:"new_failures"`         // converged in the baseline, failed in the candidate
	Recovered        int     `json:"recovered"`            // failed in the baseline, converged in the candidate
	BaselineFailed   int     `json:"baseline_failed"`      // fits that failed in the baseline
	CandidateFailed  int     `json:"candidate_failed"`     // fits that failed in the candidate
	IterationChanged int     `json:"iteration_changed"`    // replicates whose iteration count differs
	MeanIterDelta    float64 `json:"mean_iteration_delta"` // mean of candidate minus baseline iterations
}

// StatusChangeKind says which way a fit's status changed.
type StatusChangeKind int

const (
	// NewFailure: converged in the baseline, failed in the candidate.
	NewFailure StatusChangeKind = iota
	// Recovery: failed in the baseline, converged in the candidate.
	Recovery
	// OtherStatusChange: both converged (by different rules) or both
	// failed (differently).
	OtherStatusChange
)

// String returns the kind's name as written in JSON.
func (k StatusChangeKind) String() string {
	switch k {
	case NewFailure:
		return "new-failure"
	case Recovery:
		return "recovered"
	case OtherStatusChange:
		return "other"
	}
	return fmt.Sprintf("StatusChangeKind(%d)", int(k))
}

// MarshalText encodes the kind by name.
func (k StatusChangeKind) MarshalText() ([]byte, error) { return []byte(k.String()), nil }

// UnmarshalText decodes a kind's name.
func (k *StatusChangeKind) UnmarshalText(b []byte) error {
	for c := NewFailure; c <= OtherStatusChange; c++ {
		if c.String() == string(b) {
			*k = c
			return nil
		}
	}
	return fmt.Errorf("unknown status change %q (want new-failure, recovered or other)", b)
}

// StatusChange is one fit whose final status differs between the runs.
type StatusChange struct {
	Cell                int              `json:"cell"`                 // cell index, from 0
	Replicate           int              `json:"replicate"`            // replicate index, from 0
	Estimator           string           `json:"estimator"`            // the estimator's label
	Kind                StatusChangeKind `json:"kind"`                 // which way it changed
	Baseline            string           `json:"baseline"`             // the baseline's status
	Candidate           string           `json:"candidate"`            // the candidate's status
	BaselineIterations  int              `json:"baseline_iterations"`  // iterations in the baseline
	CandidateIterations int              `json:"candidate_iterations"` // iterations in the candidate
	// Coefficient, Diff and SEUnits give the fit's largest move (as in
	// Move); Coefficient is empty when no estimate moved.
	Coefficient string `json:"coefficient,omitempty"`
	Diff        Float  `json:"diff"`
	SEUnits     Float  `json:"se_units"`
}

// Move is one fit whose estimates moved, by its coefficient that moved
// most in units of that coefficient's empirical SE.
type Move struct {
	Cell        int    `json:"cell"`        // cell index, from 0
	Replicate   int    `json:"replicate"`   // replicate index, from 0
	Estimator   string `json:"estimator"`   // the estimator's label
	Status      string `json:"status"`      // the fit's status (the same in both runs)
	Coefficient string `json:"coefficient"` // the coefficient that moved most
	Baseline    Float  `json:"baseline"`    // its estimate in the baseline
	Candidate   Float  `json:"candidate"`   // its estimate in the candidate
	Diff        Float  `json:"diff"`        // Candidate − Baseline
	// SEUnits is Diff over the baseline's empirical SE of the coefficient
	// (in that cell, for that estimator): how large the move is against
	// the spread of the estimates; NaN when the SE is undefined.
	SEUnits Float `json:"se_units"`
}

// PairedReport is the replicate-by-replicate comparison.
type PairedReport struct {
	Tolerance        float64           `json:"tolerance"`                    // largest coefficient change not counted as a move
	Fits             int               `json:"fits"`                         // fits present in both files
	Missing          int               `json:"missing"`                      // fits present in only one file
	MaxAbsDiff       Float             `json:"max_abs_diff"`                 // largest coefficient change over all fits
	Moved            int               `json:"moved"`                        // fits whose largest coefficient change exceeds Tolerance
	StatusChanged    int               `json:"status_changed"`               // fits whose final status differs
	NewFailures      int               `json:"new_failures"`                 // fits that converged in the baseline and failed in the candidate
	Recovered        int               `json:"recovered"`                    // fits that failed in the baseline and converged in the candidate
	IterationChanged int               `json:"iteration_changed"`            // fits whose iteration count differs
	Transitions      map[string]int    `json:"status_transitions,omitempty"` // count of each status change, keyed "baseline → candidate"
	Estimators       []PairedEstimator `json:"estimators"`                   // per cell and estimator, in order of first appearance
	// StatusChanges lists up to CompareOptions.List fits whose status
	// changed: new failures first, then recoveries, then other changes,
	// each with the largest move (in SE units) first.
	StatusChanges []StatusChange `json:"status_changes,omitempty"`
	// Moves lists up to CompareOptions.List fits whose status did not
	// change but whose estimates moved beyond Tolerance, largest move in
	// SE units first (by absolute move where no SE is defined).
	Moves []Move `json:"moves,omitempty"`
}

// Comparison is the outcome of Compare.
type Comparison struct {
	// Schema is CompareSchemaVersion.
	Schema int `json:"compare_schema"`
	// Baseline and Candidate identify the runs.
	Baseline  RunInfo `json:"baseline"`
	Candidate RunInfo `json:"candidate"`
	// Settings lists every scenario setting that differs between the runs
	// (seed, replicates and description apart), with its kind.
	Settings []SettingChange `json:"settings,omitempty"`
	// Notes say what else differs between the runs' set-ups.
	Notes []string `json:"notes,omitempty"`
	// Failures tests the failure rates, apart from the other measures.
	Failures FailureReport `json:"failures"`
	// Audit tests the solver studies of estimators audited or searched for
	// roots in both runs; nil when there are none.
	Audit *AuditReport `json:"audit,omitempty"`
	// Threshold, Alpha and Correction describe the test of the other
	// summary measures.
	Threshold  float64 `json:"threshold"`
	Alpha      float64 `json:"alpha"`      // family-wise level, P(|Z| > Threshold) for standard normal Z
	Correction string  `json:"correction"` // the multiplicity correction, "Holm"
	// Tested is the number of measures with a defined z, the m of Holm's
	// procedure; CriticalZ is the |z| the largest of them had to pass,
	// the two-sided normal quantile of Alpha/Tested.
	Tested    int   `json:"tested"`
	CriticalZ Float `json:"critical_z"`
	// Differences holds every summary comparison, flagged ones first.
	Differences []Difference `json:"differences"`
	// Paired is set when both runs kept replicates of the same data;
	// otherwise Unpaired says why the runs were not paired.
	Paired   *PairedReport `json:"paired,omitempty"`
	Unpaired string        `json:"unpaired,omitempty"`
	// Replay is the command that replays the first listed status change
	// (or, without one, the first listed move) with the candidate's
	// scenario.
	Replay string `json:"replay,omitempty"`
}

// Flagged reports whether anything changed: a failure rate, a count of a
// solver study or another measure beyond Monte Carlo error, or in paired
// mode an estimate beyond the tolerance or a status.
func (c *Comparison) Flagged() bool {
	for _, f := range c.Failures.Tests {
		if f.Flagged {
			return true
		}
	}
	if c.auditFlagged() {
		return true
	}
	return c.FlaggedCount() > 0 || c.Paired != nil && (c.Paired.Moved > 0 || c.Paired.StatusChanged > 0 || c.Paired.Missing > 0)
}

// FailureRises returns the flagged failure tests whose rate rose.
func (c *Comparison) FailureRises() []FailureTest {
	var out []FailureTest
	for _, f := range c.Failures.Tests {
		if f.Flagged && f.Rise() {
			out = append(out, f)
		}
	}
	return out
}

// Uncomparable returns the summary differences that could not be tested
// because their z is undefined (a NaN MCSE).
func (c *Comparison) Uncomparable() []Difference {
	var out []Difference
	for _, d := range c.Differences {
		if math.IsNaN(float64(d.Z)) {
			out = append(out, d)
		}
	}
	return out
}

// FlaggedCount returns the number of flagged summary differences.
func (c *Comparison) FlaggedCount() int {
	n := 0
	for _, d := range c.Differences {
		if d.Flagged {
			n++
		}
	}
	return n
}
