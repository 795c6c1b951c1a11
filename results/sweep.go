package results

import (
	"strconv"
	"strings"
)

// SweepKind says what a swept setting sets, read from its path.
type SweepKind int

// The kinds of swept setting. They and their names match
// scenarios.SweepKind, which the loader works out against the scenario;
// results files keep only the path, so TargetOf reads it here, and a
// harness test checks that the two readings agree.
const (
	// SweepOther is any field not listed below.
	SweepOther SweepKind = iota
	// SweepTuning is estimators.LABEL.tuning, or with Name set,
	// estimators.LABEL.tuning.K, one of the constants.
	SweepTuning
	// SweepPsiConstant is estimators.LABEL.psi.constants.NAME.
	SweepPsiConstant
	// SweepPsi is any other field of an estimator's psi, or the whole psi;
	// Name is the path's last segment.
	SweepPsi
	// SweepEstimator is any other setting of an estimator, or the whole
	// estimator.
	SweepEstimator
	// SweepFraction is contamination.LABEL.fraction (or INDEX for LABEL).
	SweepFraction
	// SweepContamination is any other setting of a contamination.
	SweepContamination
	// SweepNoiseScale is noise.scale.
	SweepNoiseScale
	// SweepN is model.n.
	SweepN
)

// String names the kind.
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

// SweepTarget is what a swept path sets.
type SweepTarget struct {
	// Kind is the kind of field the sweep sets.
	Kind SweepKind
	// Owner is the estimator or contamination the field belongs to, as
	// the path names it (a label, or an index into the scenario's list);
	// "" for other kinds.
	Owner string
	// Name is the psi constant's name (SweepPsiConstant), the tuning
	// element's index (SweepTuning of one element) or the psi field
	// (SweepPsi); "" otherwise.
	Name string
}

// Owns reports whether the target belongs to the estimator or
// contamination labelled label at position index of the scenario's list:
// a path may name it either way.
func (t SweepTarget) Owns(label string, index int) bool {
	return t.Owner != "" && (t.Owner == label || t.Owner == strconv.Itoa(index))
}

// OfEstimator reports whether the path sets a field of an estimator.
func (t SweepTarget) OfEstimator() bool {
	switch t.Kind {
	case SweepTuning, SweepPsiConstant, SweepPsi, SweepEstimator:
		return true
	}
	return false
}

// TargetOf reads a swept path: the one place in results and report that
// knows the grammar of sweep paths.
func TargetOf(path string) SweepTarget {
	segs := strings.Split(path, ".")
	switch {
	case path == "noise.scale":
		return SweepTarget{Kind: SweepNoiseScale}
	case path == "model.n":
		return SweepTarget{Kind: SweepN}
	case len(segs) >= 2 && segs[0] == "estimators":
		t := SweepTarget{Kind: SweepEstimator, Owner: segs[1]}
		rest := segs[2:]
		switch {
		case len(rest) == 0:
		case rest[0] == "tuning" && len(rest) <= 2:
			t.Kind = SweepTuning
			if len(rest) == 2 {
				t.Name = rest[1]
			}
		case len(rest) == 3 && rest[0] == "psi" && rest[1] == "constants":
			t.Kind, t.Name = SweepPsiConstant, rest[2]
		case rest[0] == "psi":
			t.Kind, t.Name = SweepPsi, rest[len(rest)-1]
		}
		return t
	case len(segs) >= 2 && segs[0] == "contamination":
		if len(segs) == 3 && segs[2] == "fraction" {
			return SweepTarget{Kind: SweepFraction, Owner: segs[1]}
		}
		return SweepTarget{Kind: SweepContamination, Owner: segs[1]}
	}
	return SweepTarget{Kind: SweepOther}
}

// Target returns what the setting's path sets.
func (s Setting) Target() SweepTarget { return TargetOf(s.Path) }

// ShortPath shortens a swept path for labels: without its first segment
// when it has three or more ("spikes.fraction" for
// contamination.spikes.fraction).
func ShortPath(path string) string {
	if seg := strings.Split(path, "."); len(seg) >= 3 {
		return strings.Join(seg[1:], ".")
	}
	return path
}
