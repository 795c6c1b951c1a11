package results

import (
	"encoding/json"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
)

// RecommendationOf returns r's recommendation: the stored one, or for
// results written before it existed one computed at
// DefaultTargetEfficiency.
func RecommendationOf(r *Results) *Recommendation {
	if r.Recommendation != nil {
		return r.Recommendation
	}
	return Recommend(r, DefaultTargetEfficiency)
}

// Recommend runs the tuning studies of r (see TuningStudy) with the given
// target efficiency on clean data, in (0, 1]. It returns nil when no
// estimator's tuning constant is swept.
func Recommend(r *Results, target float64) *Recommendation {
	paths := tunedPaths(r)
	if len(paths) == 0 {
		return nil
	}
	rec := &Recommendation{TargetEfficiency: target, Studies: []TuningStudy{}}
	byLabel := map[string][]string{}
	for _, p := range paths {
		byLabel[p.label] = append(byLabel[p.label], p.path)
	}
	base := baseFractions(r.Scenario.Normalised)
	for _, p := range paths {
		if others := byLabel[p.label]; len(others) > 1 {
			if others[0] == p.path {
				rec.Notes = append(rec.Notes, fmt.Sprintf("%s: %d of its constants are swept (%s); a recommendation needs one swept constant per estimator",
					p.label, len(others), strings.Join(others, ", ")))
			}
			continue
		}
		if ts := study(r, p, base, target); len(ts.Constants) > 0 {
			rec.Studies = append(rec.Studies, ts)
		}
	}
	if len(rec.Studies) == 0 && len(rec.Notes) == 0 {
		return nil
	}
	return rec
}

// tunedPath is a swept path that tunes an estimator.
type tunedPath struct {
	path, label, name string
}

// tunedPaths lists the swept paths of tuning constants, in the order they
// appear in the first cell: estimators.LABEL.tuning and
// estimators.LABEL.psi.constants.NAME.
func tunedPaths(r *Results) []tunedPath {
	if len(r.Cells) == 0 {
		return nil
	}
	var out []tunedPath
	for _, s := range r.Cells[0].Settings {
		switch t := s.Target(); {
		case t.Kind == SweepTuning && t.Name == "":
			out = append(out, tunedPath{s.Path, ownerLabel(r.Cells[0], t.Owner), "tuning"})
		case t.Kind == SweepPsiConstant:
			out = append(out, tunedPath{s.Path, ownerLabel(r.Cells[0], t.Owner), t.Name})
		}
	}
	return out
}

// relevant reports whether a swept setting can change the figures of the
// estimator labelled label against the reference: anything but the
// settings of other estimators.
func relevant(s Setting, c Cell, label, reference string) bool {
	if t := s.Target(); t.OfEstimator() {
		return t.Owns(label, estimatorIndex(c, label)) || t.Owns(reference, estimatorIndex(c, reference))
	}
	return true
}

// study runs one tuning study.
func study(r *Results, p tunedPath, base []baseContamination, target float64) TuningStudy {
	ts := TuningStudy{
		Estimator: p.label, Path: p.path, Name: p.name,
		Criterion: "worst-coefficient RMSE as a multiple of the best swept constant's at the same level " +
			"(same datasets), worst case over the levels",
		Levels:      []TuningLevel{},
		Constants:   []TuningConstant{},
		Recommended: Num(math.NaN()),
		Score:       Measure{Value: Num(math.NaN()), MCSE: Num(math.NaN())},
		Range:       []Num{},
		Target:      TargetPick{Constant: Num(math.NaN()), Efficiency: Measure{Value: Num(math.NaN()), MCSE: Num(math.NaN())}},
	}
	// Levels and constants, in first-seen order; the cell of each pair.
	levelOf := map[string]int{}
	constOf := map[string]int{}
	type pair struct{ k, l int }
	cellAt := map[pair]int{}
	for ci, c := range r.Cells {
		var rest []Setting
		value := ""
		for _, s := range c.Settings {
			switch {
			case s.Path == p.path:
				value = s.Value
			case relevant(s, c, p.label, r.Reference):
				rest = append(rest, s)
			}
		}
		if value == "" || estimatorIndex(c, p.label) < 0 {
			continue
		}
		key := tuningLevelKey(rest)
		l, ok := levelOf[key]
		if !ok {
			l = len(ts.Levels)
			levelOf[key] = l
			ts.Levels = append(ts.Levels, TuningLevel{Settings: rest, Clean: clean(rest, base)})
		}
		k, ok := constOf[value]
		if !ok {
			k = len(ts.Constants)
			constOf[value] = k
			ts.Constants = append(ts.Constants, TuningConstant{Value: value, Constant: Num(firstNumber(value))})
		}
		if _, dup := cellAt[pair{k, l}]; !dup {
			cellAt[pair{k, l}] = ci // cells differing only in other estimators' settings repeat these figures
		}
	}
	// Sort constants ascending, keeping cells attached.
	order := make([]int, len(ts.Constants))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int {
		ca, cb := float64(ts.Constants[a].Constant), float64(ts.Constants[b].Constant)
		switch {
		case math.IsNaN(ca) || math.IsNaN(cb):
			// Values that are not numbers go last, in scenario order.
			if math.IsNaN(ca) == math.IsNaN(cb) {
				return 0
			}
			if math.IsNaN(ca) {
				return 1
			}
			return -1
		case ca < cb:
			return -1
		case ca > cb:
			return 1
		}
		return 0
	})
	sorted := make([]TuningConstant, len(order))
	for i, o := range order {
		tc := ts.Constants[o]
		tc.Points = make([]TuningPoint, len(ts.Levels))
		for l := range ts.Levels {
			ci, ok := cellAt[pair{o, l}]
			if !ok {
				tc.Points[l] = TuningPoint{Cell: -1, Excluded: "no cell at this level",
					VsReference: nanMeasure(), Score: nanMeasure()}
				continue
			}
			tc.Points[l] = point(r, r.Cells[ci], p.label)
		}
		sorted[i] = tc
	}
	ts.Constants = sorted
	scoreLevels(&ts)
	recommend(&ts)
	efficiencies(r, &ts)
	pickTarget(&ts, target)
	ts.Notes = append(ts.Notes, MCSENote)
	return ts
}

// point collects one cell's figures for the estimator labelled label.
func point(r *Results, c Cell, label string) TuningPoint {
	e := c.Estimators[estimatorIndex(c, label)]
	pt := TuningPoint{Cell: c.Index, Coefficients: []TuningCoefficient{}, VsReference: nanMeasure(), Score: nanMeasure()}
	for _, k := range e.Coefficients {
		pt.Coefficients = append(pt.Coefficients, TuningCoefficient{Name: k.Name, Bias: k.Bias, EmpSE: k.EmpSE, RMSE: k.RMSE, MSERatio: k.MSERatio})
	}
	v := VerdictOf(r, c)
	for _, x := range v.NotRecommended {
		if x.Estimator == label {
			pt.Excluded = x.Detail
		}
	}
	for _, rk := range v.Ranking {
		if rk.Estimator == label && strings.HasSuffix(v.Criterion, " "+r.Reference) {
			pt.VsReference = rk.Score
		}
	}
	return pt
}

// scoreLevels fills each point's Score: per coefficient, its RMSE over the
// smallest RMSE of the constants that count at that level; the worst
// coefficient's ratio is the score.
//
// The ratio is formed from the paired MSE ratios against the reference,
// RMSE_k/RMSE_b = √(R_b/R_k), which on the same datasets is the ratio of
// the RMSEs, with the MCSE of log(RMSE_k/RMSE_b) = ½√(v_k + v_b), v the
// squared relative MCSE of each R, as if independent (see MCSENote). When
// a ratio is missing (the reference is heavy-tailed, or an older file) the
// RMSEs themselves are used, with √(v_k + v_b) from their own MCSEs.
func scoreLevels(ts *TuningStudy) {
	for l := range ts.Levels {
		// The coefficient names, from the first point with any.
		var names []string
		for _, tc := range ts.Constants {
			if pt := tc.Points[l]; pt.Excluded == "" && len(pt.Coefficients) > 0 {
				for _, k := range pt.Coefficients {
					names = append(names, k.Name)
				}
				break
			}
		}
		// Per coefficient, the best constant: the largest paired ratio, or
		// without ratios the smallest RMSE.
		paired := true
		for _, tc := range ts.Constants {
			pt := tc.Points[l]
			if pt.Excluded != "" {
				continue
			}
			for _, k := range pt.Coefficients {
				if !(float64(k.MSERatio.Value) > 0 && isFinite(float64(k.MSERatio.Value)) && isFinite(float64(k.MSERatio.MCSE))) {
					paired = false
				}
			}
		}
		for ci, name := range names {
			best := -1
			var bestV float64
			for i, tc := range ts.Constants {
				pt := tc.Points[l]
				if pt.Excluded != "" || ci >= len(pt.Coefficients) || pt.Coefficients[ci].Name != name {
					continue
				}
				k := pt.Coefficients[ci]
				v := float64(k.RMSE.Value)
				if paired {
					v = 1 / math.Sqrt(float64(k.MSERatio.Value))
				}
				if isFinite(v) && (best < 0 || v < bestV) {
					best, bestV = i, v
				}
			}
			if best < 0 {
				continue
			}
			b := ts.Constants[best].Points[l].Coefficients[ci]
			for i := range ts.Constants {
				pt := &ts.Constants[i].Points[l]
				if pt.Excluded != "" || ci >= len(pt.Coefficients) || pt.Coefficients[ci].Name != name {
					continue
				}
				k := pt.Coefficients[ci]
				var q, rel float64
				switch {
				case i == best:
					q, rel = 1, 0
				case paired:
					rk, rb := float64(k.MSERatio.Value), float64(b.MSERatio.Value)
					q = math.Sqrt(rb / rk)
					rel = 0.5 * math.Hypot(float64(k.MSERatio.MCSE)/rk, float64(b.MSERatio.MCSE)/rb)
				default:
					q = float64(k.RMSE.Value) / float64(b.RMSE.Value)
					rel = math.Hypot(float64(k.RMSE.MCSE)/float64(k.RMSE.Value), float64(b.RMSE.MCSE)/float64(b.RMSE.Value))
				}
				if !isFinite(q) {
					pt.Excluded = "no usable RMSE on " + name
					continue
				}
				if !isFinite(float64(pt.Score.Value)) || q > float64(pt.Score.Value) {
					pt.Score = Measure{Value: Num(q), MCSE: Num(q * nanToZero(rel))}
					pt.Worst = name
				}
			}
		}
	}
}

// recommend fills the worst cases, the recommended constant, the range
// and the grid-end note.
func recommend(ts *TuningStudy) {
	best := -1
	for i := range ts.Constants {
		tc := &ts.Constants[i]
		tc.WorstLevel = -1
		tc.WorstCase = nanMeasure()
		for l, pt := range tc.Points {
			if pt.Excluded != "" {
				if tc.Excluded == "" {
					tc.Excluded = fmt.Sprintf("at %s: %s", levelName(ts.Levels[l]), pt.Excluded)
				}
				continue
			}
			if !isFinite(float64(pt.Score.Value)) {
				continue
			}
			if tc.WorstLevel < 0 || pt.Score.Value > tc.WorstCase.Value {
				tc.WorstCase, tc.WorstLevel = pt.Score, l
			}
		}
		if tc.Excluded == "" && tc.WorstLevel < 0 {
			tc.Excluded = "no score at any level"
		}
		if tc.Excluded != "" {
			continue
		}
		if best < 0 || tc.WorstCase.Value < ts.Constants[best].WorstCase.Value {
			best = i
		}
	}
	if best < 0 {
		ts.Notes = append(ts.Notes, "No constant can be recommended: every one is excluded at some level (see excluded).")
		return
	}
	b := ts.Constants[best]
	ts.Recommended, ts.RecommendedValue, ts.Score = b.Constant, b.Value, b.WorstCase
	for i := range ts.Constants {
		tc := &ts.Constants[i]
		if tc.Excluded != "" {
			continue
		}
		d := float64(tc.WorstCase.Value - b.WorstCase.Value)
		if d <= TieMCSE*math.Hypot(nanToZero(float64(tc.WorstCase.MCSE)), nanToZero(float64(b.WorstCase.MCSE))) {
			tc.InRange = true
			ts.Range = append(ts.Range, tc.Constant)
		}
	}
	ordered := !slices.ContainsFunc(ts.Constants, func(tc TuningConstant) bool { return math.IsNaN(float64(tc.Constant)) })
	if len(ts.Constants) > 1 && ordered {
		switch best {
		case 0:
			ts.GridEnd = LowEnd
			ts.Notes = append(ts.Notes, "The recommended constant is the smallest swept: the best may lie below it, so extend the grid downwards.")
		case len(ts.Constants) - 1:
			ts.GridEnd = HighEnd
			ts.Notes = append(ts.Notes, "The recommended constant is the largest swept: the best may lie above it, so extend the grid upwards.")
		}
	}
}

// efficiencies fills each constant's efficiency on the clean levels.
func efficiencies(r *Results, ts *TuningStudy) {
	for i := range ts.Constants {
		tc := &ts.Constants[i]
		tc.Efficiency, tc.TheoryEfficiency = nanMeasure(), Num(math.NaN())
		anyClean, allTheory, heavy := false, true, false
		theory := math.Inf(1)
		for l, lv := range ts.Levels {
			pt := tc.Points[l]
			if !lv.Clean || pt.Cell < 0 {
				continue
			}
			anyClean = true
			c := cellByIndex(r, pt.Cell)
			ei := estimatorIndex(c, ts.Estimator)
			if ei < 0 {
				continue
			}
			e := c.Estimators[ei]
			if t := float64(e.TheoryEfficiency); isFinite(t) {
				theory = math.Min(theory, t)
			} else {
				allTheory = false
			}
			for _, k := range e.Coefficients {
				if k.RelEffHeavyTails {
					// Heavy-tailed errors (of this estimator or the
					// reference): no meaningful efficiency at this level.
					heavy = true
				}
				if v := float64(k.RelEff.Value); isFinite(v) && (!isFinite(float64(tc.Efficiency.Value)) || v < float64(tc.Efficiency.Value)) {
					tc.Efficiency = k.RelEff
				}
			}
		}
		if heavy {
			tc.Efficiency = nanMeasure()
		}
		if anyClean && allTheory {
			tc.TheoryEfficiency = Num(theory)
		}
	}
}

// pickTarget finds the smallest constant meeting the target efficiency on
// clean data (see TargetPick).
func pickTarget(ts *TuningStudy, target float64) {
	tp := &ts.Target
	anyClean := slices.ContainsFunc(ts.Levels, func(l TuningLevel) bool { return l.Clean })
	if !anyClean || len(ts.Constants) == 0 {
		tp.Basis = NoBasis
		tp.Note = "no level is free of contamination: sweep a contamination fraction of 0 to pick by efficiency"
		return
	}
	tp.Basis = Asymptotic
	for _, tc := range ts.Constants {
		if !isFinite(float64(tc.TheoryEfficiency)) {
			tp.Basis = Simulated
		}
	}
	meets := func(tc TuningConstant) (bool, Measure) {
		if tp.Basis == Asymptotic {
			t := float64(tc.TheoryEfficiency)
			return t >= target-theoryEfficiencySlack, Measure{Value: tc.TheoryEfficiency, MCSE: Num(math.NaN())}
		}
		e := tc.Efficiency
		return isFinite(float64(e.Value)) && float64(e.Value)+TieMCSE*nanToZero(float64(e.MCSE)) >= target, e
	}
	if tp.Basis == Simulated && !slices.ContainsFunc(ts.Constants, func(tc TuningConstant) bool { return isFinite(float64(tc.Efficiency.Value)) }) {
		tp.Note = "no meaningful efficiency on clean data: no asymptotic figure applies, and the simulated one rests on heavy-tailed errors or is missing"
		return
	}
	for i, tc := range ts.Constants {
		ok, eff := meets(tc)
		if !ok {
			continue
		}
		tp.Constant, tp.Value, tp.Efficiency = tc.Constant, tc.Value, eff
		if i == 0 && len(ts.Constants) > 1 {
			tp.Note = "the smallest swept constant already meets it: a smaller one may too, so extend the grid downwards"
		}
		return
	}
	tp.Note = "no swept constant meets it: extend the grid upwards"
}

// baseContamination is one contamination of the scenario as written, for
// telling clean levels from contaminated ones.
type baseContamination struct {
	label    string
	fraction float64
}

// baseFractions reads the contaminations of the normalised scenario.
func baseFractions(normalised json.RawMessage) []baseContamination {
	var sc struct {
		Contamination []struct {
			Label    string  `json:"label"`
			Fraction float64 `json:"fraction"`
		} `json:"contamination"`
	}
	if len(normalised) == 0 || json.Unmarshal(normalised, &sc) != nil {
		return nil
	}
	out := make([]baseContamination, len(sc.Contamination))
	for i, c := range sc.Contamination {
		out[i] = baseContamination{c.Label, c.Fraction}
	}
	return out
}

// clean reports whether no contamination replaces a row at a level: each
// contamination's fraction, swept (contamination.LABEL.fraction or
// contamination.INDEX.fraction) or as written, is 0.
func clean(settings []Setting, base []baseContamination) bool {
	for i, c := range base {
		f := c.fraction
		for _, s := range settings {
			if t := s.Target(); t.Kind == SweepFraction && t.Owns(c.label, i) {
				if v, err := strconv.ParseFloat(strings.TrimSpace(s.Value), 64); err == nil {
					f = v
				}
			}
		}
		if f != 0 {
			return false
		}
	}
	if base == nil {
		// Without the scenario, only swept fractions can tell.
		for _, s := range settings {
			if s.Target().Kind == SweepFraction {
				if v, err := strconv.ParseFloat(strings.TrimSpace(s.Value), 64); err != nil || v != 0 {
					return false
				}
			}
		}
	}
	return true
}

// levelName names a level by its settings, shortly.
func levelName(l TuningLevel) string {
	if len(l.Settings) == 0 {
		return "the only level"
	}
	return shortSettings(l.Settings, " ", ", ")
}

// firstNumber parses a swept value: a number, or a list whose first
// element is one. NaN otherwise.
func firstNumber(s string) float64 {
	s = strings.TrimSpace(s)
	s = strings.TrimPrefix(s, "[")
	if i := strings.IndexAny(s, ",]"); i >= 0 {
		s = s[:i]
	}
	v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
	if err != nil {
		return math.NaN()
	}
	return v
}

// tuningLevelKey joins settings into a map key.
func tuningLevelKey(s []Setting) string {
	parts := make([]string, len(s))
	for i, x := range s {
		parts[i] = x.Path + "=" + x.Value
	}
	return strings.Join(parts, "\x00")
}

// estimatorIndex returns the index of the estimator labelled label in c,
// or -1.
func estimatorIndex(c Cell, label string) int {
	for i, e := range c.Estimators {
		if e.Label == label {
			return i
		}
	}
	return -1
}

// ownerLabel returns the label of the estimator a sweep path names by
// owner, its label or its position in the scenario's list (c lists the
// estimators in that order); owner itself when it names neither.
func ownerLabel(c Cell, owner string) string {
	if estimatorIndex(c, owner) >= 0 {
		return owner
	}
	if i, err := strconv.Atoi(owner); err == nil && i >= 0 && i < len(c.Estimators) {
		return c.Estimators[i].Label
	}
	return owner
}

// cellByIndex returns the cell whose Index is i.
func cellByIndex(r *Results, i int) Cell {
	if i < len(r.Cells) && r.Cells[i].Index == i {
		return r.Cells[i]
	}
	for _, c := range r.Cells {
		if c.Index == i {
			return c
		}
	}
	return Cell{}
}

func nanMeasure() Measure { return Measure{Value: Num(math.NaN()), MCSE: Num(math.NaN())} }

func isFinite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

func nanToZero(x float64) float64 {
	if !isFinite(x) {
		return 0
	}
	return x
}
