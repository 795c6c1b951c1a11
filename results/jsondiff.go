package results

import (
	"encoding/json"
	"fmt"
	"reflect"
	"sort"
)

// diffJSON lists the dotted paths at which two JSON documents differ.
func diffJSON(prefix string, a, b json.RawMessage) []string {
	var x, y any
	if json.Unmarshal(a, &x) != nil || json.Unmarshal(b, &y) != nil {
		if string(a) != string(b) {
			return []string{orRoot(prefix)}
		}
		return nil
	}
	var out []string
	walkDiff(prefix, x, y, &out)
	return out
}

func orRoot(p string) string {
	if p == "" {
		return "(whole scenario)"
	}
	return p
}

func walkDiff(path string, x, y any, out *[]string) {
	switch xv := x.(type) {
	case map[string]any:
		yv, ok := y.(map[string]any)
		if !ok {
			*out = append(*out, orRoot(path))
			return
		}
		keys := map[string]bool{}
		for k := range xv {
			keys[k] = true
		}
		for k := range yv {
			keys[k] = true
		}
		var names []string
		for k := range keys {
			names = append(names, k)
		}
		sort.Strings(names)
		for _, k := range names {
			p := k
			if path != "" {
				p = path + "." + k
			}
			walkDiff(p, xv[k], yv[k], out)
		}
	case []any:
		yv, ok := y.([]any)
		if !ok || len(xv) != len(yv) {
			*out = append(*out, orRoot(path))
			return
		}
		for i := range xv {
			walkDiff(fmt.Sprintf("%s[%d]", path, i), xv[i], yv[i], out)
		}
	default:
		if !reflect.DeepEqual(x, y) {
			*out = append(*out, orRoot(path))
		}
	}
}
