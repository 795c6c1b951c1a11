package scenarios

import (
	"errors"
	"strings"
	"testing"
	"time"
)

// TestOutsidePsiChecks: the declared psi of an external or go estimator
// gets the checks of a built-in M-estimator's psi, each error naming the
// file, the line and field at fault and what is valid.
func TestOutsidePsiChecks(t *testing.T) {
	const head = `model:
  n: 20
  columns: [{name: volume}]
estimators:
  - {label: ls, method: ls}
  - label: bench-fit
`
	external := "    command: [python3, fit_bench.py]\n"
	tests := []struct {
		name string
		// entry is the rest of estimator bench-fit, from line 7.
		entry       string
		line        int
		field, want string
	}{
		{
			name:  "external custom psi with tuning",
			entry: "    method: external\n    psi: {expr: r / (1 + abs(r)/c), constants: {c: 1.4}}\n    tuning: 2\n" + external,
			line:  9, field: "estimators[1].tuning", want: "is not used with a custom psi; give its constants under psi.constants",
		},
		{
			name:  "go custom psi with tuning",
			entry: "    method: go\n    psi: {expr: r / (1 + abs(r)/c), constants: {c: 1.4}}\n    tuning: [1, 2]\n",
			line:  9, field: "estimators[1].tuning", want: "is not used with a custom psi; give its constants under psi.constants",
		},
		{
			name:  "external custom psi with an unknown name",
			entry: "    method: external\n    psi:\n      expr: r / (1 + abs(r)/q)\n      constants: {c: 1.4}\n" + external,
			line:  9, field: "estimators[1].psi.expr", want: `unknown name "q" (the residual is r; constants must be declared)`,
		},
		{
			name:  "go custom psi with a bad rho",
			entry: "    method: go\n    psi:\n      expr: r\n      rho: r^^2\n",
			line:  10, field: "estimators[1].psi.rho", want: `rho expression "r^^2"`,
		},
		{
			name:  "external custom psi with a reserved constant",
			entry: "    method: external\n    psi:\n      expr: r\n      constants: {r: 1}\n" + external,
			line:  10, field: "estimators[1].psi.constants", want: `constant name "r" is reserved`,
		},
		{
			name:  "external custom psi with a negative kink",
			entry: "    method: external\n    psi:\n      expr: r\n      kinks: [-1]\n" + external,
			line:  10, field: "estimators[1].psi.kinks", want: "kink -1 must be a finite number ≥ 0",
		},
		{
			name:  "go custom psi without expr",
			entry: "    method: go\n    psi: {rho: r*r/2}\n",
			line:  8, field: "estimators[1].psi", want: "a custom psi needs a psi expression in r",
		},
		{
			name:  "external unknown family",
			entry: "    method: external\n    psi: hubr\n" + external,
			line:  8, field: "estimators[1].psi", want: `unknown psi family "hubr"; valid: andrews, `,
		},
		{
			name:  "go family tuning out of range",
			entry: "    method: go\n    psi: huber\n    tuning: -1\n",
			line:  9, field: "estimators[1].tuning", want: "huber",
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			const file = "bench-outside.yaml"
			_, err := Parse(file, []byte(head+tt.entry), Limits{})
			var list ErrorList
			if !errors.As(err, &list) {
				t.Fatalf("error %v (%T), want an ErrorList", err, err)
			}
			for _, e := range list {
				if e.File == file && e.Line == tt.line && e.Field == tt.field && strings.Contains(e.Msg, tt.want) {
					return
				}
			}
			t.Errorf("no error at %s:%d field %s containing %q; got:\n%v", file, tt.line, tt.field, tt.want, err)
		})
	}
}

// TestTimeoutDuration: a spec's timeout, or the default for an empty one
// and for one validation would refuse.
func TestTimeoutDuration(t *testing.T) {
	tests := []struct {
		timeout string
		want    time.Duration
	}{
		{"2m", 2 * time.Minute},
		{"1m30s", 90 * time.Second},
		{"", time.Minute},
		{"soon", time.Minute},
		{"0s", time.Minute},
		{"-5s", time.Minute},
	}
	for _, tt := range tests {
		e := EstimatorSpec{Method: MethodExternal, Timeout: tt.timeout}
		if got := e.TimeoutDuration(); got != tt.want {
			t.Errorf("timeout %q: %v, want %v", tt.timeout, got, tt.want)
		}
	}
}

// TestOutsidePsiNotSwept: a sweep of an outside estimator's psi, at any
// depth, is refused at its line, since the swept value would not reach the
// estimator's own code; the same sweep of an irls estimator loads.
func TestOutsidePsiNotSwept(t *testing.T) {
	const src = `model:
  n: 20
  columns: [{name: volume}]
estimators:
  - {label: ls, method: ls}
  - label: bench-fit
    method: METHOD
    psi: {expr: r / (1 + abs(r)/c), constants: {c: 1.4}}
vary:
  estimators.bench-fit.psi.constants.c: [1, 2]
`
	for _, method := range []string{MethodGo, "irls"} {
		_, err := Parse("sweep.yaml", []byte(strings.Replace(src, "METHOD", method, 1)), Limits{})
		if method == "irls" {
			if err != nil {
				t.Errorf("irls: %v", err)
			}
			continue
		}
		var list ErrorList
		if !errors.As(err, &list) || list[0].Line != 10 || list[0].Field != "vary.estimators.bench-fit.psi.constants.c" ||
			!strings.Contains(list[0].Msg, "estimator bench-fit is run outside rhomark (method go)") {
			t.Errorf("%s: error %v", method, err)
		}
	}
}
