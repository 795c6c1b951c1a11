package results

import (
	"errors"
	"fmt"
	"io"
	"math"
	"sort"
)

// pairedSetup is what a paired comparison needs besides the two files.
type pairedSetup struct {
	tol       float64           // largest change of an estimate not counted as a move
	list      int               // how many status changes and moves to keep
	converged map[string]bool   // which statuses are usable solutions
	se        map[seKey]float64 // the baseline's empirical SEs
}

// replicateGroup is every record of one replicate of one cell.
type replicateGroup struct {
	cell, replicate int
	records         []ReplicateRecord
}

// groupReader reads a replicate file replicate by replicate.
type groupReader struct {
	r    *ReplicateReader
	side string // "baseline" or "candidate", for errors
}

// next returns the next replicate's records, or io.EOF after the last.
func (g *groupReader) next() (replicateGroup, error) {
	first, err := g.r.Next()
	if errors.Is(err, io.EOF) {
		return replicateGroup{}, io.EOF
	}
	if err != nil {
		return replicateGroup{}, fmt.Errorf("%s replicates: %w", g.side, err)
	}
	grp := replicateGroup{cell: first.Cell, replicate: first.Replicate, records: []ReplicateRecord{first}}
	for len(grp.records) < len(g.r.Header.Cells[first.Cell].Estimators) {
		rec, err := g.r.Next()
		if errors.Is(err, io.EOF) {
			err = damagedf("the file ends inside replicate %d of cell %d", first.Replicate, first.Cell)
		}
		if err != nil {
			return replicateGroup{}, fmt.Errorf("%s replicates: %w", g.side, err)
		}
		grp.records = append(grp.records, rec)
	}
	return grp, nil
}

// label returns the estimator label of a record.
func (g *groupReader) label(rec ReplicateRecord) string {
	return g.r.Header.Cells[rec.Cell].Estimators[rec.Estimator]
}

// coefficient returns the name of a record's j-th coefficient.
func (g *groupReader) coefficient(rec ReplicateRecord, j int) string {
	if names := g.r.Header.Cells[rec.Cell].Coefficients; j < len(names) {
		return names[j]
	}
	return fmt.Sprintf("#%d", j)
}

// openReplicates opens one side's replicate file.
func openReplicates(src ReplicateSource, side string) (*groupReader, io.Closer, error) {
	rc, err := src()
	if err != nil {
		return nil, nil, fmt.Errorf("%s replicates: %w", side, err)
	}
	r, err := NewReplicateReader(rc)
	if err != nil {
		rc.Close()
		return nil, nil, fmt.Errorf("%s replicates: %w", side, err)
	}
	return &groupReader{r: r, side: side}, rc, nil
}

// comparePaired merges two replicate files on (cell, replicate), and
// within a replicate pairs the fits by estimator label.
func comparePaired(baseSrc, candSrc ReplicateSource, setup pairedSetup) (*PairedReport, error) {
	a, ac, err := openReplicates(baseSrc, "baseline")
	if err != nil {
		return nil, err
	}
	defer ac.Close()
	b, bc, err := openReplicates(candSrc, "candidate")
	if err != nil {
		return nil, err
	}
	defer bc.Close()
	if a.r.Header.Seed != b.r.Header.Seed {
		return nil, fmt.Errorf("the replicate files are of different seeds (%d vs %d)", a.r.Header.Seed, b.r.Header.Seed)
	}
	st := pairedState{setup: setup, p: &PairedReport{Tolerance: setup.tol, Transitions: map[string]int{}}, per: map[pairedKey]*PairedEstimator{}}
	before := func(x, y replicateGroup) bool {
		if x.cell != y.cell {
			return x.cell < y.cell
		}
		return x.replicate < y.replicate
	}
	ga, errA := a.next()
	gb, errB := b.next()
	for {
		// A damaged file is an error whenever it shows, including after
		// the other file has ended.
		if errA != nil && !errors.Is(errA, io.EOF) {
			return nil, errA
		}
		if errB != nil && !errors.Is(errB, io.EOF) {
			return nil, errB
		}
		switch {
		case errA != nil && errB != nil:
			return st.finish(), nil
		case errA != nil || (errB == nil && before(gb, ga)):
			st.p.Missing += len(gb.records)
			gb, errB = b.next()
		case errB != nil || before(ga, gb):
			st.p.Missing += len(ga.records)
			ga, errA = a.next()
		default:
			st.pairGroup(a, b, ga, gb)
			ga, errA = a.next()
			gb, errB = b.next()
		}
	}
}

// pairedKey identifies a cell × estimator.
type pairedKey struct {
	cell  int
	label string
}

// pairedState accumulates a paired comparison.
type pairedState struct {
	setup pairedSetup
	p     *PairedReport
	per   map[pairedKey]*PairedEstimator
	order []pairedKey
	// kept status changes by kind, trimmed to the setup.list largest
	changes [3][]scoredChange
	moves   []scoredMove
}

// scoredMove is a move with its rank: moves with an SE rank by their size
// in SE units, above those without one, which rank by their absolute size.
type scoredMove struct {
	Move
	hasSE bool
	score float64
}

// larger reports whether m ranks above o.
func (m scoredMove) larger(o scoredMove) bool {
	if m.hasSE != o.hasSE {
		return m.hasSE
	}
	return m.score > o.score
}

// pairGroup compares the fits of one replicate present in both files.
func (st *pairedState) pairGroup(a, b *groupReader, ga, gb replicateGroup) {
	cand := map[string]ReplicateRecord{}
	for _, r := range gb.records {
		cand[b.label(r)] = r
	}
	for _, ra := range ga.records {
		label := a.label(ra)
		rb, ok := cand[label]
		if !ok {
			st.p.Missing++
			continue
		}
		delete(cand, label)
		st.pairFit(a, label, ra, rb)
	}
	st.p.Missing += len(cand)
}

// pairFit compares one fit.
func (st *pairedState) pairFit(a *groupReader, label string, ra, rb ReplicateRecord) {
	p := st.p
	k := pairedKey{ra.Cell, label}
	pe, ok := st.per[k]
	if !ok {
		pe = &PairedEstimator{Cell: ra.Cell, Estimator: label}
		st.per[k] = pe
		st.order = append(st.order, k)
	}
	pe.Fits++
	p.Fits++
	var maxd float64
	best := scoredMove{Move: Move{Diff: 0, SEUnits: 0}}
	found := false
	for j := range min(len(ra.Coefficients), len(rb.Coefficients)) {
		x, y := ra.Coefficients[j], rb.Coefficients[j]
		d := math.Abs(y - x)
		if math.IsNaN(d) && !(math.IsNaN(x) && math.IsNaN(y)) {
			if ra.Status != rb.Status {
				// A fit that failed in one run only (its coefficients
				// NaN) is counted among the status changes, not as an
				// infinite move.
				continue
			}
			d = math.Inf(1) // a NaN with the same status: report it loudly
		}
		if math.IsNaN(d) || d == 0 {
			continue
		}
		maxd = math.Max(maxd, d)
		name := a.coefficient(ra, j)
		se, ok := st.setup.se[seKey{ra.Cell, label, name}]
		units := math.NaN()
		if ok && se > 0 && !math.IsInf(se, 0) {
			units = (y - x) / se
		}
		cand := scoredMove{Move: Move{Cell: ra.Cell, Replicate: ra.Replicate, Estimator: label, Status: rb.Status, Coefficient: name,
			Baseline: Float(x), Candidate: Float(y), Diff: Float(y - x), SEUnits: Float(units)}, hasSE: !math.IsNaN(units), score: d}
		if cand.hasSE {
			cand.score = math.Abs(units)
		}
		if !found || cand.larger(best) {
			best, found = cand, true
		}
	}
	pe.MaxAbsDiff = Float(math.Max(float64(pe.MaxAbsDiff), maxd))
	p.MaxAbsDiff = Float(math.Max(float64(p.MaxAbsDiff), maxd))
	if maxd > st.setup.tol {
		pe.Moved++
		p.Moved++
	}
	if ra.Iterations != rb.Iterations {
		pe.IterationChanged++
		p.IterationChanged++
	}
	pe.MeanIterDelta += float64(rb.Iterations - ra.Iterations)
	if !st.setup.converged[ra.Status] {
		pe.BaselineFailed++
	}
	if !st.setup.converged[rb.Status] {
		pe.CandidateFailed++
	}
	if ra.Status != rb.Status {
		pe.StatusChanged++
		p.StatusChanged++
		p.Transitions[ra.Status+" → "+rb.Status]++
		kind := OtherStatusChange
		switch ca, cb := st.setup.converged[ra.Status], st.setup.converged[rb.Status]; {
		case ca && !cb:
			kind = NewFailure
			pe.NewFailures++
			p.NewFailures++
		case !ca && cb:
			kind = Recovery
			pe.Recovered++
			p.Recovered++
		}
		if st.setup.list > 0 {
			st.changes[kind] = append(st.changes[kind], scoredChange{StatusChange{Cell: ra.Cell, Replicate: ra.Replicate, Estimator: label, Kind: kind,
				Baseline: ra.Status, Candidate: rb.Status, BaselineIterations: ra.Iterations, CandidateIterations: rb.Iterations,
				Coefficient: best.Coefficient, Diff: best.Diff, SEUnits: best.SEUnits}, best})
			if len(st.changes[kind]) >= 2*st.setup.list+64 {
				st.trimChanges(kind)
			}
		}
		return
	}
	if maxd > st.setup.tol && st.setup.list > 0 {
		st.moves = append(st.moves, best)
		if len(st.moves) >= 2*st.setup.list+64 {
			st.trimMoves()
		}
	}
}

// scoredChange is a status change ranked by the fit's largest move.
type scoredChange struct {
	StatusChange
	rank scoredMove
}

// trimChanges keeps the status changes of a kind with the largest moves,
// largest first; ties (fits that did not move) keep cell and replicate
// order.
func (st *pairedState) trimChanges(kind StatusChangeKind) {
	ch := st.changes[kind]
	sort.SliceStable(ch, func(i, j int) bool { return ch[i].rank.larger(ch[j].rank) })
	if len(ch) > st.setup.list {
		ch = ch[:st.setup.list]
	}
	st.changes[kind] = ch
}

// trimMoves keeps the largest moves, largest first.
func (st *pairedState) trimMoves() {
	sort.SliceStable(st.moves, func(i, j int) bool { return st.moves[i].larger(st.moves[j]) })
	if len(st.moves) > st.setup.list {
		st.moves = st.moves[:st.setup.list]
	}
}

// finish assembles the report.
func (st *pairedState) finish() *PairedReport {
	p := st.p
	for _, k := range st.order {
		pe := st.per[k]
		if pe.Fits > 0 {
			pe.MeanIterDelta /= float64(pe.Fits)
		}
		p.Estimators = append(p.Estimators, *pe)
	}
	for kind := range st.changes {
		st.trimChanges(StatusChangeKind(kind))
		for _, c := range st.changes[kind] {
			if len(p.StatusChanges) < st.setup.list {
				p.StatusChanges = append(p.StatusChanges, c.StatusChange)
			}
		}
	}
	st.trimMoves()
	for _, m := range st.moves {
		p.Moves = append(p.Moves, m.Move)
	}
	return p
}
