package harness

import (
	"strconv"
	"testing"

	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

// TestSweepTargetsAgree checks that the two readings of a sweep path
// agree: the loader's, resolved against the scenario (scenarios.Sweep's
// Target, which the harness uses), and results.TargetOf, which results and
// report use on files that keep only the path. It covers every shipped
// scenario and one that sweeps a field of every kind, by label and by
// index.
func TestSweepTargetsAgree(t *testing.T) {
	var studies []*scenarios.Study
	entries, err := scenarios.Library()
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		st, err := scenarios.LoadLibrary(e.Name)
		if err != nil {
			t.Fatal(err)
		}
		studies = append(studies, st)
	}
	every := `
model: {n: 40, columns: [{name: x, slope: 1}]}
noise: {scale: 1}
contamination:
  - {label: spikes, kind: vertical, fraction: 0.1, shift: 5}
  - {kind: vertical, fraction: 0, shift: -5}
estimators:
  - {method: ls}
  - {label: hub, method: irls, psi: hampel, tuning: [2, 4, 8], stop: {change: 1e-8}}
  - {label: mine, method: irls, psi: {expr: r / (1 + abs(r)/c), constants: {c: 1.5}}}
vary:
  estimators.hub.tuning: [[1, 2, 4], [2, 3, 6]]
  estimators.hub.tuning.0: [1.5]
  estimators.mine.psi.constants.c: [1.2]
  estimators.mine.psi.expr: [r]
  estimators.1.stop.change: [1e-6]
  contamination.spikes.fraction: [0, 0.1]
  contamination.1.fraction: [0.05]
  contamination.spikes.shift: [4]
  noise.scale: [2]
  model.n: [50]
  model.columns.x.slope: [3]
`
	st, err := scenarios.Parse("every.yaml", []byte(every), scenarios.Limits{})
	if err != nil {
		t.Fatal(err)
	}
	studies = append(studies, st)
	kinds := map[string]bool{}
	for _, st := range studies {
		for _, sw := range st.Base.Vary {
			loaded, read := sw.Target, results.TargetOf(sw.Path)
			kinds[loaded.Kind.String()] = true
			if loaded.Kind.String() != read.Kind.String() || loaded.Name != read.Name {
				t.Errorf("%s: %s: the loader reads %v %q, results %v %q", st.Base.Name, sw.Path, loaded.Kind, loaded.Name, read.Kind, read.Name)
			}
			var labels []string
			switch loaded.Kind {
			case scenarios.SweepFraction, scenarios.SweepContamination:
				for _, c := range st.Base.Contamination {
					labels = append(labels, c.Label)
				}
			default:
				for _, e := range st.Base.Estimators {
					labels = append(labels, e.Label)
				}
			}
			switch i := loaded.Index; {
			case i < 0 && read.Owner != "":
				t.Errorf("%s: %s: results reads owner %q, the loader none", st.Base.Name, sw.Path, read.Owner)
			case i >= 0 && read.Owner != labels[i] && read.Owner != strconv.Itoa(i):
				t.Errorf("%s: %s: results reads owner %q, the loader element %d (%s)", st.Base.Name, sw.Path, read.Owner, i, labels[i])
			}
		}
	}
	for k := scenarios.SweepOther; k <= scenarios.SweepN; k++ {
		if !kinds[k.String()] {
			t.Errorf("no sweep of kind %v was checked", k)
		}
	}
}
