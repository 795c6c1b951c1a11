// Package report renders the results of a run for people: a self-contained
// HTML page and the figures it shows, drawn with gonum/plot.
//
// The page leads with the answer. Its order is: the verdict of every cell
// (the estimator to choose by RMSE, with its score ± MCSE, the estimators
// tied with it and those not recommended, with the reason); a results
// table per cell (a row per estimator × coefficient: bias, SE, RMSE, MSE
// ratio and variance efficiency against the reference, coverage and
// failures, with differences from the cell's choice beyond 2 combined MCSE
// marked); the figures, grouped by the question they answer; the
// convergence table; the scenario, collapsed; and the provenance.
//
// Figures draws every figure the results support and says, for each that
// it leaves out, why (an [Omission]). Uncertainty is drawn as error bars
// (±2 MCSE, or Wilson intervals for rates), never as translucent bands;
// every estimator keeps one colour of the Okabe-Ito palette, one marker
// and one dash pattern across all figures; figures that depend on a swept
// setting draw a panel for every value of the other sweeps.
//
// Write renders the page with html/template from report.html.tmpl
// (embedded), with every figure inline as a data URI, so the page opens
// offline. The page is also well-formed XML.
//
// The package reads only result values (package results); package results
// knows nothing of it or of the plotting library.
package report
