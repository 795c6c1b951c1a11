package main

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"github.com/rhomark/rhomark/internal/atomicfile"
	htmlreport "github.com/rhomark/rhomark/report"
	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

func reportCmd(e env, args []string) error {
	fs := newFlags(e, "report", "RESULTS.json [options]",
		"Writes a self-contained HTML report of a run (figures inline; it opens without\nnetwork access), a Markdown summary for code reviews, and the figures as SVG and\nPNG files.")
	out := fs.String("out", "", "the `directory` to write into (default: the results file's)")
	noFigures := fs.Bool("no-figure-files", false, "do not write the figures as separate SVG and PNG files")
	target := addTargetFlag(fs.FlagSet)
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usagef("want one results file, got %d arguments", len(pos))
	}
	f, err := os.Open(pos[0])
	if err != nil {
		return err
	}
	res, err := results.ReadJSON(f)
	f.Close()
	if err != nil {
		return dataError{fmt.Errorf("%s: %w", pos[0], err)}
	}
	if flagGiven(fs.FlagSet, "target-efficiency") || res.Recommendation == nil {
		// Keep the run's own target unless told otherwise; files from
		// before tuning studies get one at the default.
		res.Recommendation = results.Recommend(res, *target)
	}
	dir := *out
	if dir == "" {
		dir = filepath.Dir(pos[0])
	}
	paths, err := writeReport(dir, res, !*noFigures, scenarioSource(res))
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stderr, "rhomark report: wrote %s\n", strings.Join(paths, ", "))
	return nil
}

// scenarioSource returns the text of the scenario file res was run from,
// when the file it names (or the shipped scenario of that name) still holds
// the same scenario, by the hash of its normalised form; nil otherwise.
func scenarioSource(res *results.Results) []byte {
	file := res.Scenario.File
	if file == "" || res.Scenario.Hash == "" {
		return nil
	}
	data, err := os.ReadFile(file)
	if err != nil && !strings.ContainsAny(file, `/\`) {
		data, err = scenarios.LibraryFile(strings.TrimSuffix(file, ".yaml"))
	}
	if err != nil {
		return nil
	}
	st, err := scenarios.Parse(file, data, scenarios.Limits{})
	if err != nil || st.Hash != res.Scenario.Hash {
		return nil
	}
	return data
}

// writeReport writes NAME.html, NAME.md and, if asked, the figure files
// into dir. source is the scenario file's text, or nil when it is not at
// hand (the report then shows the normalised scenario).
func writeReport(dir string, res *results.Results, figureFiles bool, source []byte) ([]string, error) {
	name, err := results.SafeName(res.Scenario.Name)
	if err != nil {
		return nil, err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, err
	}
	figs, omitted, err := htmlreport.Figures(res)
	if err != nil {
		return nil, fmt.Errorf("drawing the figures: %w", err)
	}
	var html, md bytes.Buffer
	if err := htmlreport.Write(&html, htmlreport.Input{Results: res, Figures: figs, Omitted: omitted, Source: source}); err != nil {
		return nil, err
	}
	if err := results.WriteMarkdownSummary(&md, res); err != nil {
		return nil, err
	}
	var paths []string
	for _, f := range []struct {
		ext  string
		data []byte
	}{{".html", html.Bytes()}, {".md", md.Bytes()}} {
		p := filepath.Join(dir, name+f.ext)
		if err := atomicfile.WriteFile(p, f.data); err != nil {
			return paths, err
		}
		paths = append(paths, p)
	}
	if figureFiles {
		fp, err := htmlreport.SaveFigures(dir, name, figs)
		if err != nil {
			return paths, err
		}
		paths = append(paths, fp...)
	}
	return paths, nil
}
