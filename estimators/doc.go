// Package estimators fits linear regression models by least squares, by
// M-estimation and by the high-breakdown methods S, MM, LTS and LAD.
//
// An M-estimator of regression minimises Σ rho(r_i/sigma) over the residuals
// r = y - Xβ, with sigma a scale. Its estimating equations
//
//	Σ psi(r_i/sigma) x_i = 0,   psi = rho',
//
// are solved iteratively, either by iteratively reweighted least squares
// (IRLS: weights w_i = psi(u_i)/u_i, u_i = r_i/sigma, each step a weighted
// least-squares solve) or by Newton's method on the estimating equations.
//
// The psi families (psi.Huber{K: 1.345}, psi.Bisquare{C: 4.685}, …), custom
// psi expressions and their theory live in package psi; any [psi.Psi] can
// be fitted. An [Estimator] names a method, a psi, a scale rule, a start and
// the stopping [Settings]; its Fit method fills a [Result] whose [Status]
// says which stopping rule ended the fit or which failure happened. A
// [Workspace] holds every buffer a fit needs, so repeated fits of datasets
// of one shape allocate nothing.
package estimators
