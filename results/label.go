package results

import (
	"bytes"
	"encoding/json"
	"strconv"
	"strings"
)

// labelDigits is the number of significant digits of a constant in an
// estimator's description: enough to tell tuning constants apart, without
// the float64 noise of 4.685064948543376.
const labelDigits = 6

// EstimatorDesc returns how tables describe an estimator: its method and,
// for an M-estimator, its psi with the constants in use, such as
// "irls · huber 1.345", "mm-estimate · bisquare 4.68506" or, for a psi of
// the user's own, "irls · custom c = 1.2". A custom psi's constants come
// from the scenario recorded in r; where a cell sweeps them, the cell's
// settings show them and the description does not.
func EstimatorDesc(r *Results, e Estimator) string {
	desc := e.Method
	if e.Psi == "" {
		return desc
	}
	desc += " · " + e.Psi
	for _, t := range e.Tuning {
		desc += " " + strconv.FormatFloat(t, 'g', labelDigits, 64)
	}
	if e.Psi == "custom" && len(e.Tuning) == 0 && r != nil && !psiSwept(r, e.Label) {
		for _, k := range customConstants(r.Scenario.Normalised, e.Label) {
			desc += " " + k
		}
	}
	return desc
}

// psiSwept reports whether any cell sweeps a field of the psi of the
// estimator labelled label.
func psiSwept(r *Results, label string) bool {
	index := -1 // cells list the estimators in the scenario's order
	if len(r.Cells) > 0 {
		index = estimatorIndex(r.Cells[0], label)
	}
	for _, c := range r.Cells {
		for _, s := range c.Settings {
			if t := s.Target(); t.Owns(label, index) && (t.Kind == SweepPsi || t.Kind == SweepPsiConstant) {
				return true
			}
		}
	}
	return false
}

// customConstants returns "name = value" for each constant of the custom
// psi of the estimator labelled label in a normalised scenario, in the
// scenario's order; nil when there are none or the scenario cannot be read.
func customConstants(normalised json.RawMessage, label string) []string {
	var sc struct {
		Estimators []struct {
			Label string          `json:"label"`
			Psi   json.RawMessage `json:"psi"`
		} `json:"estimators"`
	}
	if json.Unmarshal(normalised, &sc) != nil {
		return nil
	}
	for _, e := range sc.Estimators {
		if e.Label != label {
			continue
		}
		var psi struct {
			Constants json.RawMessage `json:"constants"`
		}
		if json.Unmarshal(e.Psi, &psi) != nil || len(psi.Constants) == 0 {
			return nil
		}
		// Decode token by token: the object's order is the scenario's.
		dec := json.NewDecoder(bytes.NewReader(psi.Constants))
		dec.UseNumber()
		if t, err := dec.Token(); err != nil || t != json.Delim('{') {
			return nil
		}
		var out []string
		for dec.More() {
			k, err1 := dec.Token()
			v, err2 := dec.Token()
			name, ok1 := k.(string)
			num, ok2 := v.(json.Number)
			f, err3 := num.Float64()
			if err1 != nil || err2 != nil || !ok1 || !ok2 || err3 != nil {
				return nil
			}
			out = append(out, name+" = "+strconv.FormatFloat(f, 'g', labelDigits, 64))
		}
		return out
	}
	return nil
}

// shortSettings writes a cell's swept values compactly, each path without
// its first segment when it has three or more and joined to its value by
// kv ("spikes.fraction 0.1" or "spikes.fraction=0.1"), the settings
// separated by sep; "-" when there are none.
func shortSettings(ss []Setting, kv, sep string) string {
	if len(ss) == 0 {
		return "-"
	}
	parts := make([]string, len(ss))
	for i, s := range ss {
		parts[i] = ShortPath(s.Path) + kv + s.Value
	}
	return strings.Join(parts, sep)
}
