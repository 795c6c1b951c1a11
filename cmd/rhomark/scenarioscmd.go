package main

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

func scenariosCmd(e env, args []string) error {
	fs := newFlags(e, "scenarios", "[NAME] [options]",
		"Without NAME, lists the shipped scenarios. With NAME, prints that scenario's\nYAML, a starting point for one of your own.")
	write := fs.String("write", "", "write the scenario to this `directory` as NAME.yaml instead of printing it")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	switch len(pos) {
	case 0:
		entries, err := scenarios.Library()
		if err != nil {
			return err
		}
		for _, en := range entries {
			about := en.About
			if i := strings.IndexAny(about, ".\n"); i > 0 {
				about = about[:i]
			}
			fmt.Fprintf(e.stdout, "%-18s %3d cell(s)  %s\n", en.Name, en.Cells, about)
		}
		fmt.Fprintln(e.stdout, "\nrhomark scenarios NAME prints one; rhomark run NAME runs it.")
		return nil
	case 1:
		data, err := scenarios.LibraryFile(pos[0])
		if err != nil {
			return usageError{err}
		}
		if *write == "" {
			_, err = e.stdout.Write(data)
			return err
		}
		if err := os.MkdirAll(*write, 0o755); err != nil {
			return err
		}
		path := filepath.Join(*write, pos[0]+".yaml")
		if err := results.WriteFileAtomic(path, data); err != nil {
			return err
		}
		fmt.Fprintf(e.stderr, "rhomark scenarios: wrote %s\n", path)
		return nil
	}
	return usagef("want at most one scenario name, got %d", len(pos))
}
