package external_test

import (
	"fmt"
	"os"
	"time"

	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/external"
)

// ExampleStart fits three readings of a flow-meter calibration bench with
// the Python example estimator. (It is compiled but not run by go test,
// since it needs python3 and numpy.)
func ExampleStart() {
	p, err := external.Start(external.Command{
		Label:        "huber-py",
		Args:         []string{"python3", "fit_huber.py", "--k", "1.345", "--tol", "1e-10"},
		Dir:          "examples/external/python",
		Timeout:      10 * time.Second,
		StartTimeout: 30 * time.Second,
		Stderr:       os.Stderr,
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	defer p.Close()
	reqs := []external.Request{{
		Replicate: 0,
		X:         mat.NewDense(4, 2, []float64{1, 10, 1, 20, 1, 30, 1, 40}),
		Y:         []float64{10.1, 19.8, 45.0, 39.6},
		Names:     []string{"(intercept)", "volume"},
		Seed:      1,
	}}
	out := make([]external.Reply, len(reqs))
	p.FitBatch(reqs, out)
	for _, rep := range out {
		if rep.Err != nil {
			fmt.Println(rep.Err) // names the estimator, the replicate and the status
			continue
		}
		fmt.Println(rep.Coefficients, rep.Iterations, rep.ProgramStatus)
	}
}
