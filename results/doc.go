// Package results holds the outcome of a Monte Carlo run and its encodings:
// JSON (complete, versioned), tidy CSV (one row per cell × estimator ×
// coefficient), a terminal table and a Markdown summary. The HTML report
// and the figures are in package report, so this package does not depend
// on a plotting library.
//
// The package knows only result values; it does not run estimators or read
// scenarios. Every performance measure is a [Measure]: a value with its
// Monte Carlo standard error (MCSE), computed with the formulas of Morris,
// White & Crowther (2019), "Using simulation studies to evaluate statistical
// methods", Statistics in Medicine 38:2074-2102.
package results
