package main

import (
	"flag"

	"github.com/rhomark/rhomark/results"
)

// addTargetFlag adds --target-efficiency, the efficiency on clean data a
// tuning study's target pick must reach.
func addTargetFlag(fs *flag.FlagSet) *float64 {
	return addFloat(fs, "target-efficiency", results.DefaultTargetEfficiency,
		"tuning studies: name the smallest swept constant whose efficiency on clean data reaches `E` (0 < E ≤ 1)",
		func(e float64) bool { return e > 0 && e <= 1 },
		"a number above 0 and at most 1 (0.95 is 95% of the reference's efficiency)")
}

// flagGiven reports whether the flag called name was set on the command line.
func flagGiven(fs *flag.FlagSet, name string) bool {
	given := false
	fs.Visit(func(f *flag.Flag) { given = given || f.Name == name })
	return given
}
