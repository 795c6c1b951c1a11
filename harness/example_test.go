package harness_test

import (
	"context"
	"fmt"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/harness"
	"github.com/rhomark/rhomark/scenarios"
)

// Running a small scenario from Go: least squares against Huber's
// M-estimator with 10% stuck-sensor spikes in the readings.
func ExampleRun() {
	src := `
name: bench
seed: 7
replicates: 200
model:
  n: 40
  intercept: 0.3
  columns:
    - {name: volume, slope: 0.98, dist: levels, levels: [5, 10, 20, 50, 100]}
noise: {dist: normal, scale: 0.2}
contamination:
  - {label: spikes, kind: vertical, fraction: 0.1, shift: 6}
estimators:
  - {label: ls, method: ls}
  - {label: huber, method: irls, psi: huber}
`
	st, err := scenarios.Parse("bench.yaml", []byte(src), scenarios.Limits{})
	if err != nil {
		fmt.Println(err)
		return
	}
	res, err := harness.Run(context.Background(), st, harness.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, e := range res.Cells[0].Estimators {
		b := e.Coefficients[0].Bias
		fmt.Printf("%-6s intercept bias %+.2f (MCSE %.2f)\n", e.Label, b.Value, b.MCSE)
	}
	// Output:
	// ls     intercept bias +0.59 (MCSE 0.02)
	// huber  intercept bias +0.03 (MCSE 0.00)
}

// Recomputing one replicate of a run: the dataset replicate 12 of the
// flow-meter bench drew (a meter reading 2% high with a 0.3 offset, 10%
// stuck-sensor spikes) and Huber's fit to it, exactly as the run fitted
// them.
func ExampleReplicator() {
	src := `
name: bench
seed: 7
replicates: 200
model:
  n: 40
  intercept: 0.3
  columns:
    - {name: volume, slope: 1.02, dist: levels, levels: [5, 10, 20, 50, 100]}
noise: {dist: normal, scale: 0.2}
contamination:
  - {label: spikes, kind: vertical, fraction: 0.1, shift: 6}
estimators:
  - {label: huber, method: irls, psi: huber}
`
	st, err := scenarios.Parse("bench.yaml", []byte(src), scenarios.Limits{})
	if err != nil {
		fmt.Println(err)
		return
	}
	sc := st.Cells[0].Scenario
	rp, err := harness.NewReplicator(sc, sc.Seed)
	if err != nil {
		fmt.Println(err)
		return
	}
	x, y := rp.Draw(12)
	fmt.Printf("row 0: volume %g, reading %.3f\n", x.At(0, 1), y[0])
	est, err := sc.Estimators[0].Build()
	if err != nil {
		fmt.Println(err)
		return
	}
	var ws estimators.Workspace
	var res estimators.Result
	if err := rp.Fit("huber", &est, &ws, &res); err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("huber: %s, offset %.2f, slope %.3f\n", res.Status, res.Coefficients[0], res.Coefficients[1])
	// Output:
	// row 0: volume 5, reading 5.374
	// huber: converged-change, offset 0.33, slope 1.020
}
