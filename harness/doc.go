// Package harness runs Monte Carlo studies: it draws the datasets of every
// cell of a scenario, fits every estimator to each, and summarises the fits
// into results with their Monte Carlo standard errors.
//
// Work is split into units of consecutive replicates of one cell and shared
// among workers. Every replicate draws from its own random stream, derived
// from (seed, cell, replicate) by [ReplicateStream], and every sum over
// replicates is accumulated exactly (internal/exactsum), so the results are
// bit-identical whatever the number of workers and the order in which units
// finish. All estimators of a cell fit the same datasets (common random
// numbers), so comparisons between them are paired. Memory does not grow
// with the number of replicates.
package harness
