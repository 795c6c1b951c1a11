// Command rhomark benchmarks robust regression estimators by Monte Carlo
// simulation and fits them to data.
//
// Usage:
//
//	rhomark <command> [options] [arguments]
//
// Run "rhomark help" for the list of commands, and "rhomark <command>
// --help" for a command's options.
package main

import (
	"os"
)

func main() {
	os.Exit(run(os.Args[1:], os.Stdin, os.Stdout, os.Stderr))
}
