package harness

import (
	"slices"
	"testing"

	"github.com/rhomark/rhomark/estimators"
)

// TestReplicatorReproducesRun: a Replicator outside a run (what replay and
// breakdown use) gives, replicate by replicate, exactly the fits the run
// kept, including those of the resampling estimators, which depend on
// their own streams; and a replicate drawn again, after others, is the
// same dataset.
func TestReplicatorReproducesRun(t *testing.T) {
	st := parse(t, pairedScenario)
	const reps = 6
	recs, _, _ := keptRecords(t, st, Options{Replicates: reps, Workers: 2})
	for _, c := range []int{0, 7} {
		sc := st.Cells[c].Scenario
		rp, err := NewReplicator(sc, sc.Seed)
		if err != nil {
			t.Fatal(err)
		}
		for _, r := range []int{3, 0, 5, 3} {
			rp.Draw(r)
			for _, spec := range sc.Estimators {
				est, err := spec.Build()
				if err != nil {
					t.Fatal(err)
				}
				var ws estimators.Workspace
				var res estimators.Result
				if err := rp.Fit(spec.Label, &est, &ws, &res); err != nil {
					t.Fatal(err)
				}
				want := recs[[2]int{c, r}][spec.Label]
				if res.Status.String() != want.Status || res.Iterations != want.Iterations || !slices.Equal(res.Coefficients, want.Coefficients) {
					t.Errorf("cell %d replicate %d %s: replicator %v (%v, %d iterations), run %v (%s, %d iterations)", c, r, spec.Label,
						res.Coefficients, res.Status, res.Iterations, want.Coefficients, want.Status, want.Iterations)
				}
			}
		}
	}
}

// TestReplicatorAllocatesNothing: after the first replicate, drawing a
// dataset and fitting to it allocate nothing.
func TestReplicatorAllocatesNothing(t *testing.T) {
	st := parse(t, speedScenario)
	sc := st.Cells[0].Scenario
	rp, err := NewReplicator(sc, 5)
	if err != nil {
		t.Fatal(err)
	}
	est, err := sc.Estimators[0].Build()
	if err != nil {
		t.Fatal(err)
	}
	var ws estimators.Workspace
	var res estimators.Result
	r := 0
	step := func() {
		rp.Draw(r)
		if err := rp.Fit("huber", &est, &ws, &res); err != nil {
			t.Fatal(err)
		}
		r++
	}
	step()
	if a := testing.AllocsPerRun(20, step); a != 0 {
		t.Errorf("%v allocations per replicate, want 0", a)
	}
}
