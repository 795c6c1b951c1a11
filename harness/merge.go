package harness

import (
	"fmt"
	"math/big"
	"sort"
	"strings"
	"time"

	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

// StudyOf parses the scenario a partial carries and checks it is the one
// the work was done for.
func StudyOf(p *Partial, limits scenarios.Limits) (*scenarios.Study, error) {
	st, err := scenarios.Parse(p.File, []byte(p.Source), limits)
	if err != nil {
		return nil, fmt.Errorf("the scenario carried by the partial results: %w", err)
	}
	if st.Hash != p.Hash {
		return nil, fmt.Errorf("the scenario carried by the partial results does not match its hash (written by another version?)")
	}
	st.Dir = p.Dir
	return st, nil
}

// attach gives a partial its tallies against the scenario's plans,
// decoding those it was read with; a partial made by a run has them
// already.
func attach(p *Partial, plans []cellPlan) error {
	if p.cells != nil {
		if len(p.cells) != len(plans) {
			return fmt.Errorf("%d cells, the scenario has %d", len(p.cells), len(plans))
		}
		return nil
	}
	if len(p.raw) != len(plans) {
		return fmt.Errorf("%d cells, the scenario has %d", len(p.raw), len(plans))
	}
	cells := make([]*cellTally, len(plans))
	for i, pl := range plans {
		cells[i] = pl.newTally()
		labels := make([]string, len(pl.cell.Scenario.Estimators))
		for j, e := range pl.cell.Scenario.Estimators {
			labels[j] = e.Label
		}
		if err := cells[i].decode(p.raw[i], labels); err != nil {
			return fmt.Errorf("cell %d: %w", i, err)
		}
	}
	p.cells, p.raw = cells, nil
	return nil
}

// MergePartials merges the shards of one run. It refuses partials of
// different scenarios, seeds, replicate counts, shard counts or tool
// versions, and reports missing and duplicated shards by number. The merged
// partial covers the whole run (Shards 0).
func MergePartials(parts []*Partial, limits scenarios.Limits) (*Partial, *scenarios.Study, error) {
	if len(parts) == 0 {
		return nil, nil, fmt.Errorf("no partial results to merge")
	}
	first := parts[0]
	for i, p := range parts[1:] {
		var why []string
		if p.Hash != first.Hash {
			why = append(why, fmt.Sprintf("scenario %s (hash %.12s…) vs %s (hash %.12s…)", p.Scenario, p.Hash, first.Scenario, first.Hash))
		}
		if p.Seed != first.Seed {
			why = append(why, fmt.Sprintf("seed %d vs %d", p.Seed, first.Seed))
		}
		if p.Replicates != first.Replicates {
			why = append(why, fmt.Sprintf("replicates %d vs %d", p.Replicates, first.Replicates))
		}
		if p.Tool != first.Tool {
			why = append(why, fmt.Sprintf("rhomark %s vs %s", p.Tool, first.Tool))
		}
		if p.Build != first.Build {
			why = append(why, fmt.Sprintf("build %s vs %s (builds may compute different numbers; rerun the shards with one build)", orUnknown(p.Build), orUnknown(first.Build)))
		}
		if p.UnitCells != first.UnitCells {
			why = append(why, fmt.Sprintf("units of %d vs %d cells", p.UnitCells, first.UnitCells))
		}
		if p.AuditSolvers != first.AuditSolvers {
			why = append(why, fmt.Sprintf("--audit-solvers %v vs %v", p.AuditSolvers, first.AuditSolvers))
		}
		if p.Shards != first.Shards {
			why = append(why, fmt.Sprintf("split into %d vs %d shards", p.Shards, first.Shards))
		}
		if len(why) > 0 {
			return nil, nil, fmt.Errorf("%s does not belong with %s: %s", p.name(i+1), first.name(0), strings.Join(why, "; "))
		}
	}
	m := first.Shards
	if m == 0 {
		m = 1
	}
	count := map[int]int{}
	files := map[int][]string{}
	for i, p := range parts {
		count[p.Shard]++
		files[p.Shard] = append(files[p.Shard], p.name(i))
	}
	var missing, dup []string
	for s := 0; s < m; s++ {
		switch {
		case count[s] == 0:
			missing = append(missing, fmt.Sprint(s))
		case count[s] > 1:
			dup = append(dup, fmt.Sprintf("%d (%d times: %s)", s, count[s], strings.Join(files[s], ", ")))
		}
	}
	if len(missing) > 0 || len(dup) > 0 {
		var why []string
		if len(missing) > 0 {
			why = append(why, "missing shards "+strings.Join(missing, ", "))
		}
		if len(dup) > 0 {
			why = append(why, "duplicated shards "+strings.Join(dup, ", "))
		}
		return nil, nil, fmt.Errorf("the %d partials do not make up the %d shards: %s", len(parts), m, strings.Join(why, "; "))
	}
	st, err := StudyOf(first, limits)
	if err != nil {
		return nil, nil, fmt.Errorf("%s: %w", first.name(0), err)
	}
	plans, err := plan(st, first.Replicates)
	if err != nil {
		return nil, nil, err
	}
	if err := planAudits(plans, first.AuditSolvers); err != nil {
		return nil, nil, err
	}
	sort.SliceStable(parts, func(i, j int) bool { return parts[i].Shard < parts[j].Shard })
	merged := *first
	merged.Shard, merged.Shards = 0, 0
	merged.done, merged.raw = new(big.Int), nil
	merged.cells = make([]*cellTally, len(plans))
	for i, pl := range plans {
		merged.cells[i] = pl.newTally()
	}
	for _, p := range parts {
		if err := attach(p, plans); err != nil {
			return nil, nil, fmt.Errorf("%s (shard %d): %w", p.name(-1), p.Shard, err)
		}
		if overlap := new(big.Int).And(merged.done, p.done); overlap.Sign() != 0 {
			return nil, nil, fmt.Errorf("%s (shard %d) repeats work another shard already did", p.name(-1), p.Shard)
		}
		merged.done.Or(merged.done, p.done)
		for i := range plans {
			merged.cells[i].merge(p.cells[i])
		}
	}
	return &merged, st, nil
}

// name names a partial in messages: its file, or its position i (from 0)
// among the partials merged, or its shard number when i < 0.
func (p *Partial) name(i int) string {
	switch {
	case p.Path != "":
		return p.Path
	case i >= 0:
		return fmt.Sprintf("partial %d", i+1)
	}
	return fmt.Sprintf("the partial of shard %d", p.Shard)
}

// Summarise turns the work in a partial (merged shards, or a checkpoint)
// into results, exactly as the run that did all of it would have.
func Summarise(st *scenarios.Study, p *Partial, tool results.Tool) (*results.Results, error) {
	if st.Hash != p.Hash {
		return nil, fmt.Errorf("the partial results are of scenario %s (hash %.12s…), not of %s (hash %.12s…)", p.Scenario, p.Hash, st.Base.Name, st.Hash)
	}
	plans, err := plan(st, p.Replicates)
	if err != nil {
		return nil, err
	}
	if err := planAudits(plans, p.AuditSolvers); err != nil {
		return nil, err
	}
	if err := attach(p, plans); err != nil {
		return nil, err
	}
	res := summariseAll(st, plans, p.cells, p.Seed, p.Replicates, tool)
	res.Complete = p.Complete()
	now := time.Now()
	res.Provenance = provenance(0, now, plans, p.cells)
	return res, nil
}
