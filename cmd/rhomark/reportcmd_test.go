package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/rhomark/rhomark/scenarios"
)

// TestReportShowsScenarioFile: the report of a run shows the scenario
// file's own text (its comments included); `rhomark report` shows it too
// while the file named in the results still holds that scenario, and falls
// back to the normalised scenario, saying so, once the file is gone or
// holds another scenario.
func TestReportShowsScenarioFile(t *testing.T) {
	dir := t.TempDir()
	lib, err := scenarios.LibraryFile("flow-meter")
	if err != nil {
		t.Fatal(err)
	}
	const comment = "# bench note: kept verbatim in the report"
	file := filepath.Join(dir, "bench.yaml")
	if err := os.WriteFile(file, append([]byte(comment+"\n"), lib...), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	if code, _, errs := rhomark(t, "run", file, "--replicates", "4", "--out", out, "--report", "--quiet"); code != exitOK {
		t.Fatal(errs)
	}
	page := func(path string) string {
		t.Helper()
		b, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		return string(b)
	}
	const asWritten, normalised = "(YAML, as written)", "Normalised scenario (YAML)"
	if p := page(filepath.Join(out, "flow-meter.html")); !strings.Contains(p, comment) || !strings.Contains(p, asWritten) {
		t.Error("the run's report does not show the scenario file as written")
	}
	cases := []struct {
		name  string
		setup func() error
		want  string
	}{
		{"file unchanged", func() error { return nil }, asWritten},
		{"file holds another scenario", func() error {
			other, err := scenarios.LibraryFile("clean-normal")
			if err != nil {
				return err
			}
			return os.WriteFile(file, other, 0o644)
		}, normalised},
		{"file gone", func() error { return os.Remove(file) }, normalised},
	}
	for _, c := range cases {
		if err := c.setup(); err != nil {
			t.Fatal(err)
		}
		again := filepath.Join(dir, strings.ReplaceAll(c.name, " ", "-"))
		if code, _, errs := rhomark(t, "report", filepath.Join(out, "flow-meter.json"), "--out", again, "--no-figure-files"); code != exitOK {
			t.Fatalf("%s: %s", c.name, errs)
		}
		p := page(filepath.Join(again, "flow-meter.html"))
		if !strings.Contains(p, c.want) {
			t.Errorf("%s: the report does not say %q", c.name, c.want)
		}
		if c.want == normalised && strings.Contains(p, comment) {
			t.Errorf("%s: the report shows a file that no longer holds the run's scenario", c.name)
		}
	}
}
