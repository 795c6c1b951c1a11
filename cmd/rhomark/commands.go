package main

import (
	"flag"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/harness"
	"github.com/rhomark/rhomark/scenarios"
)

// addAllowCommands adds --allow-commands, the consent to run the programs
// of a scenario's external estimators.
func addAllowCommands(fs *flag.FlagSet) *bool {
	return fs.Bool("allow-commands", false, "let the scenario's external estimators run their commands (a scenario file can run programs only with this)")
}

// checkCommands refuses, as a usage error (exit 2), a scenario that runs a
// program when --allow-commands was not given, naming the estimator and
// its command, and a scenario with a go estimator, which only a Go
// program can supply.
func checkCommands(st *scenarios.Study, allow bool) error {
	for _, spec := range st.Base.Estimators {
		if spec.Method == scenarios.MethodGo {
			return goOnly(spec)
		}
	}
	if allow {
		return nil
	}
	if err := harness.CheckCommands(st); err != nil {
		return usagef("%v; a scenario runs programs only with --allow-commands (check the command first)", err)
	}
	return nil
}

// goOnly is the refusal of an estimator of method go on the command line.
func goOnly(spec scenarios.EstimatorSpec) error {
	return usagef("estimator %q has method go: it exists only in the Go program that registers it (harness.Options.Fitters), not on the command line", spec.Label)
}

// outsideFitter returns the Fitter of an outside estimator for replay and
// breakdown, which fit one dataset at a time: a running program for method
// external (stopped by the returned function), and an error for method go,
// whose estimators exist only inside a Go program.
func outsideFitter(e env, st *scenarios.Study, spec scenarios.EstimatorSpec, names []string) (estimators.Fitter, func() error, error) {
	if spec.Method == scenarios.MethodGo {
		return nil, nil, goOnly(spec)
	}
	pf, err := harness.StartProgram(st, spec, names, e.stderr)
	if err != nil {
		return nil, nil, err
	}
	return pf, pf.Close, nil
}
