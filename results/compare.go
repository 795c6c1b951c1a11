package results

import (
	"encoding/json"
	"fmt"
	"io"
	"iter"
	"math"
	"sort"
	"strconv"
	"strings"
)

// ReplicateSource opens a run's replicate file. Compare takes a nil
// ReplicateSource for a run that kept none.
type ReplicateSource func() (io.ReadCloser, error)

// coefficientMeasure is a per-coefficient measure Compare tests.
type coefficientMeasure struct {
	name      string
	get       func(*Coefficient) Measure
	reference bool // whether the reference estimator has it
	since     int  // the first results schema that records it
}

// coefficientMeasures lists the per-coefficient measures Compare tests, in
// the order they are compared. Adding a measure is one line here.
func coefficientMeasures() []coefficientMeasure {
	return []coefficientMeasure{
		{"bias", func(k *Coefficient) Measure { return k.Bias }, true, 1},
		{"emp_se", func(k *Coefficient) Measure { return k.EmpSE }, true, 1},
		{"rmse", func(k *Coefficient) Measure { return k.RMSE }, true, 2},
		{"rel_eff", func(k *Coefficient) Measure { return k.RelEff }, false, 1},
		{"mse_ratio", func(k *Coefficient) Measure { return k.MSERatio }, false, 2},
	}
}

// estimatorMeasures lists the per-estimator measures Compare tests. The
// failure rate is not among them: it has its own exact test.
func estimatorMeasures() []struct {
	name string
	get  func(*Estimator) Measure
} {
	return []struct {
		name string
		get  func(*Estimator) Measure
	}{
		{"mean_iterations", func(e *Estimator) Measure { return e.Convergence.MeanIterations }},
	}
}

// measureNames returns the names of the measures Compare tests with z.
func measureNames() []string {
	var out []string
	for _, m := range coefficientMeasures() {
		out = append(out, m.name)
	}
	for _, m := range estimatorMeasures() {
		out = append(out, m.name)
	}
	return out
}

// Compare compares a candidate run with a baseline.
//
// Runs are one study when their normalised scenarios differ at most in
// solver settings (SettingSolver) and the name; otherwise Compare returns
// a *ScenarioMismatch unless AnyScenario is set. Every differing setting
// is listed in Comparison.Settings.
//
// Failures are tested on their own, per cell × estimator: in paired mode
// by the exact McNemar test on the fits whose outcome changed, otherwise
// by Fisher's exact test, with Holm's procedure across cells and
// estimators at FailureAlpha.
//
// The other measures (coefficientMeasures and estimatorMeasures) are
// compared through the difference, its combined MCSE √(MCSE_b² + MCSE_c²)
// and z, flagged by Holm's step-down procedure at the family-wise level
// α = P(|Z| > Threshold).
//
// When both runs kept replicates of the same data (no data setting
// differs, same seed), paired mode compares them replicate by replicate.
//
// Estimators with a solver study in both runs (solver audit, root search)
// have its counts tested too (AuditReport); a study in one run only is
// noted.
func Compare(base, cand *Results, baseReps, candReps ReplicateSource, opt CompareOptions) (*Comparison, error) {
	opt = opt.withDefaults()
	c := &Comparison{Schema: CompareSchemaVersion, Baseline: runInfo(base), Candidate: runInfo(cand),
		Threshold: opt.Threshold, Correction: "Holm", Alpha: math.Erfc(opt.Threshold / math.Sqrt2)}
	c.Settings = scenarioChanges(base.Scenario.Normalised, cand.Scenario.Normalised)
	sameData, oneStudy := true, true
	for _, s := range c.Settings {
		switch s.Kind {
		case SettingData:
			sameData, oneStudy = false, false
		case SettingEstimator, SettingAnalysis:
			oneStudy = false
		}
	}
	if !oneStudy {
		if !opt.AnyScenario {
			return nil, &ScenarioMismatch{Baseline: base.Scenario.Name, Candidate: cand.Scenario.Name, Changes: c.Settings}
		}
		c.Notes = append(c.Notes, "the scenarios differ in more than solver settings (compared as asked)")
	}
	if !sameData {
		c.Notes = append(c.Notes, "the data settings differ: cells are matched by their swept settings, summary mode only")
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
	pairs := pairCells(base, cand, sameData)
	c.Differences = summaryDiffs(pairs, base.Reference, min(base.Schema, cand.Schema))
	c.Tested = holm(c.Differences, c.Alpha)
	c.CriticalZ = Float(holmCriticalZ(c.Alpha, c.Tested))
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
	c.Failures = FailureReport{Test: FailureFisher, Alpha: opt.FailureAlpha}
	if sameData && base.Seed == cand.Seed && baseReps != nil && candReps != nil {
		setup := pairedSetup{tol: opt.Tolerance, list: opt.List, converged: convergedStatuses(base, cand), se: empiricalSEs(base)}
		p, err := comparePaired(baseReps, candReps, setup)
		if err != nil {
			return nil, err
		}
		c.Paired = p
		c.Failures.Test = FailurePaired
		c.Failures.Tests = pairedFailureTests(p, base)
	} else {
		switch {
		case !sameData:
			c.Unpaired = "the data settings differ"
		case base.Seed != cand.Seed:
			c.Unpaired = "the seeds differ"
		default:
			c.Unpaired = "a run kept no replicates (run --keep-replicates)"
		}
		c.Failures.Tests = summaryFailureTests(pairs)
		if sameData && base.Seed == cand.Seed {
			// Same data and seed: both runs simulate the same datasets, so
			// their estimates are positively correlated and the summary z,
			// which treats them as independent, understates changes.
			c.Notes = append(c.Notes, "same scenario data and seed: the runs fit the same datasets, so the summary z and Fisher's test (which assume independent runs) are conservative; keep replicates in both runs (--keep-replicates) for the exact paired comparison")
		}
	}
	c.Failures.Tested = holmFailures(c.Failures.Tests, opt.FailureAlpha, c.Failures.Test)
	sort.SliceStable(c.Failures.Tests, func(i, j int) bool {
		a, b := c.Failures.Tests[i], c.Failures.Tests[j]
		if ra, rb := a.Flagged && a.Rise(), b.Flagged && b.Rise(); ra != rb {
			return ra
		}
		if a.Flagged != b.Flagged {
			return a.Flagged
		}
		return a.P < b.P
	})
	c.compareAudits(pairs, opt.FailureAlpha)
	c.Replay = replayCommand(cand, c.Paired)
	return c, nil
}

// cellPair is a baseline cell and its candidate.
type cellPair struct{ base, cand *Cell }

// pairCells pairs cells by index when the data settings are the same, else
// by their swept settings.
func pairCells(base, cand *Results, sameData bool) []cellPair {
	byKey := map[string]*Cell{}
	for i := range cand.Cells {
		byKey[cellKey(cand.Cells[i])] = &cand.Cells[i]
	}
	var out []cellPair
	for i := range base.Cells {
		bc := &base.Cells[i]
		var cc *Cell
		if sameData && i < len(cand.Cells) {
			cc = &cand.Cells[i]
		} else {
			cc = byKey[cellKey(*bc)]
		}
		if cc != nil {
			out = append(out, cellPair{bc, cc})
		}
	}
	return out
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

// estimatorPairs yields, for each paired cell, each baseline estimator
// with the candidate's of the same label (estimators in one run only are
// skipped).
func estimatorPairs(pairs []cellPair) iter.Seq2[*Cell, [2]*Estimator] {
	return func(yield func(*Cell, [2]*Estimator) bool) {
		for _, cp := range pairs {
			for bi := range cp.base.Estimators {
				be := &cp.base.Estimators[bi]
				if ce := estimatorIn(cp.cand, be.Label); ce != nil && !yield(cp.base, [2]*Estimator{be, ce}) {
					return
				}
			}
		}
	}
}

// estimatorIn returns the estimator of the cell with the label, or nil.
func estimatorIn(c *Cell, label string) *Estimator {
	for k := range c.Estimators {
		if c.Estimators[k].Label == label {
			return &c.Estimators[k]
		}
	}
	return nil
}

// summaryDiffs compares the measures of paired cells, estimators by label
// and coefficients by name. A measure that the older of the two results
// schemas does not record (schema) is left out rather than read as zero.
func summaryDiffs(pairs []cellPair, reference string, schema int) []Difference {
	var out []Difference
	for bc, e := range estimatorPairs(pairs) {
		be, ce := e[0], e[1]
		add := func(coef, measure string, a, b Measure) {
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
			out = append(out, Difference{Cell: bc.Index, Settings: bc.Settings, Estimator: be.Label, Coefficient: coef, Measure: measure,
				Baseline: Float(av), Candidate: Float(bv), Diff: Float(diff), MCSE: Float(se), Z: Float(z)})
		}
		for ki := range be.Coefficients {
			bk := &be.Coefficients[ki]
			for kj := range ce.Coefficients {
				ck := &ce.Coefficients[kj]
				if ck.Name != bk.Name {
					continue
				}
				for _, m := range coefficientMeasures() {
					if m.since <= schema && (m.reference || be.Label != reference) {
						add(bk.Name, m.name, m.get(bk), m.get(ck))
					}
				}
			}
		}
		for _, m := range estimatorMeasures() {
			add("", m.name, m.get(be), m.get(ce))
		}
	}
	return out
}

// summaryFailureTests compares the failure counts of paired cells by
// Fisher's exact test.
func summaryFailureTests(pairs []cellPair) []FailureTest {
	var out []FailureTest
	for cell, e := range estimatorPairs(pairs) {
		b, c := e[0].Convergence, e[1].Convergence
		f := FailureTest{Cell: cell.Index, Settings: cell.Settings, Estimator: e[0].Label,
			BaselineFits: b.Fits, BaselineFailed: b.Fits - b.Converged, CandidateFits: c.Fits, CandidateFailed: c.Fits - c.Converged}
		f.P = Float(FisherExactP(f.BaselineFailed, f.BaselineFits, f.CandidateFailed, f.CandidateFits))
		out = append(out, f)
	}
	return out
}

// pairedFailureTests turns the paired counts into exact McNemar tests.
func pairedFailureTests(p *PairedReport, base *Results) []FailureTest {
	var out []FailureTest
	for _, pe := range p.Estimators {
		f := FailureTest{Cell: pe.Cell, Estimator: pe.Estimator, BaselineFits: int64(pe.Fits), CandidateFits: int64(pe.Fits),
			BaselineFailed: int64(pe.BaselineFailed), CandidateFailed: int64(pe.CandidateFailed),
			NewFailures: int64(pe.NewFailures), Recovered: int64(pe.Recovered)}
		if pe.Cell < len(base.Cells) {
			f.Settings = base.Cells[pe.Cell].Settings
		}
		f.P = Float(PairedExactP(f.NewFailures, f.Recovered))
		out = append(out, f)
	}
	return out
}

// holm flags differences by Holm's step-down procedure (holmStepDown)
// with p-values p = P(|Z| > |z|), and returns m.
//
// A difference whose z is NaN (its MCSE is undefined, for example an
// efficiency from fewer than two fits) is not tested and does not count
// in m; Uncomparable lists it.
func holm(d []Difference, alpha float64) int {
	return holmStepDown(len(d), func(i int) float64 { return math.Erfc(math.Abs(float64(d[i].Z)) / math.Sqrt2) },
		func(i int) bool { return !math.IsNaN(float64(d[i].Z)) }, func(i int) { d[i].Flagged = true }, alpha)
}

// holmFailures applies Holm's procedure to the failure tests that can
// reject and returns how many there were.
func holmFailures(f []FailureTest, alpha float64, kind FailureTestKind) int {
	return holmStepDown(len(f), func(i int) float64 { return float64(f[i].P) }, func(i int) bool { return f[i].informative(kind) },
		func(i int) { f[i].Flagged = true }, alpha)
}

// holmStepDown runs Holm's step-down procedure at family-wise level alpha
// over the n tests (p-value p(i)) that could reject (informative): with
// their p-values sorted ascending, the k-th smallest (k from 0) is
// rejected while p ≤ α/(m−k) (Holm (1979), "A simple sequentially
// rejective multiple test procedure", Scand. J. Statist. 6:65-70). It
// calls flag for each rejected test and returns m, the number of tests in
// the family.
func holmStepDown(n int, p func(int) float64, informative func(int) bool, flag func(int), alpha float64) int {
	var idx []int
	for i := range n {
		if informative(i) {
			idx = append(idx, i)
		}
	}
	sort.SliceStable(idx, func(a, b int) bool { return p(idx[a]) < p(idx[b]) })
	m := len(idx)
	for k, i := range idx {
		if p(i) > alpha/float64(m-k) {
			break
		}
		flag(i)
	}
	return m
}

// convergedStatuses returns which status names are usable solutions, as
// the runs recorded them.
func convergedStatuses(runs ...*Results) map[string]bool {
	out := map[string]bool{}
	for _, r := range runs {
		for _, c := range r.Cells {
			for _, e := range c.Estimators {
				for _, s := range e.Convergence.Statuses {
					out[s.Status] = s.Converged
				}
			}
		}
	}
	return out
}

// seKey identifies a coefficient's empirical SE.
type seKey struct {
	cell             int
	estimator, coeff string
}

// empiricalSEs returns every coefficient's empirical SE in a run.
func empiricalSEs(r *Results) map[seKey]float64 {
	out := map[seKey]float64{}
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			for _, k := range e.Coefficients {
				out[seKey{c.Index, e.Label, k.Name}] = float64(k.EmpSE.Value)
			}
		}
	}
	return out
}

// replayCommand returns the command that replays the first listed status
// change or move with the candidate's scenario, or "".
func replayCommand(cand *Results, p *PairedReport) string {
	if p == nil {
		return ""
	}
	var cell, rep int
	var label string
	switch {
	case len(p.StatusChanges) > 0:
		s := p.StatusChanges[0]
		cell, rep, label = s.Cell, s.Replicate, s.Estimator
	case len(p.Moves) > 0:
		m := p.Moves[0]
		cell, rep, label = m.Cell, m.Replicate, m.Estimator
	default:
		return ""
	}
	file := cand.Scenario.File
	if file == "" {
		file = cand.Scenario.Name
	}
	cmd := fmt.Sprintf("rhomark replay %s --cell %d --replicate %d --estimator %s", shellWord(file), cell, rep, shellWord(label))
	var sc struct {
		Seed *uint64 `json:"seed"`
	}
	if json.Unmarshal(cand.Scenario.Normalised, &sc) != nil || sc.Seed == nil || *sc.Seed != cand.Seed {
		cmd += " --seed " + strconv.FormatUint(cand.Seed, 10)
	}
	return cmd
}

// shellWord quotes a word for a POSIX shell when it needs it.
func shellWord(s string) string {
	if s != "" && strings.Trim(s, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789-_./:=+,") == "" {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}
