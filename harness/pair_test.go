package harness

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"io"
	"math/rand/v2"
	"reflect"
	"slices"
	"sync"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/psi"
	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

// pairedScenario sweeps a contamination fraction (data settings) and
// estimator settings only: Huber's constant and the S-estimator's number
// of subsets. Cells 0-2 share their datasets, and so do cells 3-5.
const pairedScenario = `
seed: 11
model:
  n: 40
  intercept: 1
  columns:
    - {name: x1, slope: 1}
    - {name: x2, slope: -1, dist: uniform}
noise: {dist: normal}
contamination:
  - {label: spikes, kind: vertical, fraction: 0, shift: 8}
estimators:
  - {label: ls, method: ls}
  - {label: huber, method: irls, psi: huber, tuning: 1.345}
  - {label: mm, method: mm-estimate, resampling: {subsets: 50}}
  - {label: s, method: s-estimate, resampling: {subsets: 50}}
vary:
  contamination.spikes.fraction: [0, 0.15]
  estimators.huber.tuning: [1, 1.345, 2]
  estimators.s.resampling.subsets: [50, 60]
`

// keptRecords runs st with kept replicates and returns them by cell,
// replicate and estimator label.
func keptRecords(t *testing.T, st *scenarios.Study, opt Options) (map[[2]int]map[string]results.ReplicateRecord, []byte, *results.Results) {
	t.Helper()
	var buf bytes.Buffer
	opt.KeepReplicates = &buf
	res, err := Run(context.Background(), st, opt)
	if err != nil {
		t.Fatal(err)
	}
	raw := slices.Clone(buf.Bytes())
	rr, err := results.NewReplicateReader(&buf)
	if err != nil {
		t.Fatal(err)
	}
	out := map[[2]int]map[string]results.ReplicateRecord{}
	for {
		rec, err := rr.Next()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		k := [2]int{rec.Cell, rec.Replicate}
		if out[k] == nil {
			out[k] = map[string]results.ReplicateRecord{}
		}
		out[k][rr.Header.Cells[rec.Cell].Estimators[rec.Estimator]] = rec
	}
	return out, raw, res
}

// TestCellsDifferingInEstimatorsShareData: cells that differ only in
// estimator settings fit the same datasets, so an estimator whose settings
// are not swept gives bit-identical estimates in each of them, replicate by
// replicate; cells that differ in the contamination fraction draw other
// datasets.
func TestCellsDifferingInEstimatorsShareData(t *testing.T) {
	st := parse(t, pairedScenario)
	const reps = 40
	recs, _, _ := keptRecords(t, st, Options{Replicates: reps, Workers: 2})
	same := func(a, b results.ReplicateRecord) bool {
		return a.Status == b.Status && a.Iterations == b.Iterations && slices.Equal(a.Coefficients, b.Coefficients)
	}
	for r := 0; r < reps; r++ {
		for _, group := range [][]int{{0, 1, 2, 3, 4, 5}, {6, 7, 8, 9, 10, 11}} {
			first := recs[[2]int{group[0], r}]
			for _, c := range group[1:] {
				got := recs[[2]int{c, r}]
				for _, label := range []string{"ls", "mm"} {
					if !same(got[label], first[label]) {
						t.Fatalf("replicate %d: %s in cell %d (%v) differs from cell %d (%v)", r, label, c, got[label].Coefficients, group[0], first[label].Coefficients)
					}
				}
			}
		}
		// Cells 0 and 1 differ only in the number of S subsets, cells 0
		// and 2 only in Huber's constant.
		if a, b := recs[[2]int{0, r}], recs[[2]int{2, r}]; !same(a["huber"], recs[[2]int{1, r}]["huber"]) || same(a["huber"], b["huber"]) && a["huber"].Iterations > 1 {
			t.Fatalf("replicate %d: Huber's fits do not follow its constant", r)
		}
		clean, dirty := recs[[2]int{0, r}]["ls"], recs[[2]int{6, r}]["ls"]
		if slices.Equal(clean.Coefficients, dirty.Coefficients) {
			t.Fatalf("replicate %d: least squares is the same with and without contamination", r)
		}
	}
	// The datasets themselves: equal within a data group, different
	// between groups, and independent of the cell number.
	plans, err := plan(st, reps)
	if err != nil {
		t.Fatal(err)
	}
	draw := func(c, r int) []float64 {
		p := &plans[c]
		n, k := p.gen.Dims()
		x, y := mat.NewDense(n, k, nil), make([]float64, n)
		p.gen.Draw(rand.NewPCG(ReplicateStream(11, p.dataKey, r)), x, y, p.gen.NewScratch())
		return append(slices.Clone(x.RawMatrix().Data), y...)
	}
	for r := range 5 {
		if !slices.Equal(draw(0, r), draw(5, r)) || !slices.Equal(draw(6, r), draw(11, r)) {
			t.Errorf("replicate %d: cells with the same data settings drew different datasets", r)
		}
		if slices.Equal(draw(0, r), draw(6, r)) {
			t.Errorf("replicate %d: cells with different contamination drew the same dataset", r)
		}
	}
	if plans[0].dataKey != plans[5].dataKey || plans[0].dataKey == plans[6].dataKey {
		t.Errorf("data keys %x %x %x", plans[0].dataKey, plans[5].dataKey, plans[6].dataKey)
	}
}

// TestDataKeyIgnoresWhatDoesNotDraw: the data key follows the resolved
// settings: a default written out, a contamination's label, or a
// contamination that replaces no row do not change it; a slope, a noise
// scale or a row count does.
func TestDataKeyIgnoresWhatDoesNotDraw(t *testing.T) {
	const est = "estimators: [{label: ls, method: ls}]\n"
	key := func(src string) uint64 {
		st := parse(t, src+est)
		g, err := scenarios.NewGenerator(st.Cells[0].Scenario)
		if err != nil {
			t.Fatal(err)
		}
		return DataKey(g)
	}
	ref := key("model: {n: 20, intercept: 1, columns: [{name: x, slope: 1}]}\nnoise: {dist: normal}\n")
	cases := []struct {
		name, src string
		same      bool
	}{
		{"defaults written out", "model: {n: 20, intercept: 1, columns: [{name: x, slope: 1, dist: normal, mean: 0, sd: 1}]}\nnoise: {dist: normal, scale: 1}\n", true},
		{"another column name", "model: {n: 20, intercept: 1, columns: [{name: volume, slope: 1}]}\nnoise: {dist: normal}\n", true},
		{"a contamination of no rows", "model: {n: 20, intercept: 1, columns: [{name: x, slope: 1}]}\nnoise: {dist: normal}\ncontamination: [{label: a, kind: vertical, fraction: 0.01, shift: 5}]\n", true},
		{"another slope", "model: {n: 20, intercept: 1, columns: [{name: x, slope: 1.5}]}\nnoise: {dist: normal}\n", false},
		{"another noise scale", "model: {n: 20, intercept: 1, columns: [{name: x, slope: 1}]}\nnoise: {dist: normal, scale: 2}\n", false},
		{"another n", "model: {n: 21, intercept: 1, columns: [{name: x, slope: 1}]}\nnoise: {dist: normal}\n", false},
		{"one contaminated row", "model: {n: 20, intercept: 1, columns: [{name: x, slope: 1}]}\nnoise: {dist: normal}\ncontamination: [{label: a, kind: vertical, fraction: 0.05, shift: 5}]\n", false},
	}
	for _, c := range cases {
		if got := key(c.src); (got == ref) != c.same {
			t.Errorf("%s: key %x, reference %x; want equal = %v", c.name, got, ref, c.same)
		}
	}
}

// TestSharedFitsMatchPerCellFits: fitting an unchanged estimator once per
// dataset and sharing it gives the same results, kept replicates and all,
// as fitting it in every cell, for 1, 2 and 5 workers; and the groups of
// the scenario need only the distinct fits.
func TestSharedFitsMatchPerCellFits(t *testing.T) {
	st := parse(t, pairedScenario)
	const reps = 70 // three blocks, the last one short
	plans, err := plan(st, reps)
	if err != nil {
		t.Fatal(err)
	}
	groups := groupCells(plans, unitCells)
	if len(groups) != 2 {
		t.Fatalf("%d groups, want 2 (one per contamination fraction)", len(groups))
	}
	for _, g := range groups {
		// ls and mm once, huber once per constant, s once per subset count.
		if len(g.cells) != 6 || len(g.fits) != 1+3+1+2 {
			t.Errorf("group of cells %v has %d fits, want 7", g.cells, len(g.fits))
		}
	}
	_, want, wantRes := keptRecords(t, st, Options{Replicates: reps, Workers: 1, unitCells: 1})
	wantCells, _ := json.Marshal(wantRes.Cells)
	for _, w := range []int{1, 2, 5} {
		_, got, res := keptRecords(t, st, Options{Replicates: reps, Workers: w})
		cells, _ := json.Marshal(res.Cells)
		if !bytes.Equal(cells, wantCells) {
			t.Errorf("%d workers: results differ from fitting in every cell", w)
		}
		if !bytes.Equal(got, want) {
			t.Errorf("%d workers: kept replicates differ from fitting in every cell", w)
		}
	}
}

// TestPairedShardsAndResume: with shared fits, shards merge and an
// interrupted run resumes to the results of one uninterrupted run.
func TestPairedShardsAndResume(t *testing.T) {
	st := parse(t, pairedScenario)
	const reps = 100
	single, err := Run(context.Background(), st, Options{Replicates: reps, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	want := csvOf(t, single)
	for _, m := range []int{2, 5} {
		var parts []*Partial
		for s := range m {
			_, p, err := RunPartial(context.Background(), st, Options{Replicates: reps, Shard: s, Shards: m, Workers: 1 + s%2})
			if err != nil {
				t.Fatal(err)
			}
			parts = append(parts, roundTripPartial(t, p))
		}
		merged, mst, err := MergePartials(parts, scenarios.Limits{})
		if err != nil {
			t.Fatal(err)
		}
		res, err := Summarise(mst, merged, single.Tool)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(csvOf(t, res), want) {
			t.Errorf("%d shards: merged results differ from one run", m)
		}
	}
	ctx, cancel := context.WithCancel(context.Background())
	var last *Partial
	_, _, err = RunPartial(ctx, st, Options{Replicates: reps, Workers: 2,
		Progress: func(r ProgressReport) {
			if r.Done > r.Total/3 {
				cancel()
			}
		},
		Checkpoint: func(p *Partial) error { last = p; return nil }})
	if err == nil || last == nil || last.Complete() {
		t.Fatalf("the run was not interrupted: %v", err)
	}
	res, err := Run(context.Background(), st, Options{Replicates: reps, Resume: last})
	if err != nil {
		t.Fatal(err)
	}
	if !res.Complete || !bytes.Equal(csvOf(t, res), want) {
		t.Error("the resumed run differs from the uninterrupted one")
	}
}

// TestFitIdentityCoversEstimator: the identity under which fits are
// shared must name every field of an Estimator; a new field must be added
// to it (or shown not to change a fit).
func TestFitIdentityCoversEstimator(t *testing.T) {
	// Method, Psi, Scale, Start, StartFrom, Resampling, Settings, Trace.
	if n := reflect.TypeFor[estimators.Estimator]().NumField(); n != 8 {
		t.Errorf("estimators.Estimator has %d fields; fitIdentity covers 8", n)
	}
	a := estimators.Estimator{Method: estimators.MethodIRLS, Psi: psi.Huber{K: 1.345}}
	b := a
	if identityOf("h", &a, 0, 1) != identityOf("h", &b, 1, 1) {
		t.Error("equal estimators of two cells have different identities")
	}
	b.Psi = psi.Huber{K: 1.5}
	if identityOf("h", &a, 0, 1) == identityOf("h", &b, 1, 1) {
		t.Error("estimators with different constants share an identity")
	}
	if identityOf("h", &a, 0, 1) == identityOf("g", &a, 1, 1) {
		t.Error("estimators with different labels share an identity")
	}
	b = a
	b.Start = []float64{0, 1}
	if identityOf("h", &a, 0, 1) == identityOf("h", &b, 1, 1) {
		t.Error("a given start is not part of the identity")
	}
	b = a
	b.Trace = func(estimators.Iteration) {}
	if identityOf("h", &b, 0, 1) == identityOf("h", &b, 1, 1) {
		t.Error("traced estimators are shared")
	}
}

// TestResumeKeepsGroupSize: a checkpoint records how many cells its units
// cover, and a run resumed from it keeps that size (the unit numbers mean
// nothing under another), however the resuming run would group cells.
func TestResumeKeepsGroupSize(t *testing.T) {
	st := parse(t, pairedScenario)
	const reps = 100
	full, err := Run(context.Background(), st, Options{Replicates: reps})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	var last *Partial
	_, _, err = RunPartial(ctx, st, Options{Replicates: reps, Workers: 2, unitCells: 4,
		Progress: func(r ProgressReport) {
			if r.Done > r.Total/2 {
				cancel()
			}
		},
		Checkpoint: func(p *Partial) error { last = p; return nil }})
	if err == nil || last == nil || last.Complete() {
		t.Fatalf("the run was not interrupted: %v", err)
	}
	var buf bytes.Buffer
	if err := WritePartial(&buf, last); err != nil {
		t.Fatal(err)
	}
	back, err := ReadPartial(&buf)
	if err != nil {
		t.Fatal(err)
	}
	// Groups of 4 cut each 6-cell group in two: 4 groups of 4 blocks.
	if back.UnitCells != 4 || back.Units != 16 {
		t.Fatalf("checkpoint of %d units of %d cells, want 16 of 4", back.Units, back.UnitCells)
	}
	res, err := Run(context.Background(), st, Options{Replicates: reps, Resume: back})
	if err != nil {
		t.Fatal(err)
	}
	if !res.Complete || !bytes.Equal(csvOf(t, res), csvOf(t, full)) {
		t.Error("the resumed run differs from the uninterrupted one")
	}
}

// TestKeepUnitCellsBounded: a run that keeps its replicates groups fewer
// cells as the replicates grow, so that the records held back for the
// file's cell order stay within keepBudget, down to one cell a group.
func TestKeepUnitCellsBounded(t *testing.T) {
	st := parse(t, pairedScenario)
	plans, err := plan(st, 1)
	if err != nil {
		t.Fatal(err)
	}
	// 4 estimators of 3 coefficients: at most 4 × (1 + 10 + 24) bytes a
	// replicate.
	perRep := 4 * (1 + 10 + 8*3)
	prev := unitCells + 1
	for _, reps := range []int{16, 1000, 100_000, 1_000_000, 10_000_000} {
		size := keepUnitCells(plans, reps)
		if size < 1 || size > unitCells || size > prev {
			t.Errorf("%d replicates: groups of %d cells", reps, size)
		}
		if held := (size - 1) * reps * perRep; held > keepBudget {
			t.Errorf("%d replicates: groups of %d cells hold back %d bytes, over the budget %d", reps, size, held, keepBudget)
		}
		prev = size
	}
	if keepUnitCells(plans, 16) != unitCells || keepUnitCells(plans, 10_000_000) != 1 {
		t.Errorf("sizes %d and %d at the extremes", keepUnitCells(plans, 16), keepUnitCells(plans, 10_000_000))
	}
}

// TestProgressReportsCells: every cell appears in some progress report,
// each report's cells are increasing, cells that share their datasets are
// reported together, and the last report counts every replicate fit.
func TestProgressReportsCells(t *testing.T) {
	st, err := scenarios.LoadLibrary("tuning-huber")
	if err != nil {
		t.Fatal(err)
	}
	const reps = 40
	seen := map[int]bool{}
	var last ProgressReport
	var mu sync.Mutex
	_, err = Run(context.Background(), st, Options{Replicates: reps, Workers: 2, Progress: func(r ProgressReport) {
		mu.Lock()
		defer mu.Unlock()
		if !slices.IsSorted(r.Cells) || len(r.Cells) == 0 {
			t.Errorf("cells %v", r.Cells)
		}
		for _, c := range r.Cells {
			seen[c] = true
		}
		if len(r.Cells) < 2 {
			t.Errorf("tuning-huber's cells of one fraction share datasets, but a unit covered only %v", r.Cells)
		}
		if r.Done > last.Done {
			last = r
		}
	}})
	if err != nil {
		t.Fatal(err)
	}
	if len(seen) != len(st.Cells) {
		t.Errorf("reports named %d of %d cells", len(seen), len(st.Cells))
	}
	if want := int64(reps * len(st.Cells)); last.Done != want || last.Total != want {
		t.Errorf("last report %d of %d, want %d", last.Done, last.Total, want)
	}
}
