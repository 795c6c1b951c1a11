// Package psi holds the psi functions that M-estimators of regression are
// built from, and their asymptotic theory.
//
// A psi function is the derivative of a loss rho of a standardised residual
// u = r/sigma; its IRLS weight is psi(u)/u. Every psi implements [Psi]; one
// with kinks or jumps also implements [Kinked], one with a bounded rho
// [Bounded].
//
// A built-in family is a small value type whose fields are its tuning
// constants (Huber{K: 1.345}, Bisquare{C: 4.685}, Hampel, Andrews, Welsch,
// Cauchy, Logistic, Fair, Talwar, LAD, LeastSquares), one file per family.
// [LookupFamily] finds a [Family] by its name in scenario files and builds
// its psi from tuning constants; [Families] lists them. A psi of a user's
// own is a Go type implementing [Psi], or a [Custom] compiled from
// expressions in r ([NewCustom], [CustomSpec]).
//
// The theory routines integrate at the standard normal, or under an
// [ErrorModel], by adaptive piecewise Gauss-Legendre quadrature split at the
// kinks: [Analyse] gives efficiency, gross-error sensitivity, rejection
// point, shape and the breakdown point of an S-scale; [Family.TuneEfficiency]
// and [Family.TuneBreakdown] solve for tuning constants; [HuberMinimax] solves
// Huber's minimax equation; [CheckPsi] checks the numerical contract of
// [Psi]. The package knows nothing of data, fitting or files: the solvers
// live in package estimators, which imports this one.
package psi
