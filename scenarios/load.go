package scenarios

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strconv"
	"strings"

	"go.yaml.in/yaml/v3"
)

// Study is a loaded scenario file: the scenario as written (with defaults
// filled in) and the cells its sweeps expand to, each a complete, validated
// scenario.
type Study struct {
	// File is the name the scenario was loaded from.
	File string
	// Dir is the absolute folder relative names in the scenario (an
	// external estimator's program) are taken from: the folder of the file
	// LoadWith read. Parse leaves it empty, and users of a Study then take
	// File's folder from the working directory.
	Dir string
	// Source is the scenario file's text, kept so that checkpoints and
	// shards can carry the scenario with them.
	Source []byte
	// Base is the scenario with defaults filled in and no sweep applied.
	Base *Scenario
	// Cells are the combinations of swept values, in order: the first sweep
	// varies slowest. A scenario without sweeps has one cell.
	Cells []Cell
	// Normalised is the canonical JSON of Base, the form recorded in
	// results.
	Normalised json.RawMessage
	// Hash is the SHA-256 (hex) of the canonical JSON of Base without its
	// seed, replicates and about text: two runs with equal hashes simulate
	// the same model with the same estimators.
	Hash string
}

// Cell is one combination of swept values.
type Cell struct {
	// Index is the cell's position in Study.Cells.
	Index int
	// Settings are the swept values of this cell, one per sweep.
	Settings []Setting
	// Scenario is the complete scenario of this cell.
	Scenario *Scenario
}

// Setting is one swept field's value in a cell.
type Setting struct {
	Path  string `json:"path"`  // the field's dotted path, as written under vary
	Value string `json:"value"` // the field's value in this cell, as YAML text (see Sweep.Values)
	// Target is what the sweep sets (the Target of its Sweep).
	Target SweepTarget `json:"-"`
	// Number is the value when it is one number, NaN otherwise.
	Number float64 `json:"-"`
}

// Limits bounds what a scenario may ask for, so that a typing slip cannot
// start a run that would exhaust the machine. The zero value means the
// defaults; a user raises a limit explicitly.
type Limits struct {
	// MaxCells bounds the number of cells. Default 10,000.
	MaxCells int
	// MaxN bounds the observations per dataset. Default 1,000,000.
	MaxN int
	// MaxReplicates bounds the replicates per cell. Default 10,000,000.
	MaxReplicates int
	// MaxWork bounds cells × replicates × estimators × n × coefficients²,
	// a proxy for the run time: one fit's cost grows as n·p² (a QR
	// factorisation of an n×p design). Default 1e13.
	MaxWork float64
	// Replicates, when positive, is the replicate count the study will run
	// instead of the file's (a command-line override): the replicate and
	// work limits apply to it rather than to the file's value.
	Replicates int
}

// WithDefaults returns l with zero fields replaced by the defaults.
func (l Limits) WithDefaults() Limits { return l.withDefaults() }

func (l Limits) withDefaults() Limits {
	if l.MaxCells == 0 {
		l.MaxCells = 10_000
	}
	if l.MaxN == 0 {
		l.MaxN = 1_000_000
	}
	if l.MaxReplicates == 0 {
		l.MaxReplicates = 10_000_000
	}
	if l.MaxWork == 0 {
		l.MaxWork = 1e13
	}
	return l
}

// Load reads and validates the scenario file at path with default limits.
func Load(path string) (*Study, error) { return LoadWith(path, Limits{}) }

// LoadWith reads and validates the scenario file at path under limits.
func LoadWith(path string, limits Limits) (*Study, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	data, err := io.ReadAll(io.LimitReader(f, maxBytes+1))
	if err != nil {
		return nil, err
	}
	st, err := Parse(path, data, limits)
	if err != nil {
		return nil, err
	}
	if dir, err := filepath.Abs(filepath.Dir(path)); err == nil {
		st.Dir = dir
	}
	return st, nil
}

// Parse validates a scenario held in data; file names it in errors. Every
// problem found is reported, as an ErrorList of *Error with file, line,
// field and a message saying what would be valid.
func Parse(file string, data []byte, limits Limits) (*Study, error) {
	limits = limits.withDefaults()
	root, err := parseDocument(file, data)
	if err != nil {
		return nil, err
	}
	if root.Kind != yaml.MappingNode {
		return nil, &Error{File: file, Line: root.Line, Column: root.Column,
			Msg: fmt.Sprintf("a scenario is a mapping with keys such as model, noise and estimators; got %s", kindName(root))}
	}
	defaultName := strings.TrimSuffix(filepath.Base(file), filepath.Ext(file))

	// The base document: catches unknown keys and wrong types everywhere,
	// including fields that sweeps will override.
	e := &errs{file: file}
	d := &decoder{errs: e, pos: map[string]position{}}
	base := new(Scenario)
	d.decode(root, reflect.ValueOf(base).Elem(), "")
	if err := e.err(); err != nil {
		return nil, err
	}
	base.fillDefaults(d, defaultName)
	// Names with dots would make sweep paths ambiguous; say so before any
	// sweep path is read through them.
	base.refuseDottedNames(checker{d})
	if err := e.err(); err != nil {
		return nil, err
	}

	// Size of the sweep grid.
	cells := 1
	for _, sw := range base.Vary {
		cells *= len(sw.Values)
		if cells > limits.MaxCells {
			return nil, &Error{File: file, Line: sw.line, Column: sw.col, Field: "vary",
				Msg: fmt.Sprintf("the sweeps make more than %d cells; the limit is %d (raise it with --max-cells, or Limits.MaxCells from Go)", cells, limits.MaxCells)}
		}
	}
	// Each cell decodes its own copy of the document, so the cost of
	// loading grows as cells × the size of the file. Bound it before
	// expanding (a long list of levels swept over many cells).
	if nodes := countNodes(root); cells > 1 && float64(cells)*float64(nodes) > maxExpandedNodes {
		return nil, &Error{File: file, Field: "vary",
			Msg: fmt.Sprintf("%d cells of a document with %d YAML values would mean decoding %.3g values; the limit is %.0g: sweep fewer values, or move long lists (levels) out of swept scenarios", cells, nodes, float64(cells)*float64(nodes), float64(maxExpandedNodes))}
	}
	for _, sw := range base.Vary {
		checkSweepPath(e, root, sw)
	}
	if err := e.err(); err != nil {
		return nil, err
	}
	for i := range base.Vary {
		base.Vary[i].Target = resolveSweep(base, base.Vary[i].Path)
	}

	// Lines holding swept values: an error there is about one cell.
	sweptLines := map[int]bool{}
	for _, sw := range base.Vary {
		for _, n := range sw.nodes {
			markLines(n, sweptLines)
		}
	}
	st := &Study{File: file, Base: base, Source: append([]byte(nil), data...)}
	seen := map[string]bool{}
	for idx := 0; idx < cells; idx++ {
		settings, picks := cellPicks(base.Vary, idx)
		tree := root
		ce := &errs{file: file}
		if len(picks) > 0 {
			tree = deepCopy(root)
			for i, sw := range base.Vary {
				if err := applySweep(tree, sw.Path, picks[i]); err != nil {
					ce.add(sw.line, sw.col, "vary."+sw.Path, "does not apply in the cell where %s, because another sweep replaced what it names: %v", describe(settings), err)
				}
			}
		}
		cd := &decoder{errs: ce, pos: map[string]position{}}
		sc := new(Scenario)
		cd.decode(tree, reflect.ValueOf(sc).Elem(), "")
		if ce.err() == nil {
			// The reference is the study's, not worked out again from a
			// cell's (possibly swept) methods.
			if sc.Reference == "" {
				sc.Reference = base.Reference
			}
			sc.fillDefaults(cd, defaultName)
			sc.validate(cd, limits)
			if got, want := sc.estimatorLabels(), base.estimatorLabels(); ce.err() == nil && !slices.Equal(got, want) {
				line, col := 0, 0
				for _, sw := range base.Vary {
					if sw.Path == "estimators" || strings.HasPrefix(sw.Path, "estimators.") {
						line, col = sw.line, sw.col
						break
					}
				}
				ce.add(line, col, "vary", "a sweep changes the estimators to %s, but every cell must have the file's estimators, %s, in that order (sweep their settings instead)",
					strings.Join(got, ", "), strings.Join(want, ", "))
			}
		}
		// The cell's own copy of the sweeps is the file's (vary cannot be
		// swept), but it holds the nodes of the cell's copy of the
		// document: share the base's so that the copy can be freed. At
		// 10,000 cells the copies held some 300 MB.
		sc.Vary = base.Vary
		for _, x := range ce.list {
			key := fmt.Sprintf("%d:%d:%s:%s", x.Line, x.Column, x.Field, x.Msg)
			if seen[key] {
				continue
			}
			seen[key] = true
			if len(settings) > 0 && sweptLines[x.Line] {
				x.Msg += fmt.Sprintf(" (in the cell where %s)", describe(settings))
			}
			e.list = append(e.list, x)
		}
		if len(e.list) >= maxErrors {
			break
		}
		st.Cells = append(st.Cells, Cell{Index: idx, Settings: settings, Scenario: sc})
	}
	if err := e.err(); err != nil {
		return nil, err
	}
	if err := checkWork(file, st, limits); err != nil {
		return nil, err
	}
	st.Normalised, st.Hash = normalise(base)
	return st, nil
}

// maxExpandedNodes bounds cells × YAML values decoded by Parse: about ten
// seconds of loading.
const maxExpandedNodes = 1e7

// countNodes counts the nodes of a tree.
func countNodes(n *yaml.Node) int {
	c := 1
	for _, k := range n.Content {
		c += countNodes(k)
	}
	return c
}

// markLines records the lines of a node tree.
func markLines(n *yaml.Node, lines map[int]bool) {
	lines[n.Line] = true
	for _, c := range n.Content {
		markLines(c, lines)
	}
}

// describe formats a cell's settings as path=value pairs.
func describe(s []Setting) string {
	parts := make([]string, len(s))
	for i, x := range s {
		parts[i] = x.Path + "=" + x.Value
	}
	return strings.Join(parts, ", ")
}

// checkWork refuses studies whose total work exceeds the limit: the sum over
// cells of replicates × estimators × n × p², p the number of coefficients.
func checkWork(file string, st *Study, limits Limits) error {
	var work float64
	for _, c := range st.Cells {
		sc := c.Scenario
		reps := sc.Replicates
		if limits.Replicates > 0 {
			reps = limits.Replicates
		}
		p := float64(sc.Coefficients())
		work += float64(reps) * float64(sc.Model.N) * p * p * float64(len(sc.Estimators))
	}
	if work > limits.MaxWork {
		how := "reduce replicates, n or the sweeps"
		if limits.Replicates > 0 {
			how = fmt.Sprintf("reduce --replicates (%d), n or the sweeps", limits.Replicates)
		}
		return &Error{File: file, Field: "replicates",
			Msg: fmt.Sprintf("the study needs about %.3g units of work (cells × replicates × estimators × n × coefficients², a fit costing about n × coefficients²); the limit is %.3g (raise it with --max-work, or %s)", work, limits.MaxWork, how)}
	}
	return nil
}

// normalise returns the canonical JSON of s and the hash of its content
// without seed, replicates and about.
func normalise(s *Scenario) (json.RawMessage, string) {
	full, err := json.Marshal(s)
	if err != nil {
		panic(fmt.Sprintf("scenarios: normalised scenario does not encode: %v", err)) // a bug, not bad input
	}
	c := *s
	c.Seed, c.Replicates, c.About = 0, 0, ""
	content, _ := json.Marshal(&c)
	sum := sha256.Sum256(content)
	return full, hex.EncodeToString(sum[:])
}

// cellPicks returns the settings and value nodes of cell idx.
func cellPicks(vary Vary, idx int) ([]Setting, []*yaml.Node) {
	if len(vary) == 0 {
		return nil, nil
	}
	settings := make([]Setting, len(vary))
	picks := make([]*yaml.Node, len(vary))
	for i := len(vary) - 1; i >= 0; i-- {
		k := idx % len(vary[i].nodes)
		idx /= len(vary[i].nodes)
		settings[i] = Setting{Path: vary[i].Path, Value: vary[i].Values[k], Target: vary[i].Target, Number: sweepNumber(vary[i].nodes[k])}
		picks[i] = vary[i].nodes[k]
	}
	return settings, picks
}

// deepCopy copies a node tree.
func deepCopy(n *yaml.Node) *yaml.Node {
	c := *n
	if n.Content != nil {
		c.Content = make([]*yaml.Node, len(n.Content))
		for i, k := range n.Content {
			c.Content[i] = deepCopy(k)
		}
	}
	return &c
}

// fixedTopLevel describes the top-level keys that cannot be swept.
func fixedTopLevel(key string) (string, bool) {
	switch key {
	case "name":
		return "the scenario's name", true
	case "about":
		return "the description", true
	case "seed":
		return "the seed (run the study again with --seed instead)", true
	case "replicates":
		return "the replicate count", true
	case "vary":
		return "the sweeps", true
	case "reference":
		return "the reference estimator", true
	case "breakdown":
		return "the breakdown settings (they apply across cells)", true
	}
	return "", false
}

// checkSweepPath reports a sweep whose path does not name a field.
func checkSweepPath(e *errs, root *yaml.Node, sw Sweep) {
	segs := strings.Split(sw.Path, ".")
	fail := func(format string, args ...any) {
		e.add(sw.line, sw.col, "vary."+sw.Path, format, args...)
	}
	if what, ok := fixedTopLevel(segs[0]); ok {
		fail("%s cannot be swept", what)
		return
	}
	if last := segs[len(segs)-1]; last == "label" || last == "name" {
		fail("labels and names identify things and cannot be swept")
		return
	}
	if _, err := locate(root, segs); err != nil {
		fail("%v", err)
		return
	}
	if len(segs) >= 3 && segs[0] == "estimators" && (segs[2] == "tuning" || segs[2] == "psi") {
		// The estimator's entry is the parent of its psi or tuning.
		if est, err := locate(root, segs[:3]); err == nil {
			if m, err := child(est, "method"); err == nil && (m.Value == MethodExternal || m.Value == MethodGo) {
				fail("estimator %s is run outside rhomark (method %s): its declared psi only sets the theory beside it, and a swept value would not reach the program; list one estimator per value instead, each with its own command or label", segs[1], m.Value)
			}
		}
	}
}

// locate walks segs from root and returns the parent node of the last
// segment (a mapping or a list).
func locate(root *yaml.Node, segs []string) (*yaml.Node, error) {
	cur := root
	for i, s := range segs[:len(segs)-1] {
		next, err := child(cur, s)
		if err != nil {
			return nil, fmt.Errorf("%s: %v", strings.Join(segs[:i+1], "."), err)
		}
		cur = next
	}
	if cur.Kind == yaml.SequenceNode {
		if _, err := child(cur, segs[len(segs)-1]); err != nil {
			return nil, fmt.Errorf("%s: %v", strings.Join(segs, "."), err)
		}
	} else if cur.Kind != yaml.MappingNode {
		return nil, fmt.Errorf("%s is %s, which has no field %q", strings.Join(segs[:len(segs)-1], "."), kindName(cur), segs[len(segs)-1])
	}
	return cur, nil
}

// child returns the element of a mapping by key, or of a list by index or
// by the label (or name) of its element.
func child(n *yaml.Node, seg string) (*yaml.Node, error) {
	switch n.Kind {
	case yaml.MappingNode:
		for i := 0; i+1 < len(n.Content); i += 2 {
			if n.Content[i].Value == seg {
				return n.Content[i+1], nil
			}
		}
		return nil, fmt.Errorf("no field %q here (it must be written in the file before it can be swept; give it a starting value)", seg)
	case yaml.SequenceNode:
		if k, err := strconv.Atoi(seg); err == nil {
			if k < 0 || k >= len(n.Content) {
				return nil, fmt.Errorf("index %d out of range: the list has %d elements", k, len(n.Content))
			}
			return n.Content[k], nil
		}
		var labels []string
		for _, el := range n.Content {
			if el.Kind != yaml.MappingNode {
				continue
			}
			for i := 0; i+1 < len(el.Content); i += 2 {
				k := el.Content[i].Value
				if k == "label" || k == "name" {
					labels = append(labels, el.Content[i+1].Value)
					if el.Content[i+1].Value == seg {
						return el, nil
					}
				}
			}
		}
		return nil, fmt.Errorf("no element labelled %q (labels here: %s; or use an index from 0 to %d)", seg, strings.Join(labels, ", "), len(n.Content)-1)
	}
	return nil, fmt.Errorf("%s has no field %q", kindName(n), seg)
}

// applySweep replaces the value at path with a copy of val. The path was
// checked against the file by checkSweepPath, but another sweep of the same
// cell may have replaced what it runs through (a whole list swept, say), so
// a path that no longer resolves is an error for this cell.
func applySweep(root *yaml.Node, path string, val *yaml.Node) error {
	segs := strings.Split(path, ".")
	parent, err := locate(root, segs)
	if err != nil {
		return err
	}
	last := segs[len(segs)-1]
	v := deepCopy(val)
	if parent.Kind == yaml.SequenceNode {
		c, err := child(parent, last)
		if err != nil {
			return err
		}
		for i, el := range parent.Content {
			if el == c {
				parent.Content[i] = v
				return nil
			}
		}
		return nil
	}
	for i := 0; i+1 < len(parent.Content); i += 2 {
		if parent.Content[i].Value == last {
			parent.Content[i+1] = v
			return nil
		}
	}
	key := &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!str", Value: last, Line: val.Line, Column: val.Column}
	parent.Content = append(parent.Content, key, v)
	return nil
}
