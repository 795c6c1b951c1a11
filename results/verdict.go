package results

import (
	"fmt"
	"math"
	"slices"
	"strings"
)

// MaxFailureRate is the largest fraction of failed fits an estimator may
// have and still be recommended. The measures use only the fits that
// converged, so an estimator that fails on some datasets is judged on the
// datasets it could handle, which flatters it; and in use a failed fit
// gives no answer at all. Above 2% of replicates (1 dataset in 50) that is
// too often to hand a user without a warning, whatever its RMSE.
const MaxFailureRate = 0.02

// TieMCSE is the number of combined Monte Carlo standard errors within
// which two estimators count as tied: a difference smaller than
// 2·√(MCSE₁² + MCSE₂²) may be simulation noise.
const TieMCSE = 2

// Verdict says which estimator to choose in one cell and how sure the
// choice is.
//
// The overall criterion is the worst coefficient's RMSE relative to the
// reference: for estimator e, max over coefficients k of
// RMSE_ek / RMSE_ref,k, which is max_k MSERatio_ek^(−1/2). It is chosen over
// the sum of the MSEs because coefficients have different units (an
// intercept in litres, a gain in litres per litre) and a sum would rank by
// the coefficient with the largest scale alone; the ratio has no units,
// and taking the worst coefficient means a choice is never bought by
// giving up one coefficient for another. Relative to the reference it
// uses the paired MSE ratio, whose MCSE is much smaller than that of two
// RMSEs compared as if independent. When the reference has no usable MSE
// (its estimates are heavy-tailed, or it has no converged fits), RMSE_ek
// is taken relative to the smallest RMSE on coefficient k instead, with
// only e's own MCSE.
//
// RMSE counts bias and spread together, so an estimator with a small
// spread and a large bias does not win; the variance efficiency is never
// used here.
type Verdict struct {
	// Criterion describes the overall score, e.g. "worst-coefficient RMSE
	// relative to ls".
	Criterion string `json:"criterion"`
	// Choice is the estimator with the smallest score among those
	// recommended; empty when none is.
	Choice string `json:"choice,omitempty"`
	// Tied lists the recommended estimators whose score is within TieMCSE
	// combined MCSE of Choice's: the simulation cannot tell them apart.
	Tied []string `json:"tied,omitempty"`
	// Ranking holds every recommended estimator, best score first.
	Ranking []Ranked `json:"ranking"`
	// Coefficients ranks the estimators on each coefficient by RMSE and by
	// |bias|.
	Coefficients []CoefficientVerdict `json:"coefficients"`
	// NotRecommended lists the estimators left out of the ranking, and why.
	NotRecommended []Exclusion `json:"not_recommended,omitempty"`
}

// Ranked is one estimator's overall score.
type Ranked struct {
	Estimator string `json:"estimator"`
	// Score is the worst coefficient's RMSE relative to the reference (or
	// to the best RMSE, see Verdict), with its MCSE: 1 is as accurate as
	// the reference, 0.5 half its RMSE. The reference's is exactly 1, MCSE
	// null.
	Score Measure `json:"score"`
	// Worst names the coefficient the score comes from (empty for the
	// reference, whose every coefficient scores 1).
	Worst string `json:"worst,omitempty"`
	// Tied is set when Score is within TieMCSE combined MCSE of the best.
	Tied bool `json:"tied"`
}

// CoefficientVerdict ranks the recommended estimators (those not in
// Verdict.NotRecommended) on one coefficient.
type CoefficientVerdict struct {
	Coefficient string `json:"coefficient"`
	// BestRMSE has the smallest RMSE (RMSE its value ± MCSE); TiedRMSE the
	// others within TieMCSE combined MCSE of it.
	BestRMSE string   `json:"best_rmse"`
	RMSE     Measure  `json:"rmse"`
	TiedRMSE []string `json:"tied_rmse,omitempty"`
	// SmallestBias has the smallest |bias| (Bias its signed value ± MCSE);
	// TiedBias the others within TieMCSE combined MCSE of it.
	SmallestBias string   `json:"smallest_bias"`
	Bias         Measure  `json:"bias"`
	TiedBias     []string `json:"tied_bias,omitempty"`
}

// Exclusion says why an estimator is not recommended.
type Exclusion struct {
	Estimator string          `json:"estimator"`
	Reason    ExclusionReason `json:"reason"`
	Detail    string          `json:"detail"` // the reason in a sentence, with the figures
}

// ExclusionReason is why an estimator is left out of a verdict.
type ExclusionReason int

// The reasons an estimator is not recommended.
const (
	// NoConvergedFit: no fit of the estimator converged.
	NoConvergedFit ExclusionReason = iota
	// TooManyFailures: more than MaxFailureRate of its fits failed.
	TooManyFailures
	// HeavyTailedEstimates: some coefficient's estimates are heavy-tailed,
	// so its MSE is not meaningful.
	HeavyTailedEstimates
	// NoUsableRMSE: its RMSE relative to the others could not be formed.
	NoUsableRMSE
)

// String names the reason as the JSON does.
func (r ExclusionReason) String() string {
	switch r {
	case NoConvergedFit:
		return "no-converged-fit"
	case TooManyFailures:
		return "too-many-failures"
	case HeavyTailedEstimates:
		return "heavy-tails"
	case NoUsableRMSE:
		return "no-usable-rmse"
	}
	return "unknown"
}

// MarshalText encodes the reason by its name.
func (r ExclusionReason) MarshalText() ([]byte, error) { return []byte(r.String()), nil }

// UnmarshalText decodes a reason's name.
func (r *ExclusionReason) UnmarshalText(b []byte) error {
	for _, c := range []ExclusionReason{NoConvergedFit, TooManyFailures, HeavyTailedEstimates, NoUsableRMSE} {
		if c.String() == string(b) {
			*r = c
			return nil
		}
	}
	return fmt.Errorf("unknown exclusion reason %q", b)
}

// Decide ranks the estimators of cell c for the reference estimator
// labelled reference. Estimators are not recommended when more than
// MaxFailureRate of their fits failed, when any coefficient's estimates
// are heavy-tailed (no meaningful MSE), or when they have no converged
// fit; the others are ranked by the overall score described on Verdict,
// and per coefficient by RMSE and by |bias|.
func Decide(c Cell, reference string) Verdict {
	v := Verdict{Ranking: []Ranked{}, Coefficients: []CoefficientVerdict{}}
	ok := make([]bool, len(c.Estimators))
	ref := -1
	for i, e := range c.Estimators {
		if e.Label == reference {
			ref = i
		}
		cv := e.Convergence
		failed := cv.Fits - cv.Converged
		switch {
		case cv.Fits == 0 || cv.Converged == 0 || len(e.Coefficients) == 0:
			v.NotRecommended = append(v.NotRecommended, Exclusion{e.Label, NoConvergedFit, "no fit converged"})
		case float64(failed) > MaxFailureRate*float64(cv.Fits):
			v.NotRecommended = append(v.NotRecommended, Exclusion{e.Label, TooManyFailures,
				fmt.Sprintf("%d of %d fits failed (%s, above %s): its figures describe only the datasets it could fit",
					failed, cv.Fits, percent(float64(failed)/float64(cv.Fits)), percent(MaxFailureRate))})
		case heavyAny(e):
			v.NotRecommended = append(v.NotRecommended, Exclusion{e.Label, HeavyTailedEstimates,
				"heavy-tailed estimates: a few replicates carry most of the squared error, so its MSE is not meaningful"})
		default:
			ok[i] = true
		}
	}
	// Per coefficient, over the recommended estimators.
	names := coefficientNames(c)
	for _, name := range names {
		cv := CoefficientVerdict{Coefficient: name}
		var rm, bi []scored
		for i, e := range c.Estimators {
			k, found := coefficientOf(e, name)
			if !ok[i] || !found {
				continue
			}
			rm = append(rm, scored{e.Label, k.RMSE, float64(k.RMSE.Value), float64(k.RMSE.MCSE)})
			bi = append(bi, scored{e.Label, k.Bias, math.Abs(float64(k.Bias.Value)), float64(k.Bias.MCSE)})
		}
		if best, tied, found := rankScores(rm); found {
			cv.BestRMSE, cv.RMSE, cv.TiedRMSE = best.label, best.m, tied
		}
		if best, tied, found := rankScores(bi); found {
			cv.SmallestBias, cv.Bias, cv.TiedBias = best.label, best.m, tied
		}
		if cv.BestRMSE != "" {
			v.Coefficients = append(v.Coefficients, cv)
		}
	}
	// Overall: the worst coefficient relative to the reference, or to the
	// best RMSE when the reference cannot serve.
	useRef := ref >= 0 && ok[ref]
	for i, e := range c.Estimators {
		for _, k := range e.Coefficients {
			if ok[i] && i != ref && !(float64(k.MSERatio.Value) > 0 && finite(float64(k.MSERatio.Value))) {
				useRef = false // no paired ratio to rank by (results from before it existed)
			}
		}
	}
	if useRef {
		v.Criterion = "worst-coefficient RMSE relative to " + reference
	} else {
		v.Criterion = "worst-coefficient RMSE relative to the best on that coefficient"
	}
	var all []scored
	worst := map[string]string{}
	for i, e := range c.Estimators {
		if !ok[i] {
			continue
		}
		s := scored{label: e.Label, score: math.Inf(-1)}
		for _, k := range e.Coefficients {
			var rel, mcse float64
			switch {
			case useRef && i == ref:
				rel, mcse = 1, 0
			case useRef:
				r := float64(k.MSERatio.Value)
				rel = 1 / math.Sqrt(r)
				// d(r^−½) = −½ r^−3/2 dr: relative MCSE halves.
				mcse = rel * float64(k.MSERatio.MCSE) / (2 * r)
			default:
				best := bestRMSE(v.Coefficients, k.Name)
				rel = float64(k.RMSE.Value) / best
				mcse = float64(k.RMSE.MCSE) / best
			}
			if !finite(rel) {
				s.score = math.NaN()
				break
			}
			if rel > s.score {
				s.score, s.mcse, worst[e.Label] = rel, mcse, k.Name
			}
		}
		if !finite(s.score) {
			v.NotRecommended = append(v.NotRecommended, Exclusion{e.Label, NoUsableRMSE, "no usable RMSE"})
			continue
		}
		if !finite(s.mcse) {
			s.mcse = 0
		}
		s.m = Measure{Value: Num(s.score), MCSE: Num(s.mcse)}
		if useRef && i == ref {
			s.m.MCSE = Num(math.NaN())
			delete(worst, e.Label) // every coefficient is 1: none is worst
		}
		all = append(all, s)
	}
	best, tied, found := rankScores(all)
	if !found {
		return v
	}
	v.Choice, v.Tied = best.label, tied
	sortScored(all)
	for _, s := range all {
		v.Ranking = append(v.Ranking, Ranked{Estimator: s.label, Score: s.m, Worst: worst[s.label], Tied: slices.Contains(tied, s.label)})
	}
	return v
}

// scored is one estimator's value of a ranked quantity (lower is better).
type scored struct {
	label string
	m     Measure // as reported
	score float64 // as ranked
	mcse  float64
}

// sortScored orders by score, keeping the scenario's order among equals.
func sortScored(s []scored) {
	slices.SortStableFunc(s, func(a, b scored) int {
		switch {
		case a.score < b.score:
			return -1
		case a.score > b.score:
			return 1
		}
		return 0
	})
}

// rankScores returns the lowest finite score and the labels of the others
// within TieMCSE·√(MCSE_best² + MCSE_other²) of it (an MCSE that is not
// finite counts as 0). Treating the two as independent ignores the
// pairing within a cell, which usually makes them positively correlated,
// so it leans towards calling a tie.
func rankScores(in []scored) (best scored, tied []string, ok bool) {
	var s []scored
	for _, c := range in {
		if finite(c.score) {
			if !finite(c.mcse) {
				c.mcse = 0
			}
			s = append(s, c)
		}
	}
	if len(s) == 0 {
		return scored{}, nil, false
	}
	sortScored(s)
	for _, c := range s[1:] {
		if c.score-s[0].score <= TieMCSE*math.Hypot(s[0].mcse, c.mcse) {
			tied = append(tied, c.label)
		}
	}
	return s[0], tied, true
}

// heavyAny reports whether any coefficient of e is heavy-tailed.
func heavyAny(e Estimator) bool {
	for _, k := range e.Coefficients {
		if k.HeavyTails {
			return true
		}
	}
	return false
}

// coefficientNames lists the cell's coefficient names in first-seen order.
func coefficientNames(c Cell) []string {
	var out []string
	for _, e := range c.Estimators {
		for _, k := range e.Coefficients {
			if !slices.Contains(out, k.Name) {
				out = append(out, k.Name)
			}
		}
	}
	return out
}

// coefficientOf finds e's coefficient called name.
func coefficientOf(e Estimator, name string) (Coefficient, bool) {
	for _, k := range e.Coefficients {
		if k.Name == name {
			return k, true
		}
	}
	return Coefficient{}, false
}

// bestRMSE returns the smallest RMSE on coefficient name, or NaN.
func bestRMSE(cvs []CoefficientVerdict, name string) float64 {
	for _, cv := range cvs {
		if cv.Coefficient == name {
			return float64(cv.RMSE.Value)
		}
	}
	return math.NaN()
}

// VerdictOf returns c's verdict: the stored one, or, for results written
// before verdicts were stored, one computed by Decide.
//
// Files from before the RMSE was reported have an MSE but no RMSE and no
// MSE ratio; for those the RMSE is formed from the MSE (as
// Moments.RootMeanSquaredError does) and the estimators are ranked against
// the best RMSE per coefficient, since the paired ratio cannot be
// recovered.
func VerdictOf(r *Results, c Cell) Verdict {
	if c.Verdict != nil {
		return *c.Verdict
	}
	ests := make([]Estimator, len(c.Estimators))
	for i, e := range c.Estimators {
		e.Coefficients = slices.Clone(e.Coefficients)
		for j := range e.Coefficients {
			k := &e.Coefficients[j]
			if k.RMSE.Value == 0 && k.RMSE.MCSE == 0 && k.MSE.Value != 0 {
				rmse := math.Sqrt(float64(k.MSE.Value))
				k.RMSE = Measure{Value: Num(rmse), MCSE: k.MSE.MCSE / Num(2*rmse)}
				k.MSERatio = Measure{Value: Num(math.NaN()), MCSE: Num(math.NaN())}
			}
		}
		ests[i] = e
	}
	c.Estimators = ests
	return Decide(c, r.Reference)
}

// verdictRow is one line of a verdict as the report and the Markdown
// summary show it.
type verdictRow struct {
	what        string // "choice", "smallest RMSE", "smallest |bias|", "not recommended"
	coefficient string // "" for the whole estimator
	best        string // the estimator's label
	value       string // value ± MCSE, or ""
	others      string // ties or the runner-up, or the reason; plain text
	tied        []string
}

// verdictRows lays out c's verdict: the overall choice, then per
// coefficient the smallest RMSE and the smallest |bias|, then the
// estimators not recommended.
func verdictRows(r *Results, c Cell) []verdictRow {
	v := VerdictOf(r, c)
	var rows []verdictRow
	if v.Choice != "" {
		best := v.Ranking[0]
		row := verdictRow{what: "choice (" + v.Criterion + ")", best: best.Estimator, value: "×" + pm(best.Score, false)}
		if best.Estimator == r.Reference && strings.HasSuffix(v.Criterion, " "+r.Reference) {
			row.value = "×1 (the reference)"
		}
		var next string
		for _, k := range v.Ranking[1:] {
			if k.Tied {
				row.tied = append(row.tied, k.Estimator)
			} else if next == "" {
				next = k.Estimator + " " + relativeScore(best, k) + " of the choice's score, more than " + fmt.Sprint(TieMCSE) + " MCSE behind"
			}
		}
		if len(row.tied) == 0 {
			row.others = next
		}
		rows = append(rows, row)
	}
	for _, cv := range v.Coefficients {
		rows = append(rows, verdictRow{what: "smallest RMSE", coefficient: cv.Coefficient, best: cv.BestRMSE, value: pm(cv.RMSE, false), tied: cv.TiedRMSE})
		if cv.SmallestBias != "" {
			rows = append(rows, verdictRow{what: "smallest |bias|", coefficient: cv.Coefficient, best: cv.SmallestBias, value: pm(cv.Bias, true), tied: cv.TiedBias})
		}
	}
	for _, e := range v.NotRecommended {
		rows = append(rows, verdictRow{what: "not recommended", best: e.Estimator, others: e.Detail})
	}
	return rows
}
