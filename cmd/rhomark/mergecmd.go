package main

import (
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"github.com/rhomark/rhomark/harness"
	"github.com/rhomark/rhomark/results"
)

func mergeCmd(e env, args []string) error {
	fs := newFlags(e, "merge", "PARTIAL|DIR ... --out DIR [options]",
		"Merges the partial results of the shards of one run (NAME.shard-I-of-M.partial\nfiles, or directories holding them) into the results a single run would have\ngiven: the same summaries, bit for bit. It refuses partials of different\nscenarios, seeds, replicate counts, rhomark versions or builds, and names missing or\nduplicated shards.")
	out := fs.String("out", "", "write NAME.json, NAME.csv and NAME.txt into this `directory` (required)")
	asJSON := fs.Bool("json", false, "print the results as JSON instead of the table")
	lim := addLimitFlags(fs.FlagSet)
	target := addTargetFlag(fs.FlagSet)
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) == 0 || *out == "" {
		return usagef("want partial files or directories, and --out")
	}
	var files []string
	for _, p := range pos {
		info, err := os.Stat(p)
		if err != nil {
			return err
		}
		if info.IsDir() {
			m, _ := filepath.Glob(filepath.Join(p, "*.partial"))
			files = append(files, m...)
			continue
		}
		files = append(files, p)
	}
	sort.Strings(files)
	if len(files) == 0 {
		return usagef("no .partial files in %s", strings.Join(pos, ", "))
	}
	var parts []*harness.Partial
	for _, f := range files {
		r, err := os.Open(f)
		if err != nil {
			return err
		}
		p, err := harness.ReadPartial(r)
		r.Close()
		if err != nil {
			return dataError{fmt.Errorf("%s: %w", f, err)}
		}
		p.Path = f
		parts = append(parts, p)
	}
	merged, st, err := harness.MergePartials(parts, lim.limits())
	if err != nil {
		return dataError{err}
	}
	if err := os.MkdirAll(*out, 0o755); err != nil {
		return fmt.Errorf("cannot create the output directory: %w", err)
	}
	lock, err := lockRun(*out, st.Base.Name, 0, 0)
	if err != nil {
		return err
	}
	defer lock.Unlock()
	res, err := harness.Summarise(st, merged, results.Tool{Name: "rhomark", Version: merged.Tool})
	if err != nil {
		return err
	}
	res.Recommendation = results.Recommend(res, *target)
	paths, err := results.Save(*out, res)
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stderr, "rhomark merge: %d partials → %s\n", len(parts), strings.Join(paths, ", "))
	if *asJSON {
		err = results.WriteJSON(e.stdout, res)
	} else {
		err = results.WriteTable(e.stdout, res, 100)
	}
	if err != nil {
		return err
	}
	if !res.Complete {
		var unfinished []string
		for _, p := range parts {
			if p.DoneUnits() < shareOf(p) {
				unfinished = append(unfinished, fmt.Sprintf("shard %d (%d of %d units)", p.Shard, p.DoneUnits(), shareOf(p)))
			}
		}
		return fmt.Errorf("the merged results are incomplete: unfinished %s; resume those shards with rhomark run --resume DIR --shard I/M", strings.Join(unfinished, ", "))
	}
	return nil
}

// shareOf returns the number of units of a shard's share of the run.
func shareOf(p *harness.Partial) int {
	if p.Shards == 0 {
		return p.Units
	}
	n := 0
	for u := p.Shard; u < p.Units; u += p.Shards {
		n++
	}
	return n
}
