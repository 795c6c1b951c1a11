package scenarios

import (
	"encoding/json"
	"fmt"
	"math"
	"reflect"
	"strconv"
	"strings"

	"go.yaml.in/yaml/v3"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/psi"
)

// Value types of the scenario format that accept more than one form.

// Intercept is the true intercept of the model, or none.
type Intercept struct {
	// None is set for a model without an intercept.
	None bool
	// Value is the true intercept when None is false.
	Value float64
}

func (v *Intercept) decodeNode(d *decoder, n *yaml.Node, path string) {
	if n.Kind == yaml.ScalarNode && n.Style == 0 {
		if n.Value == "none" {
			*v = Intercept{None: true}
			return
		}
		f, err := strconv.ParseFloat(strings.ReplaceAll(n.Value, "_", ""), 64)
		if err == nil && !math.IsNaN(f) && !math.IsInf(f, 0) {
			*v = Intercept{Value: f}
			return
		}
	}
	d.fail(n, path, "want a finite number or none (a model without intercept), got %s", kindName(n))
}

// MarshalJSON encodes the intercept as a number or "none".
func (v Intercept) MarshalJSON() ([]byte, error) {
	if v.None {
		return []byte(`"none"`), nil
	}
	return json.Marshal(v.Value)
}

// Numbers is one number or a list of numbers; one number decodes as a list
// of length one.
type Numbers []float64

func (v *Numbers) decodeNode(d *decoder, n *yaml.Node, path string) {
	if n.Kind == yaml.SequenceNode {
		out := make(Numbers, 0, len(n.Content))
		for i, c := range n.Content {
			if f, ok := d.float(c, fmt.Sprintf("%s[%d]", path, i)); ok {
				out = append(out, f)
			}
		}
		*v = out
		return
	}
	if f, ok := d.float(n, path); ok {
		*v = Numbers{f}
	}
}

// Correlation is the correlation of the predictor columns: one number for
// every pair, or a full matrix.
type Correlation struct {
	// Common is the correlation of every pair, used when Matrix is nil.
	Common float64
	// Matrix is the full correlation matrix, row by row.
	Matrix [][]float64
	// Given reports that a correlation was specified.
	Given bool
}

func (v *Correlation) decodeNode(d *decoder, n *yaml.Node, path string) {
	*v = Correlation{Given: true}
	if n.Kind != yaml.SequenceNode {
		if f, ok := d.float(n, path); ok {
			v.Common = f
		}
		return
	}
	for i, r := range n.Content {
		rp := fmt.Sprintf("%s[%d]", path, i)
		if r.Kind != yaml.SequenceNode {
			d.fail(r, rp, "want a row of the correlation matrix (a list of numbers), got %s", kindName(r))
			continue
		}
		row := make([]float64, len(r.Content))
		for j, c := range r.Content {
			row[j], _ = d.float(c, fmt.Sprintf("%s[%d]", rp, j))
		}
		v.Matrix = append(v.Matrix, row)
	}
}

// IsZero reports that no correlation was given, for omitempty.
func (v Correlation) IsZero() bool { return !v.Given }

// MarshalJSON encodes the correlation as a number, a matrix or null.
func (v Correlation) MarshalJSON() ([]byte, error) {
	switch {
	case !v.Given:
		return []byte("null"), nil
	case v.Matrix != nil:
		return json.Marshal(v.Matrix)
	}
	return json.Marshal(v.Common)
}

// PsiSpec names the psi of an M-estimator: a built-in family by name, or a
// psi of the user's own as a mapping:
//
//	psi:
//	  expr: r / (1 + abs(r)/c)     # psi in the standardised residual r
//	  rho: ...                     # optional; default: the integral of psi
//	  deriv: ...                   # optional; default: numerical
//	  constants: {c: 1.4}          # named constants, in order
//	  kinks: [..]                  # optional break points for quadrature
type PsiSpec struct {
	// Family is the built-in family's name, or "" for a custom psi.
	Family string
	// Custom is the user's psi when Family is "".
	Custom *CustomPsi
}

// CustomPsi is the mapping form of a psi of the user's own.
type CustomPsi struct {
	// Expr is psi as an expression in the standardised residual r;
	// required.
	Expr string `yaml:"expr" json:"expr"`
	// Rho is the rho expression. Default: the integral of psi from 0 to
	// |r|, by quadrature.
	Rho string `yaml:"rho" json:"rho,omitempty"`
	// Deriv is the expression of psi'. Default: a numerical derivative.
	Deriv string `yaml:"deriv" json:"deriv,omitempty"`
	// Constants are the named constants the expressions use, in order.
	Constants NamedNumbers `yaml:"constants" json:"constants,omitempty"`
	// Kinks lists points ≥ 0 where psi or psi' jumps, to guide
	// quadrature (optional).
	Kinks []float64 `yaml:"kinks" json:"kinks,omitempty"`
}

// NamedNumbers is an ordered mapping from names to numbers.
type NamedNumbers []NamedNumber

// NamedNumber is one entry of a NamedNumbers.
type NamedNumber struct {
	Name  string  // the key, as written in the file
	Value float64 // the number it maps to
}

func (v *NamedNumbers) decodeNode(d *decoder, n *yaml.Node, path string) {
	if n.Kind != yaml.MappingNode {
		d.fail(n, path, "want a mapping of constant names to numbers, for example {c: 1.4}, got %s", kindName(n))
		return
	}
	*v = nil
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, val := n.Content[i], n.Content[i+1]
		kp := join(path, k.Value)
		d.at(kp, val)
		if f, ok := d.float(val, kp); ok {
			*v = append(*v, NamedNumber{Name: k.Value, Value: f})
		}
	}
}

// MarshalJSON encodes the constants as an object in their order.
func (v NamedNumbers) MarshalJSON() ([]byte, error) {
	var b strings.Builder
	b.WriteByte('{')
	for i, x := range v {
		if i > 0 {
			b.WriteByte(',')
		}
		k, _ := json.Marshal(x.Name)
		val, _ := json.Marshal(x.Value)
		b.Write(k)
		b.WriteByte(':')
		b.Write(val)
	}
	b.WriteByte('}')
	return []byte(b.String()), nil
}

func (v *PsiSpec) decodeNode(d *decoder, n *yaml.Node, path string) {
	if n.Kind == yaml.MappingNode {
		c := new(CustomPsi)
		d.decodeStruct(n, reflect.ValueOf(c).Elem(), path)
		*v = PsiSpec{Custom: c}
		return
	}
	if s, ok := d.scalarText(n, path); ok {
		v.Family = s
	}
}

// IsZero reports that no psi was given.
func (v PsiSpec) IsZero() bool { return v.Family == "" && v.Custom == nil }

// Name is the family name, or "custom".
func (v PsiSpec) Name() string {
	if v.Custom != nil {
		return "custom"
	}
	return v.Family
}

// MarshalJSON encodes the psi as its family name or its mapping.
func (v PsiSpec) MarshalJSON() ([]byte, error) {
	if v.Custom != nil {
		return json.Marshal(v.Custom)
	}
	return json.Marshal(v.Family)
}

// Spec converts the mapping to the estimators package's form.
func (c *CustomPsi) Spec() psi.CustomSpec {
	s := psi.CustomSpec{Psi: c.Expr, Rho: c.Rho, Deriv: c.Deriv, Kinks: c.Kinks}
	for _, k := range c.Constants {
		s.Constants = append(s.Constants, psi.Constant{Name: k.Name, Value: k.Value})
	}
	return s
}

// ScaleSpec is the scale rule: mad, fixed:S, or start (held at the scale
// of the start estimate, as in an MM-estimator).
type ScaleSpec struct {
	// Start is set to hold the scale at the start estimate's.
	Start bool
	// Fixed is set for a known scale.
	Fixed bool
	// Value is the known scale when Fixed.
	Value float64
}

// ParseScale parses "mad" or "fixed:S" (S a positive number), the form shared
// by scenario files and the command line.
func ParseScale(s string) (ScaleSpec, error) {
	switch s {
	case "mad":
		return ScaleSpec{}, nil
	case "start":
		return ScaleSpec{Start: true}, nil
	}
	if rest, ok := strings.CutPrefix(s, "fixed:"); ok {
		f, err := strconv.ParseFloat(strings.TrimSpace(rest), 64)
		if err == nil && f > 0 && !math.IsInf(f, 0) {
			return ScaleSpec{Fixed: true, Value: f}, nil
		}
	}
	return ScaleSpec{}, fmt.Errorf("want mad, start, or fixed:S with S a positive number (for example fixed:0.5), got %q", s)
}

func (v *ScaleSpec) decodeNode(d *decoder, n *yaml.Node, path string) {
	if n.Kind == yaml.MappingNode {
		d.fail(n, path, "want mad or fixed:S written without a space after the colon (for example fixed:0.5), got a mapping")
		return
	}
	s, ok := d.scalarText(n, path)
	if !ok {
		return
	}
	sc, err := ParseScale(s)
	if err != nil {
		d.fail(n, path, "%v", err)
		return
	}
	*v = sc
}

// String returns "mad", "start" or "fixed:S".
func (v ScaleSpec) String() string {
	if v.Start {
		return "start"
	}
	if v.Fixed {
		return "fixed:" + strconv.FormatFloat(v.Value, 'g', -1, 64)
	}
	return "mad"
}

// MarshalJSON encodes the scale rule as in the file.
func (v ScaleSpec) MarshalJSON() ([]byte, error) { return json.Marshal(v.String()) }

// StartSpec is the start of an iterative fit: the name of a method whose
// estimate starts it (ls, s-estimate, mm-estimate, lts, lad), or given
// coefficients.
type StartSpec struct {
	// From names the starting method; "" means ls.
	From string
	// Coefficients is the given start, intercept first; nil unless given.
	Coefficients []float64
}

// startMethods are the methods that can start an iterative fit.
func startMethods() []string {
	var out []string
	for _, m := range estimators.Methods() {
		if m.Direct() {
			out = append(out, m.String())
		}
	}
	return out
}

func (v *StartSpec) decodeNode(d *decoder, n *yaml.Node, path string) {
	if n.Kind == yaml.SequenceNode {
		var nums Numbers
		nums.decodeNode(d, n, path)
		*v = StartSpec{Coefficients: nums}
		if v.Coefficients == nil {
			v.Coefficients = []float64{}
		}
		return
	}
	s, ok := d.scalarText(n, path)
	if !ok {
		return
	}
	m, ok := estimators.ParseMethod(s)
	if !ok || !m.Direct() {
		d.fail(n, path, "want %s, or a list of starting coefficients (intercept first), got %q", strings.Join(startMethods(), ", "), s)
		return
	}
	*v = StartSpec{From: s}
	if s == "ls" {
		v.From = ""
	}
}

// IsZero reports the default start.
func (v StartSpec) IsZero() bool { return v.Coefficients == nil && v.From == "" }

// MarshalJSON encodes the start as a method name or a list.
func (v StartSpec) MarshalJSON() ([]byte, error) {
	if v.Coefficients != nil {
		return json.Marshal(v.Coefficients)
	}
	if v.From == "" {
		return []byte(`"ls"`), nil
	}
	return json.Marshal(v.From)
}

// Vary is the ordered list of sweeps of a scenario.
type Vary []Sweep

// Sweep is one swept field and the values it takes.
type Sweep struct {
	// Path is the field's dotted path, as written in the file.
	Path string `json:"path"`
	// Values are the values in file order, as YAML text.
	Values []string `json:"values"`
	// Target is what the sweep sets, resolved against the scenario by
	// the loader.
	Target SweepTarget `json:"-"`

	line, col int
	nodes     []*yaml.Node
}

func (v *Vary) decodeNode(d *decoder, n *yaml.Node, path string) {
	if n.Kind != yaml.MappingNode {
		d.fail(n, path, "want a mapping from field paths to lists of values, got %s", kindName(n))
		return
	}
	seen := map[string]bool{}
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, val := n.Content[i], n.Content[i+1]
		if k.Kind != yaml.ScalarNode || k.Value == "" {
			d.fail(k, path, "want a field path such as model.n, got %s", kindName(k))
			continue
		}
		kp := join(path, k.Value)
		if seen[k.Value] {
			d.fail(k, kp, "swept twice; give each path once with all its values")
			continue
		}
		seen[k.Value] = true
		if val.Kind != yaml.SequenceNode || len(val.Content) == 0 {
			d.fail(val, kp, "want a non-empty list of values, got %s", kindName(val))
			continue
		}
		sw := Sweep{Path: k.Value, line: k.Line, col: k.Column, nodes: val.Content}
		for _, c := range val.Content {
			sw.Values = append(sw.Values, nodeText(c))
		}
		*v = append(*v, sw)
	}
}

// nodeText renders a node compactly on one line: scalars as written, lists
// and mappings in flow style.
func nodeText(n *yaml.Node) string {
	switch n.Kind {
	case yaml.ScalarNode:
		return n.Value
	case yaml.SequenceNode:
		parts := make([]string, len(n.Content))
		for i, c := range n.Content {
			parts[i] = nodeText(c)
		}
		return "[" + strings.Join(parts, ", ") + "]"
	case yaml.MappingNode:
		var parts []string
		for i := 0; i+1 < len(n.Content); i += 2 {
			parts = append(parts, nodeText(n.Content[i])+": "+nodeText(n.Content[i+1]))
		}
		return "{" + strings.Join(parts, ", ") + "}"
	}
	return "?"
}
