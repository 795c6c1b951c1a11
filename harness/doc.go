// Package harness runs Monte Carlo studies: it draws the datasets of every
// cell of a scenario, fits every estimator to each, and summarises the fits
// into results with their Monte Carlo standard errors.
//
// Work is split into units of consecutive replicates of a group of cells
// that draw the same datasets, and shared among workers. Every replicate's
// dataset draws from its own random stream, derived from (seed, the cell's
// data-generating settings, replicate) by [ReplicateStream] and [DataKey],
// so cells that differ only in estimator settings fit the same datasets; an
// estimator that is the same in several such cells is fitted once per
// dataset. [Replicator] recomputes any one replicate of a cell (its
// dataset and its fits) outside a run, exactly as the run computed it.
// Every sum over replicates is accumulated exactly
// (internal/exactsum), so the results are bit-identical whatever the number
// of workers and the order in which units finish. All estimators of a cell
// fit the same datasets (common random numbers), so comparisons between
// them, and between cells that differ only in their estimators, are
// paired. Memory does not grow with the number of replicates, but for the
// solver audit (solver-audit: true, or [Options.AuditSolvers]): for exact
// medians it keeps 8·(p + 28) bytes per audited fit of p coefficients.
//
// Estimators that rhomark does not fit itself run the same way: a
// scenario's method external names a program, fed a unit's datasets as
// one batch through package external (see [Options.AllowCommands],
// [CommandError], [ProgramFitter]), and method go names an
// estimators.Fitter registered in [Options.Fitters].
package harness
