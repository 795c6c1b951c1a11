package harness

import (
	"encoding/base64"
	"encoding/binary"
	"errors"
	"fmt"
	"math"
)

// auditJSON is the serialised form of an auditTally in a partial file.
// The per-fit values are the little-endian bits of each float64, base64
// encoded: exact (NaN included) and about a third the size of decimal text.
type auditJSON struct {
	Width      int        `json:"width"`
	Values     string     `json:"values"`
	NotAudited int64      `json:"not_audited"`
	AtCap      int64      `json:"at_cap"`
	Direct     int64      `json:"direct"`
	SEReasons  []int64    `json:"se_reasons"`
	Roots      *rootsJSON `json:"roots,omitempty"`
}

type rootsJSON struct {
	Searched  int64    `json:"searched"`
	Failed    int64    `json:"failed"`
	Multiple  int64    `json:"multiple"`
	Converged []int64  `json:"converged"`
	Best      []int64  `json:"best"`
	Statuses  []int64  `json:"statuses"` // per start, per status
	Sums      []string `json:"sums"`     // per start and coefficient: Σe, Σe²
}

// encode serialises t (nil for nil).
func (t *auditTally) encode() *auditJSON {
	if t == nil {
		return nil
	}
	b := make([]byte, 8*len(t.values))
	for i, v := range t.values {
		binary.LittleEndian.PutUint64(b[8*i:], math.Float64bits(v))
	}
	out := &auditJSON{Width: auditWidth(t.p), Values: base64.StdEncoding.EncodeToString(b), NotAudited: t.notAudited,
		AtCap: t.atCap, Direct: t.direct, SEReasons: append([]int64(nil), t.seReasons[:]...)}
	if r := t.roots; r != nil {
		rj := &rootsJSON{Searched: r.searched, Failed: r.failed, Multiple: r.multiple,
			Converged: append([]int64(nil), r.converged[:]...), Best: append([]int64(nil), r.best[:]...)}
		for s := range r.statuses {
			rj.Statuses = append(rj.Statuses, r.statuses[s][:]...)
		}
		for _, s := range r.sums() {
			rj.Sums = append(rj.Sums, encodeSum(s))
		}
		out.Roots = rj
	}
	return out
}

// decode restores a tally serialised by encode into t, which must have
// the shape the scenario's plan gives (studied or not, with roots or not).
func (t *auditTally) decode(j *auditJSON) error {
	switch {
	case t == nil && j == nil:
		return nil
	case t == nil:
		return errors.New("the partial holds a solver audit this run does not have (it was run with --audit-solvers?)")
	case j == nil:
		return errors.New("the partial holds no solver audit for an audited estimator (it was run without --audit-solvers?)")
	case j.Width != auditWidth(t.p) || len(j.SEReasons) != numSEReasons:
		return fmt.Errorf("a solver audit of %d values per fit; this build keeps %d", j.Width, auditWidth(t.p))
	case (j.Roots == nil) != (t.roots == nil):
		return errors.New("the root searches of the partial do not match the scenario")
	}
	b, err := base64.StdEncoding.DecodeString(j.Values)
	if err != nil || len(b)%(8*j.Width) != 0 {
		return errors.New("the solver audit's values are corrupted")
	}
	t.values = make([]float64, len(b)/8)
	for i := range t.values {
		t.values[i] = math.Float64frombits(binary.LittleEndian.Uint64(b[8*i:]))
	}
	t.notAudited, t.atCap, t.direct = j.NotAudited, j.AtCap, j.Direct
	copy(t.seReasons[:], j.SEReasons)
	if r := t.roots; r != nil {
		rj := j.Roots
		sums := r.sums()
		if len(rj.Converged) != rootStarts || len(rj.Best) != rootStarts || len(rj.Sums) != len(sums) || len(rj.Statuses) != rootStarts*statusSlots {
			return errors.New("the root searches of the partial do not match the scenario")
		}
		r.searched, r.failed, r.multiple = rj.Searched, rj.Failed, rj.Multiple
		copy(r.converged[:], rj.Converged)
		copy(r.best[:], rj.Best)
		for s := range r.statuses {
			copy(r.statuses[s][:], rj.Statuses[s*statusSlots:])
		}
		for i, s := range sums {
			if err := s.UnmarshalText([]byte(rj.Sums[i])); err != nil {
				return err
			}
		}
	}
	return nil
}
