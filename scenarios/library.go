package scenarios

import (
	"embed"
	"fmt"
	"io/fs"
	"path"
	"sort"
	"strings"
)

// library holds the shipped scenarios, embedded in the binary.
//
//go:embed library/*.yaml
var library embed.FS

// LibraryEntry describes one shipped scenario.
type LibraryEntry struct {
	// Name is the scenario's name, also its file name without ".yaml".
	Name string
	// About is the scenario's description.
	About string
	// Cells is the number of cells its sweeps make.
	Cells int
}

// Library lists the shipped scenarios, sorted by name.
func Library() ([]LibraryEntry, error) {
	files, err := fs.Glob(library, "library/*.yaml")
	if err != nil {
		return nil, err
	}
	var out []LibraryEntry
	for _, f := range files {
		name := strings.TrimSuffix(path.Base(f), ".yaml")
		st, err := LoadLibrary(name)
		if err != nil {
			return nil, err
		}
		out = append(out, LibraryEntry{Name: name, About: strings.TrimSpace(st.Base.About), Cells: len(st.Cells)})
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Name < out[j].Name })
	return out, nil
}

// LibraryFile returns the YAML text of the shipped scenario name.
func LibraryFile(name string) ([]byte, error) {
	if strings.ContainsAny(name, "/\\") || strings.HasPrefix(name, ".") {
		return nil, notShipped{name}
	}
	data, err := library.ReadFile("library/" + name + ".yaml")
	if err != nil {
		return nil, notShipped{name}
	}
	return data, nil
}

// notShipped is the error for a name that is not a shipped scenario; it
// matches fs.ErrNotExist.
type notShipped struct{ name string }

func (e notShipped) Error() string {
	return fmt.Sprintf("no shipped scenario %q (see `rhomark scenarios` for the list)", e.name)
}

func (e notShipped) Is(target error) bool { return target == fs.ErrNotExist }

// LoadLibrary loads the shipped scenario name.
func LoadLibrary(name string) (*Study, error) { return LoadLibraryWith(name, Limits{}) }

// LoadLibraryWith loads the shipped scenario name under limits.
func LoadLibraryWith(name string, limits Limits) (*Study, error) {
	data, err := LibraryFile(name)
	if err != nil {
		return nil, err
	}
	return Parse(name+".yaml", data, limits)
}
