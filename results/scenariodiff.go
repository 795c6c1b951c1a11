package results

import (
	"bytes"
	"encoding/json"
	"fmt"
	"sort"
	"strings"
)

// SettingKind says what a scenario setting that differs between two runs
// changes, and so whether the runs are still one study for Compare.
type SettingKind int

const (
	// SettingSolver is a setting of how an estimator is computed, not of
	// what it estimates: its stopping rules (stop.*), its start, the
	// search effort of resampling (resampling.subsets, resampling.keep),
	// or the method when it moves between irls and newton (the same
	// estimating equations solved another way). Runs that differ only in
	// these fit the same datasets to the same estimators and are compared
	// paired without further ado.
	SettingSolver SettingKind = iota
	// SettingEstimator is a setting that defines the estimator: psi,
	// tuning, scale rule, any other method change, and the resampling
	// settings that define an S- or LTS-estimator (s_tuning, s_divisor,
	// h). The datasets are the same but the estimand is not.
	SettingEstimator
	// SettingAnalysis is a setting of the study that draws no data: the
	// reference estimator, the breakdown summary, and the list of
	// estimators (labels and their order).
	SettingAnalysis
	// SettingData is a setting that changes the simulated data or the
	// cells: model, noise, contamination, vary, and anything this list
	// does not know.
	SettingData
	// SettingName is the scenario's name, which changes nothing simulated.
	SettingName
)

// String returns the kind's name as written in JSON.
func (k SettingKind) String() string {
	switch k {
	case SettingSolver:
		return "solver"
	case SettingEstimator:
		return "estimator"
	case SettingAnalysis:
		return "analysis"
	case SettingData:
		return "data"
	case SettingName:
		return "name"
	}
	return fmt.Sprintf("SettingKind(%d)", int(k))
}

// MarshalText encodes the kind by name.
func (k SettingKind) MarshalText() ([]byte, error) { return []byte(k.String()), nil }

// UnmarshalText decodes a kind's name.
func (k *SettingKind) UnmarshalText(b []byte) error {
	for c := SettingSolver; c <= SettingName; c++ {
		if c.String() == string(b) {
			*k = c
			return nil
		}
	}
	return fmt.Errorf("unknown setting kind %q (want solver, estimator, analysis, data or name)", b)
}

// SettingChange is one scenario setting whose value differs between the
// baseline and the candidate run.
type SettingChange struct {
	// Path is the setting's dotted path in the normalised scenario, with
	// estimators named by label, for example
	// estimators.bisquare.stop.max_iter.
	Path string `json:"path"`
	// Kind says what the setting changes.
	Kind SettingKind `json:"kind"`
	// Baseline and Candidate are the values as compact JSON text, or
	// "unset" when the setting is absent.
	Baseline  string `json:"baseline"`
	Candidate string `json:"candidate"`
}

// String returns "path: baseline → candidate".
func (s SettingChange) String() string {
	return fmt.Sprintf("%s: %s → %s", s.Path, s.Baseline, s.Candidate)
}

// scenarioChanges lists the settings at which two normalised scenarios
// differ, classified by kind. The seed, replicates and description are
// left out: the runs record the seed and replicates they used, and the
// description changes nothing.
func scenarioChanges(a, b json.RawMessage) []SettingChange {
	x, errX := decodeJSONValue(a)
	y, errY := decodeJSONValue(b)
	xm, okX := x.(map[string]any)
	ym, okY := y.(map[string]any)
	if errX != nil || errY != nil || !okX || !okY {
		if bytes.Equal(a, b) {
			return nil
		}
		return []SettingChange{{Path: "(whole scenario)", Kind: SettingData, Baseline: "unreadable", Candidate: "unreadable"}}
	}
	var out []SettingChange
	for _, k := range unionKeys(xm, ym) {
		switch k {
		case "seed", "replicates", "about":
			continue
		case "name":
			walkLeaves(k, xm[k], ym[k], func(p string, u, v any) {
				out = append(out, SettingChange{Path: p, Kind: SettingName, Baseline: jsonText(u), Candidate: jsonText(v)})
			})
		case "estimators":
			out = append(out, estimatorChanges(xm[k], ym[k])...)
		case "reference", "breakdown":
			walkLeaves(k, xm[k], ym[k], func(p string, u, v any) {
				out = append(out, SettingChange{Path: p, Kind: SettingAnalysis, Baseline: jsonText(u), Candidate: jsonText(v)})
			})
		default:
			walkLeaves(k, xm[k], ym[k], func(p string, u, v any) {
				out = append(out, SettingChange{Path: p, Kind: SettingData, Baseline: jsonText(u), Candidate: jsonText(v)})
			})
		}
	}
	return out
}

// estimatorChanges compares the estimator lists. Lists whose labels differ
// (in number or order) are one analysis change; otherwise each estimator's
// settings are compared and classified.
func estimatorChanges(x, y any) []SettingChange {
	labels := func(v any) ([]string, []map[string]any, bool) {
		list, ok := v.([]any)
		if !ok {
			return nil, nil, v == nil
		}
		var ls []string
		var ms []map[string]any
		for _, e := range list {
			m, ok := e.(map[string]any)
			if !ok {
				return nil, nil, false
			}
			l, _ := m["label"].(string)
			ls = append(ls, l)
			ms = append(ms, m)
		}
		return ls, ms, true
	}
	lx, mx, okX := labels(x)
	ly, my, okY := labels(y)
	if !okX || !okY || strings.Join(lx, "\x00") != strings.Join(ly, "\x00") {
		return []SettingChange{{Path: "estimators", Kind: SettingAnalysis, Baseline: "[" + strings.Join(lx, " ") + "]", Candidate: "[" + strings.Join(ly, " ") + "]"}}
	}
	var out []SettingChange
	for i, label := range lx {
		prefix := "estimators." + label
		for _, k := range unionKeys(mx[i], my[i]) {
			walkLeaves(k, mx[i][k], my[i][k], func(p string, u, v any) {
				out = append(out, SettingChange{Path: prefix + "." + p, Kind: estimatorSettingKind(p, u, v),
					Baseline: jsonText(u), Candidate: jsonText(v)})
			})
		}
	}
	return out
}

// estimatorSettingKind classifies an estimator's setting by its path
// within the estimator.
func estimatorSettingKind(path string, u, v any) SettingKind {
	switch {
	case path == "stop" || strings.HasPrefix(path, "stop."):
		return SettingSolver
	case path == "start" || strings.HasPrefix(path, "start["):
		return SettingSolver
	case path == "resampling.subsets" || path == "resampling.keep":
		return SettingSolver
	case path == "solver_audit" || path == "roots":
		return SettingSolver // studies of the solver that change no estimate
	case path == "command" || strings.HasPrefix(path, "command[") || path == "timeout":
		// Another version of an external estimator's program, or its
		// time limit: how the estimator is computed.
		return SettingSolver
	case path == "method":
		iterative := func(m any) bool { return m == "irls" || m == "newton" }
		if iterative(u) && iterative(v) {
			return SettingSolver
		}
	}
	return SettingEstimator
}

// decodeJSONValue decodes JSON keeping numbers as their text.
func decodeJSONValue(b json.RawMessage) (any, error) {
	d := json.NewDecoder(bytes.NewReader(b))
	d.UseNumber()
	var v any
	err := d.Decode(&v)
	return v, err
}

// unionKeys returns the keys of both maps, sorted.
func unionKeys(a, b map[string]any) []string {
	seen := map[string]bool{}
	var keys []string
	for _, m := range []map[string]any{a, b} {
		for k := range m {
			if !seen[k] {
				seen[k] = true
				keys = append(keys, k)
			}
		}
	}
	sort.Strings(keys)
	return keys
}

// walkLeaves calls f for every path at which x and y differ: objects are
// compared key by key (an absent object counts as empty), lists of equal
// length element by element, anything else as a whole.
func walkLeaves(path string, x, y any, f func(path string, x, y any)) {
	xm, okX := x.(map[string]any)
	ym, okY := y.(map[string]any)
	if (okX || x == nil) && (okY || y == nil) && (okX || okY) {
		for _, k := range unionKeys(xm, ym) {
			walkLeaves(path+"."+k, xm[k], ym[k], f)
		}
		return
	}
	xl, okX := x.([]any)
	yl, okY := y.([]any)
	if okX && okY && len(xl) == len(yl) {
		for i := range xl {
			walkLeaves(fmt.Sprintf("%s[%d]", path, i), xl[i], yl[i], f)
		}
		return
	}
	if jsonText(x) != jsonText(y) {
		f(path, x, y)
	}
}

// jsonText returns a value as compact JSON, or "unset" for an absent one.
func jsonText(v any) string {
	if v == nil {
		return "unset"
	}
	b, err := json.Marshal(v)
	if err != nil {
		return fmt.Sprint(v)
	}
	return string(b)
}
