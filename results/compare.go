package results

import (
	"errors"
	"fmt"
	"io"
	"math"
	"sort"
	"strings"
)

// CompareOptions control a comparison. Zero values mean the defaults.
type CompareOptions struct {
	// Threshold is the |z| beyond which a summary difference is flagged
	// before the multiplicity correction; it sets the family-wise level
	// α = P(|Z| > Threshold) of Holm's procedure. Default 4.
	Threshold float64
	// Tolerance is the largest absolute change of an estimate that paired
	// mode accepts; zero demands bit-identical estimates. The command line
	// defaults it to 1e-9.
	Tolerance float64
	// AnyScenario allows comparing runs of different scenarios (summary
	// mode only, matching cells by their settings).
	AnyScenario bool
}

func (o CompareOptions) withDefaults() CompareOptions {
	if o.Threshold == 0 {
		o.Threshold = 4
	}
	return o
}

// ErrDifferentScenarios is wrapped by Compare's error when the runs
// simulate different scenarios and AnyScenario is not set.
var ErrDifferentScenarios = errors.New("the runs simulate different scenarios")

// Difference is one compared summary measure.
type Difference struct {
	Cell        int       `json:"cell"`                  // the baseline cell's index, from 0
	Settings    []Setting `json:"settings,omitempty"`    // the baseline cell's swept values
	Estimator   string    `json:"estimator"`             // the estimator's label
	Coefficient string    `json:"coefficient,omitempty"` // coefficient name; empty for per-estimator measures
	Measure     string    `json:"measure"`               // bias, emp_se, rel_eff, failure_rate or mean_iterations
	Baseline    Num       `json:"baseline"`              // the measure in the baseline run
	Candidate   Num       `json:"candidate"`             // the measure in the candidate run
	Diff        Num       `json:"diff"`                  // Candidate − Baseline
	MCSE        Num       `json:"mcse"`                  // √(MCSE_b² + MCSE_c²), the MCSE of Diff
	Z           Num       `json:"z"`                     // Diff/MCSE; 0 when Diff is 0, +Inf when one value is NaN, NaN when untestable
	Flagged     bool      `json:"flagged"`               // rejected by Holm's procedure at level Comparison.Alpha
}

// PairedEstimator summarises paired differences of one estimator in one
// cell.
type PairedEstimator struct {
	Cell             int     `json:"cell"`                 // cell index, from 0
	Estimator        string  `json:"estimator"`            // the estimator's label in the baseline file
	Fits             int     `json:"fits"`                 // replicates present in both files
	MaxAbsDiff       float64 `json:"max_abs_diff"`         // largest |candidate − baseline| over coefficients and replicates
	Moved            int     `json:"moved"`                // replicates whose largest coefficient change exceeds the tolerance
	StatusChanged    int     `json:"status_changed"`       // replicates whose final status differs
	IterationChanged int     `json:"iteration_changed"`    // replicates whose iteration count differs
	MeanIterDelta    float64 `json:"mean_iteration_delta"` // mean of candidate minus baseline iterations
}

// PairedChange is one replicate whose fit changed.
type PairedChange struct {
	Cell, Replicate int     // cell index and replicate index, both from 0
	Estimator       string  // the estimator's label in the baseline file
	MaxAbsDiff      float64 // largest |candidate − baseline| over the coefficients
	Status          string  // "a → b" when the status changed
	Iterations      string  // "a → b" when they changed
}

// PairedReport is the replicate-by-replicate comparison.
type PairedReport struct {
	Tolerance        float64           `json:"tolerance"`                    // largest coefficient change not counted as a move
	Fits             int               `json:"fits"`                         // records present in both files
	Missing          int               `json:"missing"`                      // records present in only one file
	MaxAbsDiff       float64           `json:"max_abs_diff"`                 // largest coefficient change over all fits
	Moved            int               `json:"moved"`                        // fits whose largest coefficient change exceeds Tolerance
	StatusChanged    int               `json:"status_changed"`               // fits whose final status differs
	IterationChanged int               `json:"iteration_changed"`            // fits whose iteration count differs
	Transitions      map[string]int    `json:"status_transitions,omitempty"` // count of each status change, keyed "baseline → candidate"
	Estimators       []PairedEstimator `json:"estimators"`                   // per cell and estimator, in order of first appearance
	Examples         []PairedChange    `json:"examples,omitempty"`           // the first 20 fits that moved or changed status or iterations
}

// Comparison is the outcome of Compare.
type Comparison struct {
	Baseline, Candidate string // names of the two runs (file paths from the command line); Compare leaves them empty
	// Notes say what differs between the runs' set-ups.
	Notes []string
	// Threshold, Alpha and Correction describe the summary test.
	Threshold  float64
	Alpha      float64 // family-wise level, P(|Z| > Threshold) for standard normal Z
	Correction string  // the multiplicity correction, "Holm"
	// Differences holds every summary comparison, flagged ones first.
	Differences []Difference
	// Paired is set when both runs kept replicates of the same scenario
	// and seed.
	Paired *PairedReport
}

// Flagged reports whether anything changed beyond Monte Carlo error (summary)
// or beyond the tolerance or in status (paired).
func (c *Comparison) Flagged() bool {
	for _, d := range c.Differences {
		if d.Flagged {
			return true
		}
	}
	return c.Paired != nil && (c.Paired.Moved > 0 || c.Paired.StatusChanged > 0 || c.Paired.Missing > 0)
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

// ReplicateSource opens a run's replicate file. Compare takes a nil
// ReplicateSource for a run that kept none.
type ReplicateSource func() (io.ReadCloser, error)

// Compare compares a candidate run with a baseline. Summary mode compares
// every cell × estimator × measure (bias, empirical SE, relative efficiency
// per coefficient; failure rate and mean iterations per estimator) through
// the difference, its combined MCSE √(MCSE_b² + MCSE_c²) and z; it flags
// differences by Holm's step-down procedure at the family-wise level
// α = P(|Z| > Threshold). When both runs kept replicates of the same
// scenario and seed, paired mode compares them replicate by replicate.
func Compare(base, cand *Results, baseReps, candReps ReplicateSource, opt CompareOptions) (*Comparison, error) {
	opt = opt.withDefaults()
	c := &Comparison{Threshold: opt.Threshold, Correction: "Holm", Alpha: math.Erfc(opt.Threshold / math.Sqrt2)}
	sameScenario := base.Scenario.Hash == cand.Scenario.Hash
	if !sameScenario {
		diff := describeScenarioDiff(base, cand)
		if !opt.AnyScenario {
			return nil, fmt.Errorf("%w (%s vs %s): %s; compare them anyway with the option to allow different scenarios", ErrDifferentScenarios, base.Scenario.Name, cand.Scenario.Name, diff)
		}
		c.Notes = append(c.Notes, "different scenarios: "+diff)
	}
	if base.Seed != cand.Seed {
		c.Notes = append(c.Notes, fmt.Sprintf("seeds differ (%d vs %d): independent runs, summary mode only", base.Seed, cand.Seed))
	}
	if base.Replicates != cand.Replicates {
		c.Notes = append(c.Notes, fmt.Sprintf("replicates differ (%d vs %d)", base.Replicates, cand.Replicates))
	}
	if !base.Complete || !cand.Complete {
		c.Notes = append(c.Notes, "a run is incomplete: only its finished replicates are compared")
	}
	c.Differences = summaryDiffs(base, cand, sameScenario)
	holm(c.Differences, c.Alpha)
	// Flagged first, then by |z|, untestable (NaN z) last.
	absZ := func(d Difference) float64 {
		if z := math.Abs(float64(d.Z)); !math.IsNaN(z) {
			return z
		}
		return -1
	}
	sort.SliceStable(c.Differences, func(i, j int) bool {
		if c.Differences[i].Flagged != c.Differences[j].Flagged {
			return c.Differences[i].Flagged
		}
		return absZ(c.Differences[i]) > absZ(c.Differences[j])
	})
	if sameScenario && base.Seed == cand.Seed && baseReps != nil && candReps != nil {
		p, err := comparePaired(baseReps, candReps, opt.Tolerance)
		if err != nil {
			return nil, err
		}
		c.Paired = p
	} else if sameScenario && base.Seed == cand.Seed {
		// Same scenario and seed: both runs simulate the same datasets, so
		// their estimates are positively correlated and the summary z,
		// which treats them as independent, understates changes.
		c.Notes = append(c.Notes, "same scenario and seed: the runs fit the same datasets, so the summary z (which assumes independent runs) is conservative; keep replicates in both runs (--keep-replicates) for the exact paired comparison")
	}
	return c, nil
}

// describeScenarioDiff names what differs between two runs' scenarios.
func describeScenarioDiff(a, b *Results) string {
	var parts []string
	if a.Scenario.Name != b.Scenario.Name {
		parts = append(parts, fmt.Sprintf("names %q and %q", a.Scenario.Name, b.Scenario.Name))
	}
	fields := diffJSON("", a.Scenario.Normalised, b.Scenario.Normalised)
	if len(fields) > 6 {
		fields = append(fields[:6], fmt.Sprintf("and %d more", len(fields)-6))
	}
	if len(fields) > 0 {
		parts = append(parts, "fields "+strings.Join(fields, ", ")+" differ")
	}
	if len(parts) == 0 {
		parts = append(parts, "hashes differ")
	}
	return strings.Join(parts, "; ")
}

// cellKey identifies a cell across runs by its swept settings, so cells of
// runs with differently ordered or different sweeps can be matched.
func cellKey(c Cell) string {
	parts := make([]string, len(c.Settings))
	for i, s := range c.Settings {
		parts[i] = s.Path + "=" + s.Value
	}
	return strings.Join(parts, "\x00")
}

// summaryDiffs pairs cells (by index for the same scenario, else by
// settings), estimators by label and coefficients by name.
func summaryDiffs(base, cand *Results, sameScenario bool) []Difference {
	byKey := map[string]*Cell{}
	for i := range cand.Cells {
		byKey[cellKey(cand.Cells[i])] = &cand.Cells[i]
	}
	var out []Difference
	for i := range base.Cells {
		bc := &base.Cells[i]
		var cc *Cell
		if sameScenario && i < len(cand.Cells) {
			cc = &cand.Cells[i]
		} else {
			cc = byKey[cellKey(*bc)]
		}
		if cc == nil {
			continue
		}
		for _, be := range bc.Estimators {
			var ce *Estimator
			for k := range cc.Estimators {
				if cc.Estimators[k].Label == be.Label {
					ce = &cc.Estimators[k]
				}
			}
			if ce == nil {
				continue
			}
			add := func(coef, measure string, a, b Measure) {
				d := Difference{Cell: bc.Index, Settings: bc.Settings, Estimator: be.Label, Coefficient: coef, Measure: measure,
					Baseline: a.Value, Candidate: b.Value}
				av, bv := float64(a.Value), float64(b.Value)
				if math.IsNaN(av) && math.IsNaN(bv) {
					return
				}
				diff := bv - av
				se := math.Hypot(float64(a.MCSE), float64(b.MCSE))
				z := diff / se
				switch {
				case diff == 0:
					z = 0
				case math.IsNaN(diff):
					z = math.Inf(1) // a measure appeared or disappeared
				}
				d.Diff, d.MCSE, d.Z = Num(diff), Num(se), Num(z)
				out = append(out, d)
			}
			for _, bk := range be.Coefficients {
				for _, ck := range ce.Coefficients {
					if ck.Name != bk.Name {
						continue
					}
					add(bk.Name, "bias", bk.Bias, ck.Bias)
					add(bk.Name, "emp_se", bk.EmpSE, ck.EmpSE)
					if be.Label != base.Reference {
						add(bk.Name, "rel_eff", bk.RelEff, ck.RelEff)
					}
				}
			}
			add("", "failure_rate", rateMeasure(be.Convergence), rateMeasure(ce.Convergence))
			add("", "mean_iterations", be.Convergence.MeanIterations, ce.Convergence.MeanIterations)
		}
	}
	return out
}

// rateMeasure returns the failure rate with its MCSE (see Proportion).
func rateMeasure(c Convergence) Measure {
	return Proportion(c.Fits-c.Converged, c.Fits)
}

// holm flags differences by Holm's step-down procedure: with p-values
// p = P(|Z| > |z|) sorted ascending, the k-th smallest (k from 0) is
// flagged while p ≤ α/(m−k) (Holm (1979), "A simple sequentially
// rejective multiple test procedure", Scand. J. Statist. 6:65-70).
//
// A difference whose z is NaN (its MCSE is undefined, for example an
// efficiency from fewer than two fits) is not tested and does not count
// in m; Uncomparable lists it.
func holm(d []Difference, alpha float64) {
	idx := make([]int, 0, len(d))
	for i := range d {
		if !math.IsNaN(float64(d[i].Z)) {
			idx = append(idx, i)
		}
	}
	pval := func(i int) float64 { return math.Erfc(math.Abs(float64(d[i].Z)) / math.Sqrt2) }
	sort.SliceStable(idx, func(a, b int) bool { return pval(idx[a]) < pval(idx[b]) })
	m := len(idx)
	for k, i := range idx {
		if pval(i) > alpha/float64(m-k) {
			return
		}
		d[i].Flagged = true
	}
}

// comparePaired merges two replicate files on (cell, replicate,
// estimator).
func comparePaired(baseSrc, candSrc ReplicateSource, tol float64) (*PairedReport, error) {
	br, err := baseSrc()
	if err != nil {
		return nil, fmt.Errorf("baseline replicates: %w", err)
	}
	defer br.Close()
	cr, err := candSrc()
	if err != nil {
		return nil, fmt.Errorf("candidate replicates: %w", err)
	}
	defer cr.Close()
	a, err := NewReplicateReader(br)
	if err != nil {
		return nil, fmt.Errorf("baseline replicates: %w", err)
	}
	b, err := NewReplicateReader(cr)
	if err != nil {
		return nil, fmt.Errorf("candidate replicates: %w", err)
	}
	p := &PairedReport{Tolerance: tol, Transitions: map[string]int{}}
	per := map[[2]int]*PairedEstimator{}
	var order [][2]int
	less := func(x, y ReplicateRecord) bool {
		if x.Cell != y.Cell {
			return x.Cell < y.Cell
		}
		if x.Replicate != y.Replicate {
			return x.Replicate < y.Replicate
		}
		return x.Estimator < y.Estimator
	}
	ra, errA := a.Next()
	rb, errB := b.Next()
	for {
		// A damaged file is an error whenever it shows, including after
		// the other file has ended.
		if errA != nil && !errors.Is(errA, io.EOF) {
			return nil, fmt.Errorf("baseline replicates: %w", errA)
		}
		if errB != nil && !errors.Is(errB, io.EOF) {
			return nil, fmt.Errorf("candidate replicates: %w", errB)
		}
		if errA != nil && errB != nil {
			break
		}
		switch {
		case errA != nil:
			p.Missing++
			rb, errB = b.Next()
			continue
		case errB != nil:
			p.Missing++
			ra, errA = a.Next()
			continue
		case less(ra, rb):
			p.Missing++
			ra, errA = a.Next()
			continue
		case less(rb, ra):
			p.Missing++
			rb, errB = b.Next()
			continue
		}
		k := [2]int{ra.Cell, ra.Estimator}
		pe, ok := per[k]
		if !ok {
			label := ""
			if ra.Cell < len(a.Header.Cells) && ra.Estimator < len(a.Header.Cells[ra.Cell].Estimators) {
				label = a.Header.Cells[ra.Cell].Estimators[ra.Estimator]
			}
			pe = &PairedEstimator{Cell: ra.Cell, Estimator: label}
			per[k] = pe
			order = append(order, k)
		}
		pe.Fits++
		p.Fits++
		var maxd float64
		for j := range ra.Coefficients {
			if j >= len(rb.Coefficients) {
				break
			}
			d := math.Abs(ra.Coefficients[j] - rb.Coefficients[j])
			if math.IsNaN(d) && !(math.IsNaN(ra.Coefficients[j]) && math.IsNaN(rb.Coefficients[j])) {
				d = math.Inf(1)
			}
			if d > maxd {
				maxd = d
			}
		}
		pe.MaxAbsDiff = math.Max(pe.MaxAbsDiff, maxd)
		p.MaxAbsDiff = math.Max(p.MaxAbsDiff, maxd)
		change := PairedChange{Cell: ra.Cell, Replicate: ra.Replicate, Estimator: pe.Estimator, MaxAbsDiff: maxd}
		interesting := false
		if maxd > tol {
			pe.Moved++
			p.Moved++
			interesting = true
		}
		if ra.Status != rb.Status {
			pe.StatusChanged++
			p.StatusChanged++
			t := ra.Status + " → " + rb.Status
			p.Transitions[t]++
			change.Status = t
			interesting = true
		}
		if ra.Iterations != rb.Iterations {
			pe.IterationChanged++
			p.IterationChanged++
			change.Iterations = fmt.Sprintf("%d → %d", ra.Iterations, rb.Iterations)
			interesting = true
		}
		pe.MeanIterDelta += float64(rb.Iterations - ra.Iterations)
		if interesting && len(p.Examples) < 20 {
			p.Examples = append(p.Examples, change)
		}
		ra, errA = a.Next()
		rb, errB = b.Next()
	}
	for _, k := range order {
		pe := per[k]
		if pe.Fits > 0 {
			pe.MeanIterDelta /= float64(pe.Fits)
		}
		p.Estimators = append(p.Estimators, *pe)
	}
	return p, nil
}
