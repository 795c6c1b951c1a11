package harness

import (
	"context"
	"fmt"
	"io"
	"os"
	"testing"

	"github.com/rhomark/rhomark/scenarios"
)

// BenchmarkExternalOverhead measures what an external estimator costs a
// run per fit beyond the fit itself: the fake program in mode instant
// answers every request at once without reading it, so the time is the
// protocol's (copying the dataset for the batch, encoding, the pipes,
// decoding) plus the harness's own work per replicate. The
// built-in least squares on the same datasets is the yardstick for that
// own work. One worker; one op is one replicate, that is one fit; the
// program is started once per run.
func BenchmarkExternalOverhead(b *testing.B) {
	exe, err := os.Executable()
	if err != nil {
		b.Fatal(err)
	}
	for _, n := range []int{40, 400} {
		for _, est := range []struct{ name, entry string }{
			{"ls", "{label: ls, method: ls}"},
			{"external", fmt.Sprintf("{label: prog, method: external, command: [%q, %s, instant]}", exe, fakeMarker)},
		} {
			b.Run(fmt.Sprintf("n=%d/%s", n, est.name), func(b *testing.B) {
				src := fmt.Sprintf(`
name: bench
seed: 3
model:
  n: %d
  intercept: 0.2
  columns:
    - {name: volume, slope: 0.98, dist: uniform, min: 1, max: 50}
    - {name: flow, slope: 0.05, dist: uniform, min: 0.5, max: 5}
noise: {dist: normal, scale: 0.1}
estimators:
  - %s
`, n, est.entry)
				st, err := scenarios.Parse("bench.yaml", []byte(src), scenarios.Limits{})
				if err != nil {
					b.Fatal(err)
				}
				b.ResetTimer()
				res, err := Run(context.Background(), st, Options{Workers: 1, Replicates: b.N, AllowCommands: true, Stderr: io.Discard})
				if err != nil {
					b.Fatal(err)
				}
				b.StopTimer()
				if c := res.Cells[0].Estimators[0].Convergence; c.Converged != int64(b.N) {
					b.Fatalf("%d of %d fits converged", c.Converged, b.N)
				}
			})
		}
	}
}
