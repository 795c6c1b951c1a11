package scenarios_test

import (
	"fmt"

	"github.com/rhomark/rhomark/scenarios"
)

// A mistyped key is reported with its file, line and field, and the valid
// keys.
func ExampleParse() {
	src := `model:
  n: 30
  columns: [{name: volume, slope: 1}]
noise: {dist: normal, sclae: 0.2}
estimators: [{method: ls}]
`
	_, err := scenarios.Parse("bench.yaml", []byte(src), scenarios.Limits{})
	fmt.Println(err)
	// Output:
	// bench.yaml:4:23: noise.sclae: unknown key "sclae"; valid keys here: dist, scale, df, mix-fraction, mix-factor, shape, grows-with (did you mean "scale"?)
}
