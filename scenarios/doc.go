// Package scenarios reads Monte Carlo scenario files and draws the datasets
// they describe.
//
// A scenario file (YAML) gives a clean linear model (coefficients and the
// distributions of the predictors), a noise model, kinds of contamination
// (vertical outliers, bad and good leverage points), the estimators to
// compare and sweeps over any of those fields. [Parse] and [Load] decode a
// file strictly: unknown keys, wrong types and impossible values are
// reported as [*Error] values naming the file, line, field and what would be
// valid. A loaded [Study] holds one [Cell] per combination of swept values;
// [NewGenerator] turns a cell's scenario into a [Generator] that draws
// datasets from a random source without allocating.
//
// The shipped scenarios, embedded in the binary, are listed by [Library].
// The file format is documented field by field on the types in schema.go.
package scenarios
