package harness_test

import (
	"context"
	"fmt"
	"math"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/harness"
	"github.com/rhomark/rhomark/psi"
	"github.com/rhomark/rhomark/scenarios"
)

// pseudoHuber is a smooth cousin of Huber's psi, written as a Go type:
// rho(u) = d²(√(1 + (u/d)²) − 1), psi(u) = u/√(1 + (u/d)²).
type pseudoHuber struct{ d float64 }

func (p pseudoHuber) Rho(u float64) float64 {
	v := u / p.d
	return p.d * p.d * (math.Sqrt(1+v*v) - 1)
}
func (p pseudoHuber) Psi(u float64) float64 { return u * p.Weight(u) }
func (p pseudoHuber) Deriv(u float64) float64 {
	v := u / p.d
	return math.Pow(1+v*v, -1.5)
}
func (p pseudoHuber) Weight(u float64) float64 {
	v := u / p.d
	return 1 / math.Sqrt(1+v*v)
}

// A methodologist tries a psi of their own on a shipped scenario from Go,
// without the command line: the scenario's Huber estimator is swapped for
// the new psi, tuned first to 95% asymptotic efficiency, and the simulated
// efficiency is read next to the theory.
func Example_ownPsi() {
	d := tuneFor95()
	st, err := scenarios.LoadLibrary("clean-normal")
	if err != nil {
		fmt.Println(err)
		return
	}
	res, err := harness.Run(context.Background(), st, harness.Options{
		Replicates: 400,
		Adjust: func(cell int, label string, e *estimators.Estimator) {
			if label == "huber" {
				e.Psi = pseudoHuber{d: d}
			}
		},
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("d = %.3f\n", d)
	swapped := res.Cells[0].Estimators[1]
	fmt.Printf("%s fitted with psi %s\n", swapped.Label, swapped.Psi)
	for _, c := range res.Cells {
		e := c.Estimators[1] // the swapped estimator
		x1 := e.Coefficients[1]
		fmt.Printf("%s: simulated efficiency %.2f ± %.2f, theory %.3f\n",
			c.Settings[0].Path+"="+c.Settings[0].Value, x1.RelEff.Value, x1.RelEff.MCSE, e.TheoryEfficiency)
	}
	// Output:
	// d = 1.287
	// huber fitted with psi pseudoHuber
	// model.n=25: simulated efficiency 0.93 ± 0.03, theory 0.950
	// model.n=100: simulated efficiency 0.90 ± 0.02, theory 0.950
	// model.n=400: simulated efficiency 0.94 ± 0.02, theory 0.950
}

// tuneFor95 finds d with 95% efficiency at the normal by bisection on the
// asymptotic efficiency.
func tuneFor95() float64 {
	lo, hi := 0.1, 10.0
	for i := 0; i < 60; i++ {
		mid := (lo + hi) / 2
		if psi.EfficiencyAtNormal(pseudoHuber{d: mid}) < 0.95 {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2
}
