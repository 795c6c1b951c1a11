package results

import (
	"fmt"
)

// DefaultTargetEfficiency is the efficiency on clean data that a tuning
// study's target pick must reach unless told otherwise: 95% against the
// reference, the convention behind most published default constants
// (Holland & Welsch 1977, Comm. Statist. Theory Methods 6:813-827).
const DefaultTargetEfficiency = 0.95

// theoryEfficiencySlack is how far below the target an asymptotic
// efficiency may fall and still meet it: half a unit in the fourth decimal,
// so that a published constant rounded to a few digits (the bisquare's
// 4.685 for 4.6850649…) meets the target it was rounded from.
const theoryEfficiencySlack = 5e-5

// Recommendation is the answer of the tuning studies of a run: for every
// estimator whose tuning constant (a family's tuning, or a constant of a
// psi of one's own) is swept, which constant to choose and how sure that
// is. It is nil for a run without such a sweep.
type Recommendation struct {
	// TargetEfficiency is the efficiency on clean data the target pick of
	// each study must reach (DefaultTargetEfficiency unless the run was
	// told otherwise).
	TargetEfficiency float64 `json:"target_efficiency"`
	// Studies holds one entry per tuned estimator, in the order of the
	// sweeps.
	Studies []TuningStudy `json:"studies"`
	// Notes says which sweeps could not be studied, and why.
	Notes []string `json:"notes,omitempty"`
}

// TuningStudy is the tuning study of one estimator's swept constant.
//
// Cells are grouped into levels by the other swept settings that matter to
// this estimator (a contamination fraction, n, the noise; settings of
// other estimators, which do not change its fits, are ignored). At each
// level and constant the score is the worst coefficient's RMSE as a
// multiple of the smallest RMSE on that coefficient among the swept
// constants at that level: max_c RMSE_kc / min_k' RMSE_k'c. It is the
// verdict's score (see Verdict) with the best swept constant of the level
// as the yardstick instead of the reference estimator: units cancel
// across coefficients as there, but the yardstick is good at every level,
// so a level counts by how much a constant loses there to the best
// available constant. (Relative to a fixed reference such as least
// squares the clean level, where the reference is best, would always be
// the worst case and the largest constant would always win.)
//
// The recommended constant has the smallest worst case over the levels
// (minimax regret); the range lists every constant whose worst case lies
// within TieMCSE combined MCSE of the recommended one's.
type TuningStudy struct {
	// Estimator is the tuned estimator's label.
	Estimator string `json:"estimator"`
	// Path is the swept path of the constant.
	Path string `json:"path"`
	// Name is the constant's short name (the path's last part, or the
	// family's parameter, e.g. "tuning" or "c").
	Name string `json:"name"`
	// Criterion describes the score in a sentence.
	Criterion string `json:"criterion"`
	// Levels are the groups of cells, in the order of their first cells.
	Levels []TuningLevel `json:"levels"`
	// Constants holds one entry per swept constant, smallest first.
	Constants []TuningConstant `json:"constants"`
	// Recommended is the constant with the smallest worst-case score among
	// the eligible ones (see TuningConstant.Excluded); null when none is.
	Recommended Num `json:"recommended"`
	// RecommendedValue is Recommended as written in the scenario.
	RecommendedValue string `json:"recommended_value,omitempty"`
	// Score is the recommended constant's worst-case score, with the MCSE
	// of the level it comes from.
	Score Measure `json:"score"`
	// Range lists the eligible constants whose worst-case score is within
	// TieMCSE·√(MCSE² + MCSE_rec²) of the recommended one's, smallest
	// first (the recommended one among them). They need not be adjacent.
	Range []Num `json:"range"`
	// GridEnd says whether the recommended constant is the smallest or
	// largest swept one, in which case the optimum may lie beyond the grid.
	GridEnd GridEnd `json:"grid_end"`
	// Target is the smallest constant meeting the target efficiency on
	// clean data.
	Target TargetPick `json:"target"`
	// Notes are caveats in sentences: how the MCSEs are combined, and
	// anything that limits the recommendation.
	Notes []string `json:"notes"`
}

// TuningLevel is one group of cells of a tuning study: one combination of
// the other swept settings.
type TuningLevel struct {
	// Settings are the swept values other than the constant (empty when
	// nothing else is swept).
	Settings []Setting `json:"settings"`
	// Clean is set when no contamination replaces any row at this level.
	Clean bool `json:"clean"`
}

// TuningConstant is one swept constant of a tuning study.
type TuningConstant struct {
	// Value is the constant as written in the scenario.
	Value string `json:"value"`
	// Constant is its number (the first, when the value is a list; null
	// when the value is not a number).
	Constant Num `json:"constant"`
	// Points holds one entry per level, in the order of Levels.
	Points []TuningPoint `json:"points"`
	// WorstCase is the largest Score over the levels, with that point's
	// MCSE. Being the largest of noisy scores it is biased upward, by up
	// to about its MCSE when levels are alike.
	WorstCase Measure `json:"worst_case"`
	// WorstLevel indexes Levels at the worst case; -1 when there is none.
	WorstLevel int `json:"worst_level"`
	// Excluded says why the constant cannot be recommended (too many
	// failed fits or heavy tails at some level, or a level without a
	// cell); empty when it can.
	Excluded string `json:"excluded,omitempty"`
	// InRange is set when the constant is in TuningStudy.Range.
	InRange bool `json:"in_range"`
	// Efficiency is the simulated variance efficiency against the
	// reference on the clean levels: the smallest over the clean levels
	// and the coefficients, with its MCSE; null without a clean level, and
	// when the errors of this estimator or the reference are heavy-tailed
	// there (see Coefficient.RelEffHeavyTails).
	Efficiency Measure `json:"efficiency"`
	// TheoryEfficiency is the asymptotic efficiency against the reference
	// at the normal model, the smallest over the clean levels; null when
	// some clean level is not at the normal model.
	TheoryEfficiency Num `json:"theory_efficiency"`
}

// TuningPoint is one constant at one level: one cell's figures for the
// tuned estimator.
type TuningPoint struct {
	// Cell is the index of the cell (Cell.Index); -1 when the grid has no
	// cell for this constant and level.
	Cell int `json:"cell"`
	// Coefficients holds bias, SE and RMSE per coefficient (the intercept
	// included), each with its MCSE.
	Coefficients []TuningCoefficient `json:"coefficients"`
	// VsReference is the verdict's score: the worst coefficient's RMSE
	// relative to the reference on the same datasets, from the paired MSE
	// ratio (see Verdict); null when it cannot be formed.
	VsReference Measure `json:"vs_reference"`
	// Score is the worst coefficient's RMSE as a multiple of the best
	// swept constant's at this level (see TuningStudy), with its MCSE;
	// exactly 1 with MCSE 0 for a constant best on its worst coefficient.
	Score Measure `json:"score"`
	// Worst names the coefficient the score comes from.
	Worst string `json:"worst,omitempty"`
	// Excluded says why this point cannot count (as in a verdict); empty
	// when it can.
	Excluded string `json:"excluded,omitempty"`
}

// TuningCoefficient is one coefficient's accuracy at one point of a tuning
// study.
type TuningCoefficient struct {
	Name  string  `json:"name"`   // the coefficient's name
	Bias  Measure `json:"bias"`   // mean estimate minus true value, ± MCSE
	EmpSE Measure `json:"emp_se"` // standard deviation of the estimates, ± MCSE
	RMSE  Measure `json:"rmse"`   // root mean squared error, ± MCSE
	// MSERatio is the reference's MSE over this one's on the same
	// datasets (see Coefficient.MSERatio).
	MSERatio Measure `json:"mse_ratio"`
}

// TargetPick is the smallest swept constant whose efficiency on clean data
// meets the target.
//
// When every clean level is at the normal model (normal, homoscedastic,
// uncontaminated noise) the decision uses the asymptotic efficiency, which
// has no Monte Carlo error: a constant meets the target when its
// efficiency, rounded to four decimals, does. Otherwise it uses the
// simulated variance efficiency on its worst coefficient, and a constant
// meets the target when it is not below it by more than TieMCSE MCSE.
type TargetPick struct {
	// Basis says which efficiency decided.
	Basis EfficiencyBasis `json:"basis"`
	// Constant is the pick; null when no swept constant meets the target
	// or there is no clean level.
	Constant Num `json:"constant"`
	// Value is Constant as written in the scenario.
	Value string `json:"value,omitempty"`
	// Efficiency is the deciding efficiency at the pick (the asymptotic
	// one has a null MCSE).
	Efficiency Measure `json:"efficiency"`
	// Note says what limits the pick, if anything (the smallest swept
	// constant already meets the target, or none does).
	Note string `json:"note,omitempty"`
}

// GridEnd says whether a recommended constant lies at an end of the swept
// grid.
type GridEnd int

// Where a recommended constant lies on the grid.
const (
	// Inside: the optimum is bracketed by the grid.
	Inside GridEnd = iota
	// LowEnd: the smallest swept constant is best; smaller ones may be
	// better.
	LowEnd
	// HighEnd: the largest swept constant is best; larger ones may be
	// better.
	HighEnd
)

// String names the position as the JSON does.
func (g GridEnd) String() string {
	switch g {
	case Inside:
		return "inside"
	case LowEnd:
		return "low-end"
	case HighEnd:
		return "high-end"
	}
	return "unknown"
}

// MarshalText encodes the position by its name.
func (g GridEnd) MarshalText() ([]byte, error) { return []byte(g.String()), nil }

// UnmarshalText decodes a position's name.
func (g *GridEnd) UnmarshalText(b []byte) error {
	for _, c := range []GridEnd{Inside, LowEnd, HighEnd} {
		if c.String() == string(b) {
			*g = c
			return nil
		}
	}
	return fmt.Errorf("unknown grid end %q", b)
}

// EfficiencyBasis says which efficiency a target pick rests on.
type EfficiencyBasis int

// The efficiencies a target pick can rest on.
const (
	// NoBasis: there is no clean level to measure efficiency on.
	NoBasis EfficiencyBasis = iota
	// Asymptotic: the asymptotic efficiency at the normal model.
	Asymptotic
	// Simulated: the simulated variance efficiency on the worst
	// coefficient, with its MCSE.
	Simulated
)

// String names the basis as the JSON does.
func (e EfficiencyBasis) String() string {
	switch e {
	case NoBasis:
		return "none"
	case Asymptotic:
		return "asymptotic"
	case Simulated:
		return "simulated"
	}
	return "unknown"
}

// MarshalText encodes the basis by its name.
func (e EfficiencyBasis) MarshalText() ([]byte, error) { return []byte(e.String()), nil }

// UnmarshalText decodes a basis's name.
func (e *EfficiencyBasis) UnmarshalText(b []byte) error {
	for _, c := range []EfficiencyBasis{NoBasis, Asymptotic, Simulated} {
		if c.String() == string(b) {
			*e = c
			return nil
		}
	}
	return fmt.Errorf("unknown efficiency basis %q", b)
}

// MCSENote is the caveat every tuning study carries about its MCSEs.
const MCSENote = "The constants were fitted to the same datasets, but the tallies keep no moments across cells, " +
	"so two constants' scores are compared as if independent (combined MCSE √(a² + b²)): " +
	"with the positive correlation of fits to the same data this overstates the MCSE of their difference, " +
	"so the range is, if anything, too wide."
