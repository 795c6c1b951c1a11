package scenarios

import (
	"encoding/json"
	"slices"

	"go.yaml.in/yaml/v3"
)

// named is a name of the scenario format resolved, when the file is
// decoded, against the closed list of names it may take (a kind table):
// i is the name's index in the list plus one, 0 when it is none of them or
// not given, and text is the name as written, kept for the messages that
// validation writes about a name it does not know. Code past the loader
// asks the typed value for its kind; it never compares names.
type named struct {
	i    int
	text string
}

// resolveName resolves text against names.
func resolveName(text string, names []string) named {
	return named{i: slices.Index(names, text) + 1, text: text}
}

// String returns the name as written.
func (v named) String() string { return v.text }

// MarshalJSON encodes the name as written, as a JSON string.
func (v named) MarshalJSON() ([]byte, error) { return json.Marshal(v.text) }

// known reports whether the name is one of the list's.
func (v named) known() bool { return v.i > 0 }

// given reports whether a name was written (an empty one counts as none).
func (v named) given() bool { return v.text != "" }

// decodeNamed decodes a scalar node into v, resolved against names.
func decodeNamed(v *named, d *decoder, n *yaml.Node, path string, names []string) {
	if s, ok := d.scalarText(n, path); ok {
		*v = resolveName(s, names)
	}
}

// NoiseDist is the noise distribution of noise.dist, resolved against the
// noise kinds when the scenario is decoded. The zero value is "not given";
// the loader fills in normal.
type NoiseDist struct{ named }

// ParseNoiseDist returns the noise distribution of a name, and whether the
// name is one.
func ParseNoiseDist(name string) (NoiseDist, bool) {
	v := NoiseDist{resolveName(name, noiseNames())}
	return v, v.known()
}

func (v *NoiseDist) decodeNode(d *decoder, n *yaml.Node, path string) {
	decodeNamed(&v.named, d, n, path, noiseNames())
}

// kind returns the noise kind, if the name is one.
func (v NoiseDist) kind() (noiseKind, bool) {
	if !v.known() {
		return noiseKind{}, false
	}
	return noiseKinds()[v.i-1], true
}

// ContamKind is the kind of a contamination (contamination[i].kind),
// resolved against the contamination kinds when the scenario is decoded.
// The zero value is "not given", which validation refuses.
type ContamKind struct{ named }

// ParseContamKind returns the contamination kind of a name, and whether the
// name is one.
func ParseContamKind(name string) (ContamKind, bool) {
	v := ContamKind{resolveName(name, contamNames())}
	return v, v.known()
}

func (v *ContamKind) decodeNode(d *decoder, n *yaml.Node, path string) {
	decodeNamed(&v.named, d, n, path, contamNames())
}

// kind returns the contamination kind, if the name is one.
func (v ContamKind) kind() (contamKind, bool) {
	if !v.known() {
		return contamKind{}, false
	}
	return contamKinds()[v.i-1], true
}

// ColumnDist is the distribution of a predictor column
// (model.columns[i].dist), resolved against the column kinds when the
// scenario is decoded. The zero value is "not given"; the loader fills in
// normal.
type ColumnDist struct{ named }

// ParseColumnDist returns the column distribution of a name, and whether
// the name is one.
func ParseColumnDist(name string) (ColumnDist, bool) {
	v := ColumnDist{resolveName(name, columnNames())}
	return v, v.known()
}

func (v *ColumnDist) decodeNode(d *decoder, n *yaml.Node, path string) {
	decodeNamed(&v.named, d, n, path, columnNames())
}

// kind returns the column kind, if the name is one.
func (v ColumnDist) kind() (columnKind, bool) {
	if !v.known() {
		return columnKind{}, false
	}
	return columnKinds()[v.i-1], true
}

// StopRequire is the stop.require setting of an estimator: any (the first
// stopping rule that holds stops the fit) or all (every given rule must
// hold at once). The zero value is "not given"; the loader fills in any
// for the methods that iterate.
type StopRequire struct{ named }

// requireNames are the values of stop.require, in the order of the
// messages.
func requireNames() []string { return []string{"any", "all"} }

// ParseStopRequire returns the setting of a name, and whether the name is
// one.
func ParseStopRequire(name string) (StopRequire, bool) {
	v := StopRequire{resolveName(name, requireNames())}
	return v, v.known()
}

func (v *StopRequire) decodeNode(d *decoder, n *yaml.Node, path string) {
	decodeNamed(&v.named, d, n, path, requireNames())
}

// All reports whether every given stopping rule must hold at once.
func (v StopRequire) All() bool { return v.i == 2 }

// orAny returns v, or any when v is not given.
func (v StopRequire) orAny() StopRequire {
	if v.given() {
		return v
	}
	any, _ := ParseStopRequire("any")
	return any
}
