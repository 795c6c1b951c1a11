package scenarios

import (
	"math"
	"slices"
	"strconv"
	"strings"

	"go.yaml.in/yaml/v3"
)

// SweepKind says what a sweep sets. The loader works it out once from the
// sweep's path, against the scenario, so that code past the loader never
// splits paths.
type SweepKind int

// The kinds of sweep. Those of an estimator or a contamination name it by
// SweepTarget.Index.
const (
	// SweepOther is any field not listed below: a column's slope or
	// distribution, a noise parameter other than scale, a whole list.
	SweepOther SweepKind = iota
	// SweepTuning is estimators.E.tuning, the tuning constants of an
	// estimator, or with Name set, estimators.E.tuning.K, one of them.
	SweepTuning
	// SweepPsiConstant is estimators.E.psi.constants.NAME, a named
	// constant of a custom psi; Name is NAME.
	SweepPsiConstant
	// SweepPsi is any other field of an estimator's psi, or the whole psi
	// (estimators.E.psi, estimators.E.psi.expr, ...); Name is the path's
	// last segment.
	SweepPsi
	// SweepEstimator is any other setting of an estimator, or the whole
	// estimator (method, scale, start, stop, resampling).
	SweepEstimator
	// SweepFraction is contamination.C.fraction, the fraction of one
	// contamination.
	SweepFraction
	// SweepContamination is any other setting of a contamination, or the
	// whole contamination.
	SweepContamination
	// SweepNoiseScale is noise.scale.
	SweepNoiseScale
	// SweepN is model.n.
	SweepN
)

// String names the kind (the names are those of results.SweepKind).
func (k SweepKind) String() string {
	switch k {
	case SweepTuning:
		return "tuning"
	case SweepPsiConstant:
		return "psi-constant"
	case SweepPsi:
		return "psi"
	case SweepEstimator:
		return "estimator"
	case SweepFraction:
		return "fraction"
	case SweepContamination:
		return "contamination"
	case SweepNoiseScale:
		return "noise-scale"
	case SweepN:
		return "n"
	}
	return "other"
}

// SweepTarget is what a sweep sets, resolved against the scenario when it
// is loaded: the kind of field and, for a field of an estimator or a
// contamination, which one (by its position in Scenario.Estimators or
// Scenario.Contamination, however the path names it).
type SweepTarget struct {
	// Kind is the kind of field the sweep sets.
	Kind SweepKind
	// Index is the position of the estimator or contamination the field
	// belongs to; -1 for other kinds.
	Index int
	// Name is the psi constant's name (SweepPsiConstant), the tuning
	// element's index (SweepTuning of one element) or the psi field
	// (SweepPsi); "" otherwise.
	Name string
}

// Estimator returns the position of the estimator whose field the sweep
// sets, and whether it sets one.
func (t SweepTarget) Estimator() (int, bool) {
	switch t.Kind {
	case SweepTuning, SweepPsiConstant, SweepPsi, SweepEstimator:
		return t.Index, t.Index >= 0
	}
	return -1, false
}

// resolveSweep works out what the sweep at path sets in s, whose labels
// are filled in; the path has been checked against the file.
func resolveSweep(s *Scenario, path string) SweepTarget {
	segs := strings.Split(path, ".")
	t := SweepTarget{Kind: SweepOther, Index: -1}
	switch {
	case len(segs) == 2 && segs[0] == "noise" && segs[1] == "scale":
		t.Kind = SweepNoiseScale
	case len(segs) == 2 && segs[0] == "model" && segs[1] == "n":
		t.Kind = SweepN
	case len(segs) >= 2 && segs[0] == "estimators":
		t.Index = elementIndex(segs[1], s.estimatorLabels())
		if t.Index < 0 {
			return SweepTarget{Kind: SweepOther, Index: -1}
		}
		rest := segs[2:]
		switch {
		case len(rest) == 0:
			t.Kind = SweepEstimator
		case rest[0] == "tuning" && len(rest) <= 2:
			t.Kind = SweepTuning
			if len(rest) == 2 {
				t.Name = rest[1]
			}
		case len(rest) == 3 && rest[0] == "psi" && rest[1] == "constants":
			t.Kind, t.Name = SweepPsiConstant, rest[2]
		case rest[0] == "psi":
			t.Kind, t.Name = SweepPsi, rest[len(rest)-1]
		default:
			t.Kind = SweepEstimator
		}
	case len(segs) >= 2 && segs[0] == "contamination":
		labels := make([]string, len(s.Contamination))
		for i, c := range s.Contamination {
			labels[i] = c.Label
		}
		t.Index = elementIndex(segs[1], labels)
		switch {
		case t.Index < 0:
			return SweepTarget{Kind: SweepOther, Index: -1}
		case len(segs) == 3 && segs[2] == "fraction":
			t.Kind = SweepFraction
		default:
			t.Kind = SweepContamination
		}
	}
	return t
}

// elementIndex returns the position of the list element that a path
// segment names, by index or by label, or -1.
func elementIndex(seg string, labels []string) int {
	if k, err := strconv.Atoi(seg); err == nil {
		if k < 0 || k >= len(labels) {
			return -1
		}
		return k
	}
	return slices.Index(labels, seg)
}

// sweepNumber returns the number a swept value node holds, or NaN when it
// is not one number.
func sweepNumber(n *yaml.Node) float64 {
	if n.Kind != yaml.ScalarNode || n.Style&(yaml.DoubleQuotedStyle|yaml.SingleQuotedStyle) != 0 {
		return math.NaN()
	}
	f, err := strconv.ParseFloat(strings.ReplaceAll(n.Value, "_", ""), 64)
	if err != nil || math.IsInf(f, 0) {
		return math.NaN()
	}
	return f
}
