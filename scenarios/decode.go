package scenarios

import (
	"errors"
	"fmt"
	"io"
	"math"
	"reflect"
	"strconv"
	"strings"

	"go.yaml.in/yaml/v3"
)

// This file decodes a YAML node tree into the scenario types strictly: every
// key must be a known field, every value of the right type, and every
// problem is reported with its line and column. yaml.v3's own decoding into
// structs is not used because it offers no strict mode for node trees and
// loses positions.

// maxNodes bounds the size of a scenario document after aliases are
// expanded, which defeats "billion laughs" alias bombs.
const maxNodes = 200_000

// maxBytes bounds the size of a scenario file.
const maxBytes = 4 << 20

// position is the line and column of a value in the file.
type position struct{ line, col int }

// decoder decodes nodes into Go values, recording where each field was.
type decoder struct {
	errs *errs
	pos  map[string]position
}

// nodeDecoder is implemented by types that decode themselves from a node,
// for values with more than one accepted form (a number or a list, a name or
// a mapping).
type nodeDecoder interface {
	decodeNode(d *decoder, n *yaml.Node, path string)
}

// parseDocument parses data into a node tree with aliases expanded. It never
// panics: a panic inside the YAML parser is reported as an error.
func parseDocument(file string, data []byte) (root *yaml.Node, err error) {
	if len(data) > maxBytes {
		return nil, &Error{File: file, Msg: fmt.Sprintf("file is %d bytes; scenario files are limited to %d", len(data), maxBytes)}
	}
	defer func() {
		if r := recover(); r != nil {
			root, err = nil, &Error{File: file, Msg: fmt.Sprintf("not valid YAML (the parser failed: %v)", r)}
		}
	}()
	dec := yaml.NewDecoder(strings.NewReader(string(data)))
	var doc yaml.Node
	if err := dec.Decode(&doc); err != nil {
		if errors.Is(err, io.EOF) {
			return nil, &Error{File: file, Msg: "file is empty; a scenario is a YAML mapping with at least model, noise and estimators"}
		}
		return nil, yamlError(file, err)
	}
	var extra yaml.Node
	if err := dec.Decode(&extra); !errors.Is(err, io.EOF) {
		line := extra.Line
		if err != nil {
			return nil, yamlError(file, err)
		}
		return nil, &Error{File: file, Line: line, Msg: "more than one YAML document; a scenario file holds exactly one"}
	}
	if doc.Kind != yaml.DocumentNode || len(doc.Content) != 1 {
		return nil, &Error{File: file, Msg: "not a YAML document"}
	}
	budget := maxNodes
	out, bad := expand(doc.Content[0], &budget, 0)
	switch {
	case bad == nil:
		return out, nil
	case bad.Kind == yaml.AliasNode && bad.Alias == nil:
		return nil, &Error{File: file, Line: bad.Line, Column: bad.Column, Msg: "an alias refers to no anchor"}
	case budget <= 0:
		return nil, &Error{File: file, Line: bad.Line, Column: bad.Column, Msg: fmt.Sprintf("document expands to more than %d nodes (aliases referring to aliases?); scenario files that large are refused", maxNodes)}
	}
	return nil, &Error{File: file, Line: bad.Line, Column: bad.Column,
		Msg: fmt.Sprintf("values are nested more than %d levels deep here (lists or mappings inside each other); a scenario needs fewer than ten", maxDepth)}
}

// maxDepth bounds how deep values may nest in a scenario document.
const maxDepth = 200

// yamlError turns a yaml.v3 error into an *Error, keeping its line.
func yamlError(file string, err error) error {
	msg := err.Error()
	msg = strings.TrimPrefix(msg, "yaml: ")
	var line int
	if strings.HasPrefix(msg, "line ") {
		if _, e := fmt.Sscanf(msg, "line %d:", &line); e == nil {
			msg = strings.TrimSpace(msg[strings.Index(msg, ":")+1:])
		}
	}
	return &Error{File: file, Line: line, Msg: "not valid YAML: " + msg}
}

// expand returns a deep copy of n with every alias replaced by a copy of its
// anchor's node, counting nodes against budget. When it cannot (the budget
// runs out, nesting passes maxDepth, an alias has no anchor) it returns the
// node where it stopped as bad: budget ≤ 0 says the budget ran out.
func expand(n *yaml.Node, budget *int, depth int) (out, bad *yaml.Node) {
	if n == nil {
		return nil, &yaml.Node{}
	}
	if *budget <= 0 || depth > maxDepth {
		return nil, n
	}
	*budget--
	if n.Kind == yaml.AliasNode {
		if n.Alias == nil {
			return nil, n
		}
		c, bad := expand(n.Alias, budget, depth+1)
		if bad != nil {
			return nil, bad
		}
		c.Line, c.Column = n.Line, n.Column
		return c, nil
	}
	c := *n
	c.Anchor = ""
	c.Content = nil
	if len(n.Content) > 0 {
		c.Content = make([]*yaml.Node, len(n.Content))
		for i, k := range n.Content {
			var bad *yaml.Node
			if c.Content[i], bad = expand(k, budget, depth+1); bad != nil {
				return nil, bad
			}
		}
	}
	return &c, nil
}

// kindName names a node's kind for messages.
func kindName(n *yaml.Node) string {
	switch n.Kind {
	case yaml.MappingNode:
		return "a mapping"
	case yaml.SequenceNode:
		return "a list"
	case yaml.ScalarNode:
		if n.Tag == "!!null" {
			return "nothing"
		}
		return fmt.Sprintf("%q", n.Value)
	}
	return "an unexpected node"
}

// at records n's position for path and returns it.
func (d *decoder) at(path string, n *yaml.Node) position {
	p := position{n.Line, n.Column}
	d.pos[path] = p
	return p
}

// fail records a problem with node n at path.
func (d *decoder) fail(n *yaml.Node, path, format string, args ...any) {
	d.errs.add(n.Line, n.Column, path, format, args...)
}

// given reports whether the field at path was present in the file.
func (d *decoder) given(path string) bool {
	_, ok := d.pos[path]
	return ok
}

// join appends a field name to a path.
func join(path, name string) string {
	if path == "" {
		return name
	}
	return path + "." + name
}

// decode decodes n into the addressable value v.
func (d *decoder) decode(n *yaml.Node, v reflect.Value, path string) {
	d.at(path, n)
	if v.CanAddr() {
		if u, ok := v.Addr().Interface().(nodeDecoder); ok {
			u.decodeNode(d, n, path)
			return
		}
	}
	switch v.Kind() {
	case reflect.Pointer:
		if n.Kind == yaml.ScalarNode && n.Tag == "!!null" {
			v.SetZero()
			return
		}
		e := reflect.New(v.Type().Elem())
		d.decode(n, e.Elem(), path)
		v.Set(e)
	case reflect.Struct:
		d.decodeStruct(n, v, path)
	case reflect.Slice:
		if n.Kind != yaml.SequenceNode {
			d.fail(n, path, "want a list, got %s", kindName(n))
			return
		}
		s := reflect.MakeSlice(v.Type(), len(n.Content), len(n.Content))
		for i, c := range n.Content {
			d.decode(c, s.Index(i), fmt.Sprintf("%s[%d]", path, i))
		}
		v.Set(s)
	case reflect.String:
		if s, ok := d.scalarText(n, path); ok {
			v.SetString(s)
		}
	case reflect.Float64:
		if f, ok := d.float(n, path); ok {
			v.SetFloat(f)
		}
	case reflect.Int:
		if i, ok := d.integer(n, path, math.MinInt, math.MaxInt); ok {
			v.SetInt(i)
		}
	case reflect.Uint64:
		if s, ok := d.plainScalar(n, path, "a whole number ≥ 0"); ok {
			u, err := strconv.ParseUint(strings.ReplaceAll(s, "_", ""), 0, 64)
			if err != nil {
				d.fail(n, path, "want a whole number from 0 to %d, got %q", uint64(math.MaxUint64), s)
				return
			}
			v.SetUint(u)
		}
	case reflect.Bool:
		if s, ok := d.plainScalar(n, path, "true or false"); ok {
			switch s {
			case "true":
				v.SetBool(true)
			case "false":
				v.SetBool(false)
			default:
				d.fail(n, path, "want true or false, got %q", s)
			}
		}
	default:
		d.fail(n, path, "internal error: cannot decode into %v", v.Type())
	}
}

// fieldInfo is one decodable field of a struct, found through inline
// embedding.
type fieldInfo struct {
	name  string
	index []int
}

// structFields lists the yaml-named fields of t, descending into fields
// tagged ",inline".
func structFields(t reflect.Type) []fieldInfo {
	var out []fieldInfo
	for i := 0; i < t.NumField(); i++ {
		f := t.Field(i)
		tag := f.Tag.Get("yaml")
		if tag == "" || tag == "-" {
			continue
		}
		name, opt, _ := strings.Cut(tag, ",")
		if opt == "inline" {
			for _, sub := range structFields(f.Type) {
				sub.index = append([]int{i}, sub.index...)
				out = append(out, sub)
			}
			continue
		}
		out = append(out, fieldInfo{name: name, index: []int{i}})
	}
	return out
}

// decodeStruct decodes a mapping into a struct, rejecting unknown and
// repeated keys.
func (d *decoder) decodeStruct(n *yaml.Node, v reflect.Value, path string) {
	if n.Kind != yaml.MappingNode {
		d.fail(n, path, "want a mapping of %s, got %s", keyList(structFields(v.Type())), kindName(n))
		return
	}
	fields := structFields(v.Type())
	seen := map[string]bool{}
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, val := n.Content[i], n.Content[i+1]
		if k.Kind != yaml.ScalarNode {
			d.fail(k, path, "keys must be plain names, got %s", kindName(k))
			continue
		}
		key := k.Value
		if key == "<<" {
			d.fail(k, path, "merge keys (<<) are not supported; repeat the fields or use a sweep")
			continue
		}
		fpath := join(path, key)
		if seen[key] {
			d.fail(k, fpath, "given twice; each key may appear once")
			continue
		}
		seen[key] = true
		var fi *fieldInfo
		for j := range fields {
			if fields[j].name == key {
				fi = &fields[j]
				break
			}
		}
		if fi == nil {
			d.fail(k, fpath, "unknown key %q; valid keys here: %s%s", key, keyList(fields), suggest(key, fields))
			continue
		}
		d.decode(val, v.FieldByIndex(fi.index), fpath)
	}
}

// keyList formats field names for a message.
func keyList(fields []fieldInfo) string {
	names := make([]string, len(fields))
	for i, f := range fields {
		names[i] = f.name
	}
	return strings.Join(names, ", ")
}

// suggest returns " (did you mean x?)" for a near-miss key, else "".
func suggest(key string, fields []fieldInfo) string {
	best, bestD := "", 3
	for _, f := range fields {
		if dd := editDistance(key, f.name); dd < bestD {
			best, bestD = f.name, dd
		}
	}
	if best == "" {
		return ""
	}
	return fmt.Sprintf(" (did you mean %q?)", best)
}

// editDistance is the Levenshtein distance between a and b.
func editDistance(a, b string) int {
	if len(a) > 64 || len(b) > 64 {
		return 99
	}
	prev := make([]int, len(b)+1)
	cur := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur[0] = i
		for j := 1; j <= len(b); j++ {
			cost := 1
			if a[i-1] == b[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(b)]
}

// scalarText returns the text of a scalar node (any style).
func (d *decoder) scalarText(n *yaml.Node, path string) (string, bool) {
	if n.Kind != yaml.ScalarNode || n.Tag == "!!null" {
		d.fail(n, path, "want text, got %s", kindName(n))
		return "", false
	}
	return n.Value, true
}

// plainScalar returns the text of an unquoted scalar, for numbers and
// booleans; want describes the expected value for messages.
func (d *decoder) plainScalar(n *yaml.Node, path, want string) (string, bool) {
	if n.Kind != yaml.ScalarNode || n.Tag == "!!null" {
		d.fail(n, path, "want %s, got %s", want, kindName(n))
		return "", false
	}
	if n.Style&(yaml.DoubleQuotedStyle|yaml.SingleQuotedStyle) != 0 {
		d.fail(n, path, "want %s, got the quoted text %q (remove the quotes)", want, n.Value)
		return "", false
	}
	return n.Value, true
}

// float parses a finite number.
func (d *decoder) float(n *yaml.Node, path string) (float64, bool) {
	s, ok := d.plainScalar(n, path, "a number")
	if !ok {
		return 0, false
	}
	f, err := strconv.ParseFloat(strings.ReplaceAll(s, "_", ""), 64)
	if err != nil || math.IsNaN(f) || math.IsInf(f, 0) {
		d.fail(n, path, "want a finite number, got %q", s)
		return 0, false
	}
	return f, true
}

// integer parses a whole number in [lo, hi]; 1e6 and 10_000 are accepted.
func (d *decoder) integer(n *yaml.Node, path string, lo, hi int) (int64, bool) {
	s, ok := d.plainScalar(n, path, "a whole number")
	if !ok {
		return 0, false
	}
	clean := strings.ReplaceAll(s, "_", "")
	if i, err := strconv.ParseInt(clean, 10, 64); err == nil {
		if i < int64(lo) || i > int64(hi) {
			d.fail(n, path, "want a whole number from %d to %d, got %s", lo, hi, s)
			return 0, false
		}
		return i, true
	}
	f, err := strconv.ParseFloat(clean, 64)
	if err != nil || f != math.Trunc(f) || math.Abs(f) > 1<<53 {
		d.fail(n, path, "want a whole number, got %q", s)
		return 0, false
	}
	if f < float64(lo) || f > float64(hi) {
		d.fail(n, path, "want a whole number from %d to %d, got %s", lo, hi, s)
		return 0, false
	}
	return int64(f), true
}
