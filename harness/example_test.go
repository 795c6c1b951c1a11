package harness_test

import (
	"context"
	"fmt"

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
